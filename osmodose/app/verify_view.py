"""What the verification screen shows, as plain data: no textual here, so it is tested without a terminal.

The screen's text goes through the core exactly as `osmodose verify` does:
the patient and labs typed on the check screen through `parse_check_request`,
the order as written through `parse_order`, each ticked warning and its
reason through `make_acceptance`, then `verify_order`.  Nothing here
computes a clinical figure: the rows below are the record's own numbers,
formatted.

The order is judged twice.  First with no acceptance (the *preview*): that
gives the warnings a verifier may accept and the refusals no one can, and it
does not depend on what the verifier has ticked.  Then, once every box reads,
with the acceptances and initials (the *record*): that is the decision shown
and what ctrl+s appends to the log.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from datetime import datetime
from typing import NamedTuple

from osmodose.app.form_view import FIELDS, SYMBOL, FieldSpec, spec_of
from osmodose.app.shown import Line, Span
from osmodose.app.view import (
    DOSE_FIGURES,
    NOT_VALID,
    dose_texts,
    echo,
    figure_lines,
    finding_lines,
    screen_message,
    short,
)
from osmodose.case.fields import WRITTEN_ORDER_KEYS
from osmodose.case.inputs import parse_check_request
from osmodose.errors import InputError
from osmodose.formulary.model import Formulary
from osmodose.verify import VerificationRecord, make_acceptance, parse_initials, parse_order, verify_order
from osmodose.verify.decision import MIN_REASON_LENGTH, NOT_ACCEPTABLE, decision_word
from osmodose.verify.discrepancies import Discrepancy

#: Keys of the check screen's form that belong to its own order, not to the patient or the labs.
CHECK_ORDER_KEYS = frozenset(spec.key for spec in FIELDS if spec.panel == "order")
#: Where an error in the patient or labs is marked: on the check screen, where they are typed.
PATIENT = "patient"
#: Initials for the preview only (the order judged with no acceptance); that record is never saved or shown.
PREVIEW_INITIALS = "XX"
#: Prefix of the key of a warning's reason box: "reason:<code>".
REASON = "reason:"

ORDER_SPECS: tuple[FieldSpec, ...] = (
    spec_of("agent", blank="choose"),  # its choices: form_view.agent_choices
    spec_of("volume", hint="mL, or 0.35 L"),
    spec_of("duration"),
    spec_of("rate", "order", label="or rate", hint="mL/h, or 2 mL/min"),
    spec_of("line"),
    spec_of("stated-dose", "order", hint="1 g/kg, 70 g, 120 mmol"),
    spec_of("stated-sodium", "order", label="stated Na", hint="expected, mmol/L"),
)
INITIALS_SPEC = FieldSpec("initials", "initials", "verifier", "e.g. AB")
assert {spec.key for spec in ORDER_SPECS} == set(WRITTEN_ORDER_KEYS)
#: What an error calls each box of the order as written: its label on this screen.

#: The decision line: symbol, word and CSS state (ok/warn/refuse colours), so it reads without colour too.
DECISION_SHOWN: dict[str, tuple[str, str, str]] = {
    "released": ("✔", f"{decision_word('released')}: nothing crossed and nothing contradicts the order", "ok"),
    "released-with-accepted-warnings": (
        "✔",
        f"{decision_word('released-with-accepted-warnings')}: each has a reason",
        "ok",
    ),
    "held": (
        "▲",
        f"{decision_word('held')}: a warning is not accepted; not released until it is, or the order changes",
        "warn",
    ),
    "refused": ("✖", f"{decision_word('refused')}: do not give as written; the order must be changed", "refuse"),
}


def patient_fields(check_values: Mapping[str, str]) -> dict[str, str]:
    """The patient and labs typed on the check screen (its own order fields left out), non-empty only."""
    return {k: v for k, v in check_values.items() if k not in CHECK_ORDER_KEYS and v.strip()}


def patient_summary(patient: Mapping[str, str]) -> str:
    """The patient and labs as typed, each with its unit, for the read-only box: "weight 70 kg, age 45 y, ..."."""
    labels = {spec.key: spec.label for spec in FIELDS}
    parts = []
    for key, typed in patient.items():
        unit = echo(key, typed)[0]
        parts.append(f"{labels.get(key, key).removeprefix('or ')} {typed}" + (f" {unit}" if unit else ""))
    return ", ".join(parts) or "nothing typed"


@dataclass(frozen=True)
class Entry:
    """Everything typed on the verification screen (and the patient from the check screen)."""

    patient: dict[str, str]
    order: dict[str, str]
    accepted: dict[str, bool] = field(default_factory=dict)
    """code -> whether its accept box is ticked."""
    reasons: dict[str, str] = field(default_factory=dict)
    """code -> the reason typed beside it."""
    initials: str = ""

    def key(self) -> tuple[object, ...]:
        """A hashable snapshot: the saved record belongs to exactly this entry."""

        def items(d: Mapping[str, object]) -> tuple[tuple[str, object], ...]:
            return tuple(sorted(d.items()))

        ticked = {code: self.reasons.get(code, "") for code, on in self.accepted.items() if on}
        return items(self.patient), items(self.order), items(ticked), self.initials


@dataclass(frozen=True)
class VerifyState:
    """One evaluation: the preview and the record when they can be made, else the error that stops them."""

    preview: VerificationRecord | None
    """The order judged with no acceptance: its warnings, refusals and figures."""
    record: VerificationRecord | None
    """The complete record (acceptances and initials applied): what is saved."""
    error: InputError | None = None
    field: str | None = None
    """Which box the error belongs to: an order key, "initials", "reason:<code>", or "patient"."""
    missing: bool = False

    @property
    def state(self) -> str:
        """ok, warn, refuse (from the decision), or invalid / incomplete."""
        outcome = self.outcome
        if outcome is not None:
            return DECISION_SHOWN[outcome][2]
        return "incomplete" if self.missing else "invalid"

    @property
    def outcome(self) -> str | None:
        """The decision; a refusal is shown even before the initials, as nothing can change it."""
        if self.record is not None:
            return self.record.outcome
        if self.preview is not None and self.preview.outcome == "refused":
            return "refused"
        return None

    @property
    def acceptable(self) -> list[str]:
        """Codes of the warnings a verifier may accept (never one refused, nor one the order must state)."""
        if self.preview is None:
            return []
        decision = self.preview.decision
        return [code for code in decision.open_warnings if code not in decision.must_state]

    @property
    def refusals(self) -> list[str]:
        """Codes no one can accept."""
        return list(self.preview.decision.refusals) if self.preview else []


def evaluate(entry: Entry, formulary: Formulary, now: datetime | None = None) -> VerifyState:
    """Run the typed boxes through the core; any InputError becomes a marked box."""
    try:
        request = parse_check_request(dict(entry.patient))
    except InputError as error:
        return VerifyState(None, None, error, PATIENT, error.value is None)
    try:
        order = parse_order(dict(entry.order))
    except InputError as error:
        return VerifyState(None, None, error, error.field, error.value is None)
    try:
        preview = verify_order(request, order, formulary, (), PREVIEW_INITIALS, now=now)
    except InputError as error:
        return VerifyState(None, None, error, error.field, error.value is None)
    acceptances = []
    for code in preview.decision.open_warnings:
        if code in preview.decision.must_state or not entry.accepted.get(code):
            continue
        reason = entry.reasons.get(code, "")
        try:
            acceptances.append(make_acceptance(code, reason))
        except InputError as error:
            return VerifyState(preview, None, error, REASON + code, not reason.strip())
    try:
        initials = parse_initials(entry.initials)
    except InputError as error:
        return VerifyState(preview, None, error, "initials", error.value is None)
    record = verify_order(request, order, formulary, acceptances, initials, now=now)
    return VerifyState(preview, record)


def problem_text(state: VerifyState) -> str:
    """The error in the screen's words: a reason box is named by its warning, not by a CLI option."""
    error = state.error
    if error is None:
        return ""
    if state.field and state.field.startswith(REASON):
        code = state.field.removeprefix(REASON)
        if state.missing:
            return f"accept {code}: needs a written reason of at least {MIN_REASON_LENGTH} characters"
        return f"accept {code}: {error.problem}"
    return screen_message(error)


def box_reading(entry: Entry, key: str) -> tuple[str, str]:
    """What an order box reads as: (the unit beside a bare number, the value converted), as on the check screen."""
    return echo(key, entry.order.get(key, "")) if key in entry.order else ("", "")


def box_message(state: VerifyState, key: str) -> str:
    """The text shown under box `key`: why it is wrong or still needed, else nothing."""
    if state.field != key or state.error is None:
        return ""
    return ("… needed: " if state.missing else "✖ ") + problem_text(state)


def decision_text(state: VerifyState) -> str:
    """The decision line: symbol, word, meaning; or why there is no decision yet."""
    outcome = state.outcome
    if outcome is None:
        word = "INCOMPLETE" if state.missing else "NOT VALID"
        where = " (on the check screen: escape to go back)" if state.field == PATIENT else ""
        return f"{SYMBOL[state.state]} {word}: {problem_text(state)}{where}"
    symbol, words, _ = DECISION_SHOWN[outcome]
    return f"{symbol} {words}"


def _number(value: float) -> str:
    return f"{value:.3g}"


def discrepancy_rows(discrepancies: list[Discrepancy]) -> list[tuple[str, str, str, str]]:
    """(severity, heading, stated vs recomputed, message) per discrepancy, refusals first.

    The middle is empty where there are not two numbers to set side by side
    (no line named, a part bag): the message says what is wrong.
    """
    rows: list[tuple[str, str, str, str]] = []
    for d in discrepancies:
        unit = f" {d.unit}" if d.unit else ""
        side = ""
        if d.stated is not None and d.recomputed is not None:
            side = f"stated {_number(d.stated)}{unit} · recomputed {_number(d.recomputed)}{unit}"
        rows.append((d.severity, f"{SYMBOL[d.severity]} {d.severity.upper()} {d.code}", side, d.message))
    return rows


def refusal_note(code: str) -> str:
    """What stands where a refused code's accept box would be."""
    return f"✖ {code}: {NOT_ACCEPTABLE}"


class SaveNote(NamedTuple):
    """The last save attempt: shown only while the entry is still the one it was made for."""

    key: tuple[object, ...]
    text: str
    saved: bool
    sha256: str = ""
    """The saved record's SHA-256 (what `osmodose log verify --expect` takes)."""


def saved_text(sequence: int, sha256: str, path: object) -> str:
    return f"✔ SAVED as record {sequence} in {path}\nsha256 {sha256}"


def not_saved_text(problem: object) -> str:
    return f"✖ NOT SAVED: {problem}. Nothing is verified until the record is in the log."


#: Said above the order's boxes: they are empty on purpose, not forgotten.
RETYPE_NOTE = "typed again from the written order, on purpose: an independent re-check"


def summary_lines(state: VerifyState, entry: Entry) -> tuple[Line, ...]:
    """Pinned under the decision: the patient, the order's key figures as recomputed, and the findings by code."""
    preview = state.preview
    if preview is not None:
        p = preview.result.patient
        na = preview.result.labs.get("sodium_mmol_l")
        patient = f"{short(p.weight_kg)} kg · {short(p.age_years)} y · {p.sex} · Na {short(na or 0)} mmol/L"
    else:
        typed = [entry.patient.get(key, "").strip() for key in ("weight", "age", "sex", "sodium")]
        patient = " · ".join(text or NOT_VALID for text in typed)
    lines: list[Line] = [(("patient ", "label"), (patient, ""))]
    if preview is None or preview.result.dose is None:
        lines.append((("order   ", "label"), (NOT_VALID, "muted")))
        lines.append((("checks  ", "label"), ("not valid until every box reads", "muted")))
        return tuple(lines)
    result, dose = preview.result, preview.result.dose
    refused = state.outcome == "refused"
    rate = f" at {dose.rate_ml_h:.0f} mL/h" if dose.rate_ml_h is not None else ""
    order: list[Span] = [
        ("order   ", "label"),
        (f"{dose.agent} ", ""),
        (f"{dose.volume_ml:g} mL{rate}", "struck" if refused else "value"),
    ]
    if refused:
        order.append((" ✖ refused: do not give", "refuse"))
    elif result.projected_sodium_mmol_l is not None:
        order += [(" · projected Na ", "label"), (f"{result.projected_sodium_mmol_l:.1f} mmol/L", "value")]
    lines.append(tuple(order))
    found: list[Span] = [("checks  ", "label")]
    severities = [(d.severity, d.code) for d in preview.discrepancies]
    severities += [(x.severity, x.code) for x in result.findings]
    if not severities:
        found.append(("✔ none crossed, nothing contradicts the order", "ok"))
    for i, (severity, code) in enumerate(sorted(severities, key=lambda sc: sc[0] != "refuse")):
        found.append(((" · " if i else "") + f"{SYMBOL[severity]} {code}", severity))
    lines.append(tuple(found))
    return tuple(lines)


def check_lines(state: VerifyState) -> tuple[Line, ...]:
    """The check of the volume as ordered: each finding, as on the check screen."""
    if state.preview is None:
        return ((("not valid: no checks until every box reads", "muted"),),)
    found = finding_lines(state.preview.result)
    return tuple(((line, severity),) for severity, line in found) or ((("✔ OK: no limit crossed", "ok"),),)


def discrepancy_lines(state: VerifyState) -> tuple[Line, ...]:
    """As written against recomputed: heading, the two numbers side by side, the message."""
    if state.preview is None:
        return ((("not valid: nothing to compare until the order reads", "muted"),),)
    rows = discrepancy_rows(state.preview.discrepancies)
    if not rows:
        return ((("✔ none: the order as written agrees with the recomputation", "ok"),),)
    lines: list[Line] = []
    for severity, heading, side, message in rows:
        lines.append(((heading, "refuse" if severity == "refuse" else "warn"),))
        if side:
            lines.append(((side, "value"),))
        lines.append(((message, "muted"),))
    return tuple(lines)


def recomputed_lines(state: VerifyState) -> tuple[Line, ...]:
    """The order's figures recomputed from its volume; struck through when the order is refused."""
    preview = state.preview
    texts = dose_texts(preview.result) if preview is not None else {}
    return figure_lines(DOSE_FIGURES, texts, "struck" if state.outcome == "refused" else "value")


#: The file name the print key offers.
PRINT_NAME = "osmodose-verification.txt"


def printable(record: VerificationRecord, note: SaveNote | None) -> str:
    """The record as text to print and file: whether and where it is logged, then the record itself."""
    if note is not None:
        head = note.text + "\n"
    else:
        head = "NOT SAVED: this record is not in the verification log; nothing is verified until it is.\n"
    return head + "\n" + record.render_text()
