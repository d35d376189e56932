"""`check --json` says what it said before the package was reorganised.

`tests/data/check_json_before_refactor.json` holds 42 outputs of `osmodose check --json`
recorded from version 0.1 before its modules were regrouped and its engine moved to plain
floats.  The refactor may add keys (new figures) but must not change a figure, a message, a
status or an exit code.  Safety rules added later (the labs judged on their own, tonicity,
every rate judged, weight for age, body size, the label sodium's osmolarity, the notes on
what a check could not judge) deliberately changed 35 of the cases, which were recorded
again.  The recorded cases are regression data, not clinical check values: those live beside
their sources in the formula and rule tests.

Changes since the recording that are deliberate are applied to the recording before it is
compared (or, for additions, left out of the output), so nothing else may differ:

* every figure is rounded once at the output, to the decimals `science.precision`
  declares: the recorded full-precision figures are rounded by the same function;
* the stock sizes (`dose.presentations`) are listed best first (least discarded,
  then fewest containers), not by size;
* a rate is read to 0.1 mL/h everywhere, its finding's message too (`REWORDED`);
* notes and findings added by the projection's range and urine (`ADDED_FINDING_CODES`).
"""

from __future__ import annotations

import contextlib
import copy
import io
import json
import math
from pathlib import Path
from typing import Any

import pytest

from osmodose.cli.main import main
from osmodose.science.precision import decimals_of, round_document

RECORDED = json.loads((Path(__file__).parent / "data" / "check_json_before_refactor.json").read_text())
#: Keys whose value is expected to differ from the recording.  The demo file's SHA-256 changes with
#: every edit of the demo file (test_check_cli proves a result names the SHA-256 of the file used).
NOT_COMPARED = {"program_version", "path", "sha256"}
#: Findings added on purpose since the recording (issue 10): the high end of the projected range past the
#: refuse limit, and dilute urine pushing the rise past a limit.  Each recorded finding must still be there,
#: in order, with its figures and words; a new one of these codes may stand beside them.
ADDED_FINDING_CODES = {"rise-range-high", "aquaresis-rise"}


def _as_recorded(key: str, before: Any, after: Any) -> Any:
    """`after` with what was added on purpose since the recording left out.

    Notes: the recorded ones stay first and in order; notes added later (the
    projected range, the free-water deficit, the equiosmolar volumes) follow them.
    Findings: a finding of `ADDED_FINDING_CODES` is left out.
    """
    if key == "notes" and isinstance(after, list) and isinstance(before, list):
        return after[: len(before)]
    if key == "findings" and isinstance(after, list):
        return [item for item in after if item.get("code") not in ADDED_FINDING_CODES]
    return after


def _same(before: Any, after: Any, where: str, raw: Any = None) -> list[str]:
    """Differences of `after` from `before` (the recording as now written; `raw` as recorded)."""
    if isinstance(before, dict):
        if not isinstance(after, dict):
            return [f"{where}: {after!r} is no longer an object"]
        problems = []
        for key, value in before.items():
            if key in NOT_COMPARED:
                continue
            if key not in after:
                problems.append(f"{where}.{key}: missing")
                continue
            problems += _same(value, _as_recorded(key, value, after[key]), f"{where}.{key}", (raw or {}).get(key))
        return problems
    if isinstance(before, list):
        if not isinstance(after, list) or len(after) != len(before):
            return [f"{where}: {after!r} != {before!r}"]
        raws = raw if isinstance(raw, list) and len(raw) == len(before) else [None] * len(before)
        return [
            p
            for i, (b, a, r) in enumerate(zip(before, after, raws, strict=True))
            for p in _same(b, a, f"{where}[{i}]", r)
        ]
    if isinstance(before, float) and isinstance(after, (int, float)):
        close = math.isclose(before, after, rel_tol=1e-12, abs_tol=1e-12)
        return [] if close or _a_tie(raw, after) else [f"{where}: {after!r} != {before!r}"]
    return [] if before == after else [f"{where}: {after!r} != {before!r}"]


def _a_tie(raw: Any, after: float) -> bool:
    """A recorded figure half-way between two roundings may round either way (float noise decides)."""
    if not isinstance(raw, float):
        return False
    half = 0.5 * 10.0 ** -decimals_of(after)
    return abs(raw - after) <= half * (1 + 1e-6)


#: Messages deliberately reworded since the recording: (old, new) text within a message.
REWORDED: tuple[tuple[str, str], ...] = (("rate 360 mL/h is faster", "rate 360.0 mL/h is faster"),)


def best_first(recorded: dict[str, Any]) -> dict[str, Any]:
    """The recording as now written: stock sizes best first (least discarded, then fewest containers), rewordings."""
    document = copy.deepcopy(recorded)
    dose = document.get("dose")
    if dose is not None:
        dose["presentations"].sort(key=lambda fit: (round(fit["discard_ml"], 1), fit["containers"], fit["size_ml"]))
    for finding in document["findings"]:
        for old, new in REWORDED:
            finding["message"] = finding["message"].replace(old, new)
    return document


@pytest.mark.parametrize("case", RECORDED, ids=lambda case: " ".join(case["args"][6:12]))
def test_check_json_is_unchanged_by_the_refactor(case: dict[str, Any]) -> None:
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        code = main(["check", *case["args"], "--json"])
    assert code == case["exit"]
    recorded = best_first(case["json"])
    assert _same(round_document(recorded), json.loads(out.getvalue()), "check", recorded) == []
