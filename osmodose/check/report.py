"""The plain-text report of a check: what `osmodose check` prints and the app saves.

One function builds it so the terminal, the app's saved summary and any
printout say the same thing in the same words.  Every figure is rounded by
`science.precision`, exactly as the JSON rounds it, and carries its unit.

Words: a status is one word, its value in capitals (`ok` -> OK, `warn` ->
WARN, `refuse` -> REFUSE), never a mark and a word together; the stock sizes
a volume can be drawn from are alternatives ("1 × 500 mL (discard 150 mL),
or 2 × 250 mL (discard 150 mL)"), the least waste first.
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import datetime

from osmodose.case.provenance import DataIn
from osmodose.check.results import CheckResult, FormularyRef, PresentationFit
from osmodose.formulary.demo import DEMO_NOTE
from osmodose.science import precision as p
from osmodose.science.formulas import CORRECTED_SODIUM_GLUCOSE_FROM_MG_DL, GLUCOSE_MG_DL_PER_MMOL_L

#: Each status's one word, as every text output prints it (the JSON value in capitals).
STATUS_MARK = {"ok": "OK", "warn": "WARN", "refuse": "REFUSE"}
STATUS_WORDS = {
    "ok": "OK: no limit crossed",
    "warn": "WARN: a soft limit is crossed; review before giving",
    "refuse": "REFUSE: a hard limit is crossed; do not give as ordered",
}
#: The same states for labs with no order: nothing is "given as ordered".
LABS_ONLY_WORDS = {
    "ok": "OK: no limit crossed",
    "warn": "WARN: a soft limit is crossed by these labs",
    "refuse": "REFUSE: a hard limit is crossed by these labs; hold hyperosmolar therapy",
}

#: What each figure of an order is, as the report and the app's panels label it.
LABELS = {
    "volume": "volume",
    "rate": "rate",
    "solute": "solute",
    "sodium-load": "sodium load",
    "osmolar-load": "osmolar load",
    "na-per-litre": "Na change per litre of this fluid",
    "projected-na": "projected Na",
    "stock": "from stock",
}


def status_words(result: CheckResult) -> str:
    """What the status means for this result, with or without an order."""
    return (STATUS_WORDS if result.dose is not None else LABS_ONLY_WORDS)[result.status]


def fmt(value: float | None, unit: str = "", digits: int = 1) -> str:
    """A figure for display; None shows as "n/a" so a missing figure is never read as 0."""
    return p.text(value, digits, unit)


def signed(value: float | None, unit: str = "", digits: int = 1) -> str:
    if value is None:
        return "n/a"
    return f"{p.rounded(value, digits):+.{digits}f} {unit}".rstrip()


def plain(value: float, decimals: int) -> str:
    """A size or count as people write it: rounded to `decimals`, without trailing zeros (500, 0.5)."""
    text = f"{p.rounded(value, decimals):.{decimals}f}"
    return text.rstrip("0").rstrip(".") if "." in text else text


def presentation_text(fit: PresentationFit) -> str:
    """One way to draw the volume from stock: "1 × 500 mL (discard 150 mL)"."""
    size = plain(fit.size_ml, p.FIGURE_DECIMALS["size_ml"])
    discard = plain(fit.discard_ml, p.FIGURE_DECIMALS["discard_ml"])
    left = f"discard {discard} mL" if float(discard) else "no discard"
    return f"{fit.containers} × {size} mL ({left})"


def presentations_text(fits: Sequence[PresentationFit]) -> str:
    """The alternatives, best first, in words: "1 × 500 mL (discard 150 mL), or 2 × 250 mL (...)"."""
    return ", or ".join(presentation_text(fit) for fit in fits)


def formulary_lines(ref: FormularyRef) -> list[str]:
    """The formulary a result was worked with, and the DEMO marker while the demo is in use."""
    lines = [ref.line()]
    if ref.demo:
        lines.append(DEMO_NOTE)
    return lines


def finding_line(severity: str, code: str, message: str) -> str:
    """One finding: its one status word, its code and its message."""
    return f"{STATUS_MARK[severity]} {code}: {message}"


def patient_text(result: CheckResult) -> str:
    """The patient as typed and read: "70 kg, 45 y, male, 180 cm"."""
    pt = result.patient
    weight = plain(pt.weight_kg, p.FIGURE_DECIMALS["weight_kg"])
    text = f"{weight} kg, {plain(pt.age_years, p.FIGURE_DECIMALS['age_years'])} y, {pt.sex}"
    if pt.height_cm is not None:
        text += f", {plain(pt.height_cm, p.FIGURE_DECIMALS['height_cm'])} cm"
    return text


def rate_text(result: CheckResult) -> str | None:
    """ "1050.0 mL/h over 20 min", or None without a duration."""
    dose = result.dose
    if dose is None or dose.rate_ml_h is None or not dose.duration_min:
        return None
    minutes = plain(dose.duration_min, p.FIGURE_DECIMALS["duration_min"])
    return f"{p.figure_text('rate_ml_h', dose.rate_ml_h, 'mL/h')} over {minutes} min"


def render_text(result: CheckResult) -> str:
    """The readable report, ending with the caution line."""
    pt = result.patient
    osm = "mOsm/kg"
    lines = [
        f"osmodose check  {status_words(result)}",
        *formulary_lines(result.formulary),
        "",
        f"patient: {patient_text(result)}",
        f"total body water: {p.figure_text('total_body_water_l', pt.total_body_water_l, 'L')}"
        f" ({_method(pt.tbw_method)})",
        "calculated osmolality: "
        f"{p.figure_text('calculated_osmolality_mosm_kg', result.calculated_osmolality_mosm_kg, osm)}"
        f"   effective: {p.figure_text('effective_osmolality_mosm_kg', result.effective_osmolality_mosm_kg, osm)}"
        f"   osmolar gap: {p.figure_text('osmolar_gap_mosm_kg', result.osmolar_gap_mosm_kg, osm)}",
        *patient_lines(result),
    ]
    dose = result.dose
    if dose is not None:
        rate = rate_text(result)
        lines += [
            "",
            f"order: {dose.agent_label} [{dose.agent}], {dose.requested}"
            + (f", {result.line} line" if result.line else ""),
            f"  {LABELS['volume']} {p.figure_text('volume_ml', dose.volume_ml, 'mL')}"
            f" ({p.figure_text('volume_ml_per_kg', dose.volume_ml_per_kg, 'mL/kg')})" + (f" at {rate}" if rate else ""),
            f"  {LABELS['solute']} {p.figure_text('solute_g', dose.solute_g, 'g')}"
            f" ({p.figure_text('solute_g_per_kg', dose.solute_g_per_kg, 'g/kg')})"
            f"   {LABELS['sodium-load']} {p.figure_text('sodium_mmol', dose.sodium_mmol, 'mmol')}"
            f" ({p.figure_text('sodium_mmol_per_kg', dose.sodium_mmol_per_kg, 'mmol/kg')})"
            f"   {LABELS['osmolar-load']} {p.figure_text('osmoles_mosm', dose.osmoles_mosm, 'mOsm')}",
        ]
        if dose.presentations:
            lines.append(f"  {LABELS['stock']}: {presentations_text(dose.presentations)}")
        lines.append(
            f"  {LABELS['na-per-litre']} "
            f"{p.signed_text('sodium_change_per_litre_mmol_l', result.sodium_change_per_litre_mmol_l, 'mmol/L')}"
            f"   {LABELS['projected-na']} "
            f"{p.figure_text('projected_sodium_mmol_l', result.projected_sodium_mmol_l, 'mmol/L')}"
            f" ({p.signed_text('projected_sodium_rise_mmol_l', result.projected_sodium_rise_mmol_l, 'mmol/L')}"
            f"{range_text(result)})"
        )
        lines += order_lines(result)
        lines += equiosmolar_lines(result)
    lines += water_lines(result)
    lines.append("")
    if result.findings:
        lines.append("checks:")
        lines += [f"  {finding_line(x.severity, x.code, x.message)}" for x in result.findings]
    else:
        lines.append("checks: none crossed")
    if result.notes:
        lines.append("notes:")
        lines += [f"  - {note}" for note in result.notes]
    if result.labs_file is not None:
        lines += ["", *labs_file_lines(result.labs_file)]
    lines += ["", result.caution]
    return "\n".join(lines) + "\n"


def corrected_sodium_text(result: CheckResult) -> str | None:
    """The glucose-corrected sodium, when glucose is above the 100 mg/dL both corrections start from."""
    corrected, glucose = result.corrected_sodium_mmol_l, result.labs.get("glucose_mmol_l")
    if (
        corrected is None
        or glucose is None
        or glucose * GLUCOSE_MG_DL_PER_MMOL_L <= CORRECTED_SODIUM_GLUCOSE_FROM_MG_DL
    ):
        return None
    return (
        f"{corrected.katz:.1f} mmol/L (Katz, 1.6 per 100 mg/dL of glucose above 100) / "
        f"{corrected.hillier:.1f} mmol/L (Hillier, 2.4)"
    )


def rise_budget_text(result: CheckResult) -> str | None:
    """How much of the 24 h rise limits the order uses: "+6.0 of 8 mmol/L in 24 h (refused above 10); goal 4-8"."""
    budget = result.sodium_rise_budget
    if budget is None:
        return None
    used = budget.already_used_mmol_l
    text = f"{budget.total_mmol_l:+.1f}"
    if used is not None:
        text += f" ({used:+.1f} measured in the 24 h before, {budget.rise_mmol_l:+.1f} this order)"
    text += f" of {fmt_limit(budget.warn_mmol_l)} mmol/L in 24 h (refused above {fmt_limit(budget.refuse_mmol_l)})"
    if budget.target_low_mmol_l is not None and budget.target_high_mmol_l is not None:
        text += f"; goal {budget.target_low_mmol_l:g}-{budget.target_high_mmol_l:g} mmol/L"
        if budget.high_risk:
            text += " (high risk of osmotic demyelination)"
    return text


def fmt_limit(value: float | None) -> str:
    return "n/a" if value is None else f"{value:g}"


def patient_lines(result: CheckResult) -> list[str]:
    """Body mass index and the glucose-corrected sodium, where there are such figures."""
    lines = []
    if result.patient.bmi_kg_m2 is not None:
        lines.append(f"body mass index: {result.patient.bmi_kg_m2:.1f} kg/m^2")
    corrected = corrected_sodium_text(result)
    if corrected is not None:
        lines.append(f"sodium corrected for glucose: {corrected}")
    return lines


def order_lines(result: CheckResult) -> list[str]:
    """The order's dosing weight (when not actual), osmolar rate and share of the 24 h rise limits."""
    dose, lines = result.dose, list[str]()
    if dose is None:
        return lines
    if dose.dose_weight != "actual" and dose.dosing_weight_kg is not None:
        lines.append(f"  per kg of {dose.dose_weight} body weight: {dose.dosing_weight_kg:.1f} kg")
    if dose.osmolar_rate_mosm_kg_min is not None:
        lines.append(f"  osmolar rate {dose.osmolar_rate_mosm_kg_min:.2f} mOsm/kg/min")
    budget = rise_budget_text(result)
    if budget is not None:
        lines.append(f"  24 h rise: {budget}")
    return lines


def _method(method: str) -> str:
    if method == "apparent":
        return "apparent, from this patient's measured responses"
    return "Watson formula" if method == "watson" else "Adrogue-Madias fraction of weight"


def rise_range(result: CheckResult) -> tuple[float, float] | None:
    """The projected range as changes from the measured sodium, or None."""
    span = result.projected_sodium_range_mmol_l
    if span is None:
        return None
    sodium = result.labs["sodium_mmol_l"] or 0.0
    return span[0] - sodium, span[1] - sodium


def range_text(result: CheckResult) -> str:
    """ ", range +4.1 to +9.3" after the projected change; empty without a projection."""
    span = rise_range(result)
    return "" if span is None else f"; range {signed(span[0])} to {signed(span[1])}"


def volume_text(volume_ml: float | None) -> str:
    """An agent's volume for the lists: mL to 3 significant digits; beyond any plausible order, said so."""
    if volume_ml is None:
        return "cannot"
    if volume_ml > VOLUME_SHOWN_UP_TO_ML:
        return f"{volume_ml / 1000:.0f} L (impractical)"
    return f"{volume_ml:.3g} mL" if volume_ml < 100 else f"{volume_ml:.0f} mL"


#: Above this an agent's volume is shown as impractical: the largest plausible order (common practice).
VOLUME_SHOWN_UP_TO_ML = 5000.0


def equiosmolar_lines(result: CheckResult) -> list[str]:
    """The other osmotherapy agents' volumes with this order's osmoles."""
    if not result.equiosmolar:
        return []
    items = ", ".join(f"{v.agent} {volume_text(v.volume_ml)}" for v in result.equiosmolar)
    return [f"  equiosmolar (same ideal mOsm): {items}"]


def water_lines(result: CheckResult) -> list[str]:
    """Urine losses and their free water; the free-water deficit and the fluids for the daily fall."""
    lines = []
    urine = result.urine
    if urine is not None:
        cations = (urine["sodium_mmol_l"] or 0.0) + (urine["potassium_mmol_l"] or 0.0)
        line = (
            f"urine over the infusion: {urine['volume_ml']:g} mL, Na + K {cations:g} mmol/L; "
            f"electrolyte-free water {fmt(result.electrolyte_free_water_clearance_l, 'L', 2)}"
        )
        if result.projected_sodium_without_losses_mmol_l is not None:
            line += f"; projected without these losses {fmt(result.projected_sodium_without_losses_mmol_l, 'mmol/L')}"
        lines.append(line)
    if result.free_water_deficit_l is not None:
        line = f"free-water deficit: {fmt(result.free_water_deficit_l, 'L')}"
        if result.volumes_for_daily_fall:
            items = ", ".join(f"{v.agent} {volume_text(v.volume_ml)}" for v in result.volumes_for_daily_fall)
            line += f"; for the daily fall limit: {items}"
        lines.append(line)
    return ["", *lines] if lines else []


def _time(moment: object) -> str:
    if not isinstance(moment, datetime):
        return ""
    offset = moment.strftime("%z")
    return moment.strftime("%Y-%m-%d %H:%M ") + (offset[:-2] + ":" + offset[-2:] if offset else "")


def labs_file_lines(data_in: DataIn) -> list[str]:
    """Where each value came from: the file's resource, drawn when and how long before the check, or typed."""
    lines = [f"labs file: {data_in.path} sha256 {data_in.sha256}", f"  ages at {_time(data_in.at)}"]
    for origin in data_in.fields:
        if origin.source == "typed":
            text = f"typed {origin.shown}" + (f", replaces the file's {origin.replaced}" if origin.replaced else "")
        else:
            text = f"{origin.shown} from {origin.resource}"
            if origin.loinc:
                text += f" (LOINC {origin.loinc})"
            if origin.effective_time is not None:
                drawn = origin.effective_time.date().isoformat() if origin.date_only else _time(origin.effective_time)
                text += f", {drawn}"
                if origin.age_h is not None:
                    text += f", {origin.age_h:.1f} h old" if not origin.date_only else ""
        lines.append(f"  {origin.field}: {text}")
    if data_in.ignored:
        lines.append("  not used:")
        lines += [f"    {line}" for line in data_in.ignored]
    return lines
