"""Each logged record judged on its own: its decision re-derived, its check recomputed when possible.

A chain and signatures show who wrote a record and that it has not changed
since; they do not show that what was written adds up.  So `log verify`
also (1) re-derives each record's decision from its own stored findings,
discrepancies and acceptances, by the same rules (`decision.decide`): a
record marked released that holds a refusal is an error; and (2) where the
formulary file the record names by SHA-256 is at hand (at the path the
record gives, or among files passed with --formulary), runs the whole
verification again from the stored inputs (patient, labs, order as read,
acceptances, time) and names the first figure or finding that differs.  A
difference under the same osmodose version is an error; under another
version it is a note, since the arithmetic or the rules may have changed.
"""

from __future__ import annotations

import json
from collections.abc import Iterable
from dataclasses import dataclass, field
from datetime import datetime
from pathlib import Path
from typing import Any

from osmodose import __version__
from osmodose.errors import OsmodoseError
from osmodose.formulary import Formulary, demo_formulary_path, load_formulary
from osmodose.verify.decision import Acceptance, AcceptedWarning, Decision, RefusedAcceptance, decide
from osmodose.verify.log import ChainLink, LogProblem
from osmodose.verify.record import VerificationRecord, verify_order

_SHOWN = 60


def acceptances_of(decision: Decision) -> list[Acceptance]:
    """The acceptances a decision was made with (granted ones, then those refused)."""
    given: list[AcceptedWarning | RefusedAcceptance] = [*decision.accepted, *decision.not_accepted]
    return [Acceptance(code=a.code, reason=a.reason) for a in given]


def _summary(decision: Decision) -> tuple[object, ...]:
    return (
        decision.outcome,
        decision.initials,
        sorted(decision.refusals),
        sorted(decision.open_warnings),
        sorted(a.code for a in decision.accepted),
        sorted(a.code for a in decision.not_accepted),
    )


def rederive(record: VerificationRecord) -> str | None:
    """Why the stored decision does not follow from the record's own findings and acceptances; None when it does."""
    stored = record.decision
    try:
        again = decide([*record.result.findings, *record.discrepancies], acceptances_of(stored), stored.initials)
    except OsmodoseError as error:
        return f"its acceptances do not fit its own findings ({error})"
    if _summary(again) == _summary(stored):
        return None
    if again.outcome != stored.outcome:
        why = ""
        if again.refusals:
            why = f" (refusals: {', '.join(again.refusals)})"
        elif again.open_warnings:
            why = f" (warnings not accepted: {', '.join(again.open_warnings)})"
        return f"its decision says {stored.outcome}, but its own findings and acceptances give {again.outcome}{why}"
    return "its decision lists other refusals, warnings or acceptances than its own findings give"


def _comparable(record: VerificationRecord) -> dict[str, Any]:
    data = record.model_dump(mode="json")
    data.pop("program_version", None)
    data["formulary"].pop("path", None)
    result = data["result"]
    result.pop("program_version", None)
    result.get("formulary", {}).pop("path", None)
    decision = data["decision"]
    for key in ("accepted", "not_accepted"):
        decision[key] = sorted(decision[key], key=lambda item: item["code"])
    return data


def _short(value: object) -> str:
    text = json.dumps(value, ensure_ascii=False)
    return text if len(text) <= _SHOWN else text[: _SHOWN - 3] + "..."


def first_difference(recorded: Any, recomputed: Any, where: str = "") -> str | None:
    """`key.path: recorded X, recomputed Y` for the first place two JSON values differ; None when equal."""
    if isinstance(recorded, dict) and isinstance(recomputed, dict):
        for key in [*recorded, *(k for k in recomputed if k not in recorded)]:
            found = first_difference(recorded.get(key), recomputed.get(key), f"{where}.{key}" if where else key)
            if found:
                return found
        return None
    if isinstance(recorded, list) and isinstance(recomputed, list) and len(recorded) == len(recomputed):
        for i, (a, b) in enumerate(zip(recorded, recomputed, strict=True)):
            found = first_difference(a, b, f"{where}[{i + 1}]")
            if found:
                return found
        return None
    if recorded == recomputed:
        return None
    return f"{where or '(record)'}: recorded {_short(recorded)}, recomputed {_short(recomputed)}"


def recompute(record: VerificationRecord, formulary: Formulary) -> str | None:
    """Verify the record's stored inputs again with `formulary`; the first difference, or None."""
    request = record.request.model_copy(update={"dose": None, "line": None})
    try:
        again = verify_order(
            request,
            record.order,
            formulary,
            acceptances_of(record.decision),
            record.entered.get("initials", record.decision.initials),
            now=datetime.fromisoformat(record.timestamp),
        )
    except (OsmodoseError, ValueError) as error:
        return f"its inputs cannot be verified again: {error}"
    return first_difference(_comparable(record), _comparable(again))


@dataclass
class Rechecker:
    """Judges every record of a walk: decision always, recomputation where the formulary is at hand."""

    formularies: Iterable[Path | str] = ()
    recompute: bool = True
    rederived: int = 0
    recomputed: int = 0
    not_at_hand: dict[str, int] = field(default_factory=dict)
    other_version: int = 0
    """Records recomputed differently under another osmodose version (notes, not problems)."""
    first_other_version: str | None = None
    _by_sha: dict[str, Formulary | None] = field(default_factory=dict)
    _loaded: bool = False

    def _load_offered(self) -> None:
        self._loaded = True
        for path in [*self.formularies, demo_formulary_path()]:
            self._offer(path)

    def _offer(self, path: Path | str) -> None:
        try:
            formulary = load_formulary(path)
        except OsmodoseError:
            return
        if self._by_sha.get(formulary.sha256) is None:
            self._by_sha[formulary.sha256] = formulary

    def formulary_for(self, record: VerificationRecord) -> Formulary | None:
        """The formulary file the record names by SHA-256, when one is at hand."""
        if not self._loaded:
            self._load_offered()
        sha = record.formulary.sha256
        if sha not in self._by_sha:
            self._by_sha[sha] = None
            self._offer(record.formulary.path)
        return self._by_sha.get(sha)

    def __call__(self, item: ChainLink | LogProblem) -> list[LogProblem]:
        if not isinstance(item, ChainLink) or not item.hash_ok:
            return []  # an altered record is reported as such; judging its content would add only noise
        record = item.entry.record
        where = f"record {item.entry.sequence} (line {item.line})"
        self.rederived += 1
        problems = []
        wrong = rederive(record)
        if wrong is not None:
            problems.append(LogProblem(item.line, "decision", f"{where}: {wrong}"))
        if not self.recompute:
            return problems
        formulary = self.formulary_for(record)
        if formulary is None:
            self.not_at_hand[record.formulary.sha256] = self.not_at_hand.get(record.formulary.sha256, 0) + 1
            return problems
        self.recomputed += 1
        difference = recompute(record, formulary)
        if difference is not None:
            if record.program_version == __version__:
                problems.append(LogProblem(item.line, "recomputed", f"{where}: recomputed, it differs: {difference}"))
            else:
                self.other_version += 1
                if self.first_other_version is None:
                    self.first_other_version = (
                        f"{where} (osmodose {record.program_version}) recomputed with osmodose {__version__} "
                        f"differs: {difference}"
                    )
        return problems
