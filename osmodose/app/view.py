"""What the check screen shows, as plain data: no textual here, so it is tested without a terminal.

One evaluation of the typed form through the core (`parse_check_request` then
`run_check`) becomes one `Shown`: the text of every line on the screen, each
piece tagged with a role (a value, a refused value, a warning...) that the
widgets turn into a style.  Figures are formatted by the one
precision table (`science.precision`) as the report and the JSON are, so the screen, the
saved summary and `check --json` round alike.  Nothing here
computes a clinical figure.

Imported by the app's loader thread, once pint and the formulary are in:
the screen itself is laid out from `form_view` alone.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass
from datetime import datetime
from typing import TYPE_CHECKING, Any

from osmodose.app.form_view import AMOUNT, DOSE_MODE, FIELDS, SYMBOL
from osmodose.app.shown import Line, Role, Shown, Span
from osmodose.case.fields import FIELDS as CASE_FIELDS
from osmodose.case.fields import keys, read
from osmodose.case.inputs import DoseMode, parse_check_request
from osmodose.check.report import (
    LABELS,
    corrected_sodium_text,
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

#: Width of the label column of the dose and figures panels (a longer label takes a line of its own).
LABEL_WIDTH = 14
PATIENT_LABEL_WIDTH = 22
NOT_VALID = "—"


@dataclass(frozen=True)
class Outcome:
    """One evaluation: a result, or the error that stops one (never both)."""

    result: CheckResult | None
    error: InputError | LabsFileError | None = None
    field: str | None = None
    """The form field to mark: the one the error names, in the form's own keys."""
    missing: bool = False
    """True when a needed field is still empty (incomplete), False when one is wrong."""
    mode: str = "dose"
    """The dose style the amount was asked as."""

    @property
    def state(self) -> str:
        if self.result is not None:
            return self.result.status
        return "incomplete" if self.missing else "invalid"

    @property
    def message(self) -> str:
        """The error in the screen's own words ("" when there is none)."""
        if isinstance(self.error, InputError):
            return screen_message(self.error, self.mode)
        return str(self.error) if self.error is not None else ""


@dataclass(frozen=True)
class LoadedLabs:
    """A labs file read into the form: the file, and the text each box it filled was given."""

    file: FhirFile
    filled: dict[str, str]


def evaluate(
    values: Mapping[str, str], formulary: Formulary, labs: LoadedLabs | None = None, now: datetime | None = None
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
        where, missing = _where(error, values, amount)
        return Outcome(None, error, where, missing, mode)
    return Outcome(result, mode=mode)


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


def _where(error: InputError | LabsFileError, values: Mapping[str, str], amount: str) -> tuple[str, bool]:
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


# --- the screen's own words --------------------------------------------------------------------

#: Words of the command line that the screen calls otherwise.
_OPTION_WORDS = {"--agent ID": "an agent from the list", "exactly one of dose, volume or target-rise": "an amount"}


def _screen_names() -> dict[str, str]:
    """Field keys whose box on screen is named otherwise (tbw-method is "TBW method")."""
    names = {key: f.label.removeprefix("or ") for key, f in CASE_FIELDS.items()}
    names.update({mode: DOSE_CHOICE.label(mode) for mode in DOSE_CHOICE.values})
    return {key: name for key, name in names.items() if name != key}


SCREEN_NAMES = _screen_names()
_NAMES = "|".join(map(re.escape, sorted(SCREEN_NAMES, key=len, reverse=True)))
_KEY_WORD = re.compile(rf"(?<![\w-])({_NAMES})(?![\w-])")


def on_screen(text: str) -> str:
    """`text` with every command-line name of a field replaced by the name its box has on screen."""
    for words, shown in _OPTION_WORDS.items():
        text = text.replace(words, shown)
    return _KEY_WORD.sub(lambda m: SCREEN_NAMES[m.group(1)], text)


def screen_message(error: InputError, mode: str = "dose") -> str:
    """An input error in the words of the screen: "target Na change: 134 is outside ...", never "target-rise"."""
    name = SCREEN_NAMES.get(error.field, error.field)
    problem, accepted = on_screen(error.problem), on_screen(error.accepted) if error.accepted else None
    text = str(InputError(name, error.value, problem, accepted))
    if error.field == "target-rise" and "target-sodium" in DOSE_CHOICE.values and "outside" in problem:
        text += f"; to aim at a sodium level, ask as {DOSE_CHOICE.label('target-sodium')}"
    return text


# --- what each box reads as ---------------------------------------------------------------------

_UNIT_SHOWN = {"year": "y"}


def short(value: float) -> str:
    """A figure at most to 0.1, without a trailing .0: 69.85 is 69.9, 70.0 is 70."""
    return f"{round(value, 1):g}"


def echo(key: str, raw: str, mode: str = "dose") -> tuple[str, str]:
    """What a typed value reads as: (the unit beside a bare number, the value converted under a typed unit).

    ("kg", "") for "70"; ("", "= 69.9 kg") for "154 lb"; ("", "") for an empty
    box, a choice, a dose (its unit is always typed) or a value that does not read.
    """
    if key == AMOUNT:
        key = mode
    field = CASE_FIELDS.get(key)
    if field is None or field.kind != "quantity" or not raw.strip():
        return "", ""
    try:
        value = read(key, raw)
    except InputError:
        return "", ""
    if _is_bare(raw):
        return _UNIT_SHOWN.get(field.unit, field.unit), ""
    shown = _UNIT_SHOWN.get(field.engine_unit, field.engine_unit)
    return "", f"= {short(value)} {shown}" + (f" {field.into}" if field.into else "")


def _is_bare(raw: str) -> bool:
    try:
        float(raw.strip())
    except ValueError:
        return False
    return True


# --- the lines shown ----------------------------------------------------------------------------

#: (id, label) of the figures that need no order, in the order shown.
PATIENT_FIGURES: tuple[tuple[str, str], ...] = (
    ("tbw", "total body water"),
    ("calc-osm", "calculated osmolality"),
    ("eff-osm", "effective osmolality"),
    ("gap", "osmolar gap"),
    ("free-water", "free-water deficit"),
    ("urine-water", "urine free water"),
)
#: (id, label) of the patient-level figures of the safety checks (body size, tonicity, the rise
#: budget), shown under the figures only where the case has them.
SAFETY_FIGURES: tuple[tuple[str, str], ...] = (
    ("bmi", "body mass index"),
    ("corrected-na", "Na corrected for glucose"),
    ("rise-budget", "24 h rise"),
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


def banner_text(outcome: Outcome) -> str:
    """The status line: symbol, word, and what it means."""
    state = outcome.state
    if outcome.result is None:
        word = "INCOMPLETE" if outcome.missing else "NOT VALID"
        return f"{SYMBOL[state]} {word}: {outcome.message}  (no results shown)"
    text = f"{SYMBOL[state]} {status_words(outcome.result)}"
    if outcome.result.dose is None:
        text += "  (no order: labs only)"
    return text


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


def safety_texts(result: CheckResult) -> dict[str, str]:
    """Shown text of each `SAFETY_FIGURES` figure the result has (the report's own words)."""
    texts = {}
    if result.patient.bmi_kg_m2 is not None:
        texts["bmi"] = p.figure_text("bmi_kg_m2", result.patient.bmi_kg_m2, "kg/m²")
    corrected = corrected_sodium_text(result)
    if corrected is not None:
        texts["corrected-na"] = corrected
    budget = rise_budget_text(result)
    if budget is not None:
        texts["rise-budget"] = budget
    return texts


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


def stock_lines(result: CheckResult) -> list[str]:
    """The stock rows as the dose panel shows them: alternatives, any one of them, best first."""
    rows = stock_rows(result)
    if result.dose is None:
        return []
    if not result.dose.presentations:
        return ["from stock: no bag or vial sizes listed in the formulary"]
    return ["from stock, any one of:", *(f"  {row}" for row in rows)]


def agent_volume_lines(title: str, rows: list[tuple[str, str]]) -> list[str]:
    """A small table of agents and volumes under a title (equiosmolar volumes, the daily fall); none when empty."""
    if not rows:
        return []
    width = max(len(agent) for agent, _ in rows)
    return [title, *(f"  {agent.ljust(width)}  {volume}" for agent, volume in rows)]


def finding_lines(result: CheckResult) -> list[tuple[Role, str]]:
    """(severity, line) per finding, with the symbol and the word, refusals first."""
    return [(x.severity, f"{SYMBOL[x.severity]} {x.severity.upper()} {x.code}: {x.message}") for x in result.findings]


def figure_lines(
    rows: tuple[tuple[str, str], ...], texts: Mapping[str, str], role: Role, width: int = LABEL_WIDTH
) -> tuple[Line, ...]:
    """A label column and the value beside it; a label too long for the column stands on a line of its own."""
    lines: list[Line] = []
    for figure_id, label in rows:
        value: Span = (texts.get(figure_id, NOT_VALID), role if figure_id in texts else "muted")
        if len(label) < width:
            lines.append(((label.ljust(width), "label"), value))
        else:
            lines += [((label, "label"),), ((" " * width, ""), value)]
    return tuple(lines)


def show(outcome: Outcome, values: Mapping[str, str]) -> Shown:
    """The whole screen's text for one evaluation of the form's `values`."""
    result = outcome.result
    mode = values.get(DOSE_MODE) or "dose"
    echoes = {spec.key: echo(spec.key, values.get(spec.key, ""), mode) for spec in FIELDS}
    if outcome.field is not None:
        echoes[outcome.field] = ("", "")
    mark = ""
    if outcome.error is not None:
        mark = ("… needed: " if outcome.missing else "✖ ") + outcome.message
    texts: dict[str, str] = {}
    if result is None:
        checks: tuple[Line, ...] = ((("not valid: no checks until every field reads", "muted"),),)
        dose_title = "dose"
        dose_lines: tuple[Line, ...] = ((("not valid: see the marked field", "muted"),),)
        figures = figure_lines(PATIENT_FIGURES, {}, "value", PATIENT_LABEL_WIDTH)
        notes: tuple[str, ...] = ()
    else:
        found = finding_lines(result)
        checks = tuple(((line, severity),) for severity, line in found) or ((("✔ OK: no limit crossed", "ok"),),)
        patient = patient_texts(result)
        texts.update(patient)
        safety = safety_texts(result)
        texts.update(safety)
        shown_safety = tuple((key, label) for key, label in SAFETY_FIGURES if key in safety)
        figures = figure_lines(PATIENT_FIGURES + shown_safety, {**patient, **safety}, "value", PATIENT_LABEL_WIDTH)
        figures += tuple(
            ((text, "muted"),)
            for text in agent_volume_lines("to lower Na by the daily fall limit:", daily_fall_rows(result))
        )
        dose_title, dose_lines = _dose_panel(result, texts, _asked_typed(values, echoes))
        notes = tuple(f"- {note}" for note in result.notes)
    labs_file = tuple(labs_file_rows(result)) if result is not None else ()
    return Shown(
        state=outcome.state,
        banner=banner_text(outcome),
        summary=summary_lines(outcome, values, echoes),
        checks=checks,
        dose_title=dose_title,
        dose=dose_lines,
        figures=figures,
        notes=notes,
        values=texts,
        echoes=echoes,
        marked=outcome.field,
        mark=mark,
        missing=outcome.missing,
        labs_file=labs_file,
    )


def _asked_typed(values: Mapping[str, str], echoes: Mapping[str, tuple[str, str]]) -> str:
    """What was asked for, in the screen's words and with its unit: "target Na change 6 mmol/L"."""
    mode = values.get(DOSE_MODE) or "dose"
    unit = echoes.get(AMOUNT, ("", ""))[0]
    return f"{DOSE_CHOICE.label(mode)} {values.get(AMOUNT, '').strip()}" + (f" {unit}" if unit else "")


def _dose_panel(result: CheckResult, texts: dict[str, str], asked: str) -> tuple[str, tuple[Line, ...]]:
    """The dose panel's title and lines; a refused order's figures struck through, the refusal above them."""
    dose = result.dose
    if dose is None:
        return "dose", ((("no order entered: the labs are checked alone", "muted"),),)
    figures = dose_texts(result)
    texts.update(figures)
    refused = result.status == "refuse"
    line = f", {result.line} line" if result.line else ""
    lines: list[Line] = []
    if refused:
        codes = ", ".join(x.code for x in result.findings if x.severity == "refuse")
        lines.append(((f"✖ REFUSED ({codes}): do not give as ordered; the figures are for reference only", "refuse"),))
    lines += [((dose.agent_label, ""),), ((f"asked as {asked}{line}", "muted"),)]
    lines += figure_lines(DOSE_FIGURES, figures, "struck" if refused else "value")
    lines += [((text, "struck" if refused else ""),) for text in stock_lines(result)]
    equiosmolar = agent_volume_lines("equiosmolar (same ideal mOsm):", equiosmolar_rows(result))
    lines += [((text, "muted"),) for text in equiosmolar]
    title = f"dose {SYMBOL[result.status]} {'REFUSED' if refused else result.status.upper()}"
    return title, tuple(lines)


def summary_lines(
    outcome: Outcome, values: Mapping[str, str], echoes: Mapping[str, tuple[str, str]]
) -> tuple[Line, ...]:
    """The lines pinned under the status: the patient, the order's key figures, the findings by code."""
    result = outcome.result
    if result is not None:
        pt = result.patient
        na = result.labs.get("sodium_mmol_l")
        patient = f"{short(pt.weight_kg)} kg · {short(pt.age_years)} y · {pt.sex} · Na {short(na or 0)} mmol/L"
    else:
        parts = []
        for key, name in (("weight", ""), ("age", ""), ("sex", ""), ("sodium", "Na ")):
            typed = values.get(key, "").strip()
            unit = echoes.get(key, ("", ""))[0]
            parts.append(f"{name}{typed} {unit}".strip() if typed else NOT_VALID)
        patient = " · ".join(parts)
    lines: list[Line] = [(("patient ", "label"), (patient, ""))]
    if result is None:
        lines.append((("order   ", "label"), (NOT_VALID, "muted")))
        lines.append((("checks  ", "label"), ("not valid until every field reads", "muted")))
        return tuple(lines)
    dose = result.dose
    if dose is None:
        lines.append((("order   ", "label"), ("none: the labs are checked alone", "muted")))
    else:
        refused = result.status == "refuse"
        rate = f" over {dose.duration_min:g} min" if dose.duration_min else ""
        order: list[Span] = [("order   ", "label"), (f"{dose.agent} ", "")]
        volume = p.figure_text("volume_ml", dose.volume_ml, "mL")
        order.append((f"{volume}{rate}", "struck" if refused else "value"))
        if refused:
            order.append((" ✖ refused: do not give", "refuse"))
        elif result.projected_sodium_mmol_l is not None:
            projected = p.figure_text("projected_sodium_mmol_l", result.projected_sodium_mmol_l, "mmol/L")
            order += [(" · projected Na ", "label"), (projected, "value")]
            rise = p.signed_text("projected_sodium_rise_mmol_l", result.projected_sodium_rise_mmol_l, "mmol/L")
            order.append((f" ({rise}{range_text(result)})", ""))
        lines.append(tuple(order))
    checks: list[Span] = [("checks  ", "label")]
    if not result.findings:
        checks.append(("✔ none crossed", "ok"))
    for i, x in enumerate(result.findings):
        checks.append(((" · " if i else "") + f"{SYMBOL[x.severity]} {x.code}", x.severity))
    lines.append(tuple(checks))
    return tuple(lines)
