"""What the screen shows, as plain data: no textual here, so it is tested without a terminal.

The form's fields, one evaluation of the typed text through the core
(`parse_check_request` then `run_check`), and the text of each shown figure,
formatted by `science.precision` as the report and the JSON are, so the screen
and the saved summary round alike.  Nothing here computes a clinical figure.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from datetime import datetime
from typing import TYPE_CHECKING, Any, Literal, cast

from osmodose.case.fields import FIELDS as CASE_FIELDS
from osmodose.case.fields import keys
from osmodose.case.inputs import DoseMode, parse_check_request
from osmodose.check.report import (
    LABELS,
    corrected_sodium_text,
    fmt,
    presentation_text,
    range_text,
    rate_text,
    rise_budget_text,
    status_words,
    volume_text,
)
from osmodose.check.results import CheckResult
from osmodose.check.run import run_check
from osmodose.errors import InputError, LabsFileError
from osmodose.formulary.model import Formulary
from osmodose.science import precision as p
from osmodose.science.choices import DOSE_MODE as DOSE_CHOICE

if TYPE_CHECKING:
    from osmodose.datain import FhirFile

Panel = Literal["patient", "labs", "order", "verifier", "lab", "dose", "reading", "plan"]

#: The order field whose meaning is chosen by the dose-mode select.
AMOUNT = "amount"
DOSE_MODE = "dose-mode"
DOSE_MODES: tuple[tuple[str, str], ...] = tuple((DOSE_CHOICE.label(mode), mode) for mode in DOSE_CHOICE.values)
AMOUNT_HINT: dict[str, str] = {mode: CASE_FIELDS[mode].hint for mode in DOSE_CHOICE.values}

#: Banner symbols: each status has its own word, colour and symbol.
SYMBOL = {"ok": "✔", "warn": "▲", "refuse": "✖", "invalid": "?", "incomplete": "…"}


@dataclass(frozen=True)
class FieldSpec:
    """One box of the paper form, in the order a checker fills it in."""

    key: str
    label: str
    panel: Panel
    hint: str = ""
    choices: tuple[tuple[str, str], ...] = ()
    """For a select: (shown, value) pairs; empty for a typed field."""
    blank: str = ""
    """For a select that may stay empty: what the empty choice says."""


def spec_of(key: str, panel: Panel | None = None, **override: Any) -> FieldSpec:
    """The form box of a field of the field table (`osmodose.case.fields`), its words overridable."""
    field = CASE_FIELDS[key]
    choices = tuple((field.choice.label(v), v) for v in field.choice.values) if field.choice else ()
    spec = FieldSpec(key, field.label, panel or cast(Panel, field.group), field.hint, choices, field.empty)
    return replace(spec, **override) if override else spec


FIELDS: tuple[FieldSpec, ...] = (
    *(spec_of(key) for key in keys("patient", "labs")),
    # Urine over the infusion sits with the labs (optional; the projection then takes the losses out).
    *(spec_of(key, "labs") for key in keys("urine")),
    spec_of("agent"),
    FieldSpec(DOSE_MODE, "asked as", "order", choices=DOSE_MODES),
    FieldSpec(AMOUNT, "amount", "order", AMOUNT_HINT["dose"]),
    spec_of("duration"),
    spec_of("line"),
)


def shown_names(specs: tuple[FieldSpec, ...]) -> dict[str, str]:
    """What a form calls each field, for its errors: the box's label ("or BUN" as "BUN")."""
    return {spec.key: spec.label.removeprefix("or ") for spec in specs}


#: What an error calls each field typed on the check screen: the box's label, and an amount by
#: the style it is asked as ("target Na change", not the command line's `target-rise`).
ERROR_NAMES: dict[str, str] = {
    **shown_names(FIELDS),
    **{mode: DOSE_CHOICE.label(mode) for mode in DOSE_CHOICE.values},
}


@dataclass(frozen=True)
class Outcome:
    """One evaluation: a result, or the error that stops one (never both)."""

    result: CheckResult | None
    error: InputError | LabsFileError | None = None
    field: str | None = None
    """The form field to mark: the one the error names, in the form's own keys."""
    missing: bool = False
    """True when a needed field is still empty (incomplete), False when one is wrong."""

    @property
    def state(self) -> str:
        if self.result is not None:
            return self.result.status
        return "incomplete" if self.missing else "invalid"


@dataclass(frozen=True)
class LoadedLabs:
    """A labs file read into the form: the file, and the text each box it filled was given."""

    file: FhirFile
    filled: dict[str, str]


def evaluate(
    values: dict[str, str], formulary: Formulary, labs: LoadedLabs | None = None, now: datetime | None = None
) -> Outcome:
    """Run the typed form through the core; any InputError becomes a marked field.

    With a labs file loaded, a box still holding the text the file put there is
    the file's value (with its resource and age), any other text is typed and
    wins, exactly as `check --labs` with options.
    """
    mode: DoseMode = DOSE_CHOICE.read(DOSE_MODE, values.get(DOSE_MODE) or "dose")
    fields: dict[str, object] = {k: v for k, v in values.items() if k not in (AMOUNT, DOSE_MODE)}
    amount = (values.get(AMOUNT) or "").strip()
    if amount:
        fields[mode] = amount
    try:
        data_in = None
        if labs is not None:
            fields, data_in = labs_case(fields, labs, now or datetime.now().astimezone())
        result = run_check(parse_check_request(fields, dose_mode=mode, data_in=data_in), formulary)
    except (InputError, LabsFileError) as error:
        field, missing = _where(error, values, amount)
        shown = error.named(ERROR_NAMES) if isinstance(error, InputError) else error
        return Outcome(None, shown, field, missing)
    return Outcome(result)


def labs_case(fields: dict[str, object], labs: LoadedLabs, now: datetime) -> tuple[dict[str, object], Any]:
    """The form's fields with the file's values where the box holds what the file put there (or is empty)."""
    from osmodose.datain import case_from_file  # noqa: PLC0415 (only once a labs file is loaded)

    typed = {k: v for k, v in fields.items() if labs.filled.get(k) != v}
    # A box the file filled and the user emptied takes nothing from the file.
    cleared = {k for k in labs.filled if not str(fields.get(k) or "").strip()}
    return case_from_file(typed, labs.file, now, [k for k in keys("patient", "labs") if k not in cleared])


def fill_texts(labs_file: FhirFile, values: dict[str, str], now: datetime) -> dict[str, str]:
    """The text to put in each empty box the file gives a value for (what is typed stays)."""
    from osmodose.datain import case_from_file  # noqa: PLC0415 (only once a labs file is loaded)

    typed = {k: v for k, v in values.items() if v.strip()}
    wanted = keys("patient", "labs")
    try:
        fields, data_in = case_from_file(typed, labs_file, now, wanted)
    except InputError as error:  # a gender to confirm: fill the rest, the form marks the sex
        if error.field != "sex":
            raise
        fields, data_in = case_from_file(typed, labs_file, now, [k for k in wanted if k != "sex"])
    texts = {}
    for origin in data_in.fields:
        if origin.source != "file":
            continue
        value = fields[origin.field]
        # Age in full (rounding could cross the elderly cut-off); sex as the form's choice; the rest as written.
        texts[origin.field] = (
            repr(value) if origin.field == "age" else (str(value) if origin.field == "sex" else origin.shown)
        )
    return texts


def labs_file_rows(result: CheckResult) -> list[str]:
    """Where each value came from, as the report says it; empty when nothing was read from a file."""
    from osmodose.check.report import labs_file_lines  # noqa: PLC0415 (only with a labs file)

    return labs_file_lines(result.labs_file) if result.labs_file is not None else []


def _where(error: InputError | LabsFileError, values: dict[str, str], amount: str) -> tuple[str, bool]:
    """Which form field an error belongs to, and whether it is only missing."""
    if isinstance(error, LabsFileError):
        return error.field or "sodium", False
    if error.field == "agent" and not amount:
        return AMOUNT, True  # an agent is chosen but no amount typed yet
    if error.field in DOSE_CHOICE.values:
        if not (values.get("agent") or "").strip():
            return "agent", True
        return AMOUNT, False
    return error.field, error.value is None


def banner_text(outcome: Outcome) -> str:
    """The status line: symbol, word, and what it means."""
    state = outcome.state
    if outcome.result is None:
        word = "INCOMPLETE" if outcome.missing else "NOT VALID"
        return f"{SYMBOL[state]} {word}: {outcome.error}  (no results shown)"
    text = f"{SYMBOL[state]} {status_words(outcome.result)}"
    if outcome.result.dose is None:
        text += "  (no order: labs only)"
    return text


#: (id, label) of the figures that need no order, in the order shown.
PATIENT_FIGURES: tuple[tuple[str, str], ...] = (
    ("tbw", "body water"),
    ("calc-osm", "calculated osm"),
    ("eff-osm", "effective osm"),
    ("gap", "osmolar gap"),
    ("free-water", "free-water def."),
    ("urine-water", "urine free water"),
)
#: (id, label) of the order's figures.
DOSE_FIGURES: tuple[tuple[str, str], ...] = (
    ("volume", LABELS["volume"]),
    ("rate", LABELS["rate"]),
    ("solute", LABELS["solute"]),
    ("sodium-load", LABELS["sodium-load"]),
    ("osmoles", LABELS["osmolar-load"]),
    ("na-per-litre", LABELS["na-per-litre"]),
    ("projected-na", LABELS["projected-na"]),
    ("na-no-losses", "Na without urine losses"),
)


def patient_texts(result: CheckResult) -> dict[str, str]:
    """Shown text of each figure that needs no order."""
    pt = result.patient
    method = "Watson" if pt.tbw_method == "watson" else "fraction"
    f = p.figure_text
    return {
        "tbw": f"{f('total_body_water_l', pt.total_body_water_l, 'L')} ({method})",
        "calc-osm": f("calculated_osmolality_mosm_kg", result.calculated_osmolality_mosm_kg, "mOsm/kg"),
        "eff-osm": f("effective_osmolality_mosm_kg", result.effective_osmolality_mosm_kg, "mOsm/kg"),
        "gap": f("osmolar_gap_mosm_kg", result.osmolar_gap_mosm_kg, "mOsm/kg"),
        "free-water": "n/a (sodium not high)"
        if result.free_water_deficit_l is None
        else f("free_water_deficit_l", result.free_water_deficit_l, "L"),
        "urine-water": "n/a (no urine given)"
        if result.urine is None
        else f("electrolyte_free_water_clearance_l", result.electrolyte_free_water_clearance_l, "L"),
    }


def dose_texts(result: CheckResult) -> dict[str, str]:
    """Shown text of each of the order's figures; empty when there is no order."""
    dose = result.dose
    if dose is None:
        return {}
    f = p.figure_text
    return {
        "volume": f"{f('volume_ml', dose.volume_ml, 'mL')} ({f('volume_ml_per_kg', dose.volume_ml_per_kg, 'mL/kg')})",
        "rate": rate_text(result) or "n/a (no duration)",
        "solute": f"{f('solute_g', dose.solute_g, 'g')} ({f('solute_g_per_kg', dose.solute_g_per_kg, 'g/kg')})",
        "sodium-load": f"{f('sodium_mmol', dose.sodium_mmol, 'mmol')} "
        f"({f('sodium_mmol_per_kg', dose.sodium_mmol_per_kg, 'mmol/kg')})",
        "osmoles": f("osmoles_mosm", dose.osmoles_mosm, "mOsm"),
        "na-per-litre": p.signed_text(
            "sodium_change_per_litre_mmol_l", result.sodium_change_per_litre_mmol_l, "mmol/L"
        ),
        "projected-na": f"{f('projected_sodium_mmol_l', result.projected_sodium_mmol_l, 'mmol/L')} "
        f"({p.signed_text('projected_sodium_rise_mmol_l', result.projected_sodium_rise_mmol_l, 'mmol/L')}"
        f"{range_text(result)})",
        "na-no-losses": "n/a (no urine given)"
        if result.urine is None
        else f("projected_sodium_without_losses_mmol_l", result.projected_sodium_without_losses_mmol_l, "mmol/L"),
    }


#: (id, label) of the patient-level figures added for the safety checks (body size, tonicity, the rise
#: budget), shown only where the case has them.
SAFETY_FIGURES: tuple[tuple[str, str], ...] = (
    ("bmi", "body mass index"),
    ("corrected-na", "Na corrected for glucose"),
    ("rise-budget", "24 h rise"),
)


def safety_texts(result: CheckResult) -> dict[str, str]:
    """Shown text of each `SAFETY_FIGURES` figure the result has (the report's own words)."""
    texts = {}
    if result.patient.bmi_kg_m2 is not None:
        texts["bmi"] = fmt(result.patient.bmi_kg_m2, "kg/m^2")
    corrected = corrected_sodium_text(result)
    if corrected is not None:
        texts["corrected-na"] = corrected
    budget = rise_budget_text(result)
    if budget is not None:
        texts["rise-budget"] = budget
    return texts


def equiosmolar_rows(result: CheckResult) -> list[tuple[str, str]]:
    """(agent, volume) of each other osmotherapy agent carrying this order's ideal osmoles."""
    return [(v.agent, volume_text(v.volume_ml)) for v in result.equiosmolar or []]


def daily_fall_rows(result: CheckResult) -> list[tuple[str, str]]:
    """(agent, volume) of each fluid below serum sodium that lowers it by the daily fall limit."""
    return [(v.agent, volume_text(v.volume_ml)) for v in result.volumes_for_daily_fall]


def asked_text(result: CheckResult) -> str:
    """The order as asked for, its style named as the "asked as" select names it: "target Na change 6"."""
    dose = result.dose
    if dose is None:
        return ""
    return f"{DOSE_CHOICE.label(dose.mode)} {dose.requested.removeprefix(dose.mode + ' ')}"


def stock_rows(result: CheckResult) -> list[str]:
    """The ways to draw the volume from the agent's bag or vial sizes: alternatives, best first.

    "1 × 500 mL (discard 150 mL)", then "or 2 × 250 mL (discard 150 mL)": each
    row is the whole volume from one size, never a part of a combination.
    """
    if result.dose is None:
        return []
    rows = [("or " if k else "") + presentation_text(fit) for k, fit in enumerate(result.dose.presentations)]
    return rows or ["no presentations listed in the formulary"]


def finding_rows(result: CheckResult) -> list[tuple[str, str]]:
    """(severity, line) per finding, with the symbol and the word, refusals first."""
    return [(x.severity, f"{SYMBOL[x.severity]} {x.severity.upper()} {x.code}: {x.message}") for x in result.findings]
