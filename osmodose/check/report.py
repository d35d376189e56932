"""The plain-text report of a check: what `osmodose check` prints and the app saves.

One function builds it so the terminal, the app's saved summary and any
printout say the same thing in the same words.
"""

from __future__ import annotations

from datetime import datetime

from osmodose.case.provenance import DataIn
from osmodose.check.results import CheckResult

STATUS_MARK = {"ok": "[OK]", "warn": "[WARN]", "refuse": "[REFUSE]"}
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


def status_words(result: CheckResult) -> str:
    """What the status means for this result, with or without an order."""
    return (STATUS_WORDS if result.dose is not None else LABS_ONLY_WORDS)[result.status]


def fmt(value: float | None, unit: str = "", digits: int = 1) -> str:
    """A figure for display; None shows as "n/a" so a missing figure is never read as 0."""
    if value is None:
        return "n/a"
    text = f"{value:.{digits}f}"
    return f"{text} {unit}".rstrip()


def signed(value: float | None, unit: str = "", digits: int = 1) -> str:
    if value is None:
        return "n/a"
    return f"{value:+.{digits}f} {unit}".rstrip()


def render_text(result: CheckResult) -> str:
    """The readable report, ending with the caution line."""
    p = result.patient
    lines = [
        f"osmodose check  {STATUS_MARK[result.status]} {status_words(result)}",
        result.formulary.line(),
        "",
        f"patient: {p.weight_kg:.1f} kg, {p.age_years:g} y, {p.sex}"
        + (f", {p.height_cm:.0f} cm" if p.height_cm is not None else ""),
        f"total body water: {p.total_body_water_l:.1f} L ({_method(p.tbw_method)})",
        f"calculated osmolality: {fmt(result.calculated_osmolality_mosm_kg, 'mOsm/kg')}"
        f"   effective: {fmt(result.effective_osmolality_mosm_kg, 'mOsm/kg')}"
        f"   osmolar gap: {fmt(result.osmolar_gap_mosm_kg, 'mOsm/kg')}",
    ]
    dose = result.dose
    if dose is not None:
        lines += [
            "",
            f"order: {dose.agent_label} [{dose.agent}], {dose.requested}"
            + (f", {result.line} line" if result.line else ""),
            f"  volume {dose.volume_ml:.1f} mL ({dose.volume_ml_per_kg:.2f} mL/kg)"
            + (
                f" at {dose.rate_ml_h:.0f} mL/h over {dose.duration_min:g} min"
                if dose.rate_ml_h is not None and dose.duration_min
                else ""
            ),
            f"  solute {fmt(dose.solute_g, 'g', 2)} ({fmt(dose.solute_g_per_kg, 'g/kg', 2)})"
            f"   sodium {dose.sodium_mmol:.1f} mmol ({dose.sodium_mmol_per_kg:.2f} mmol/kg)"
            f"   osmoles {dose.osmoles_mosm:.0f} mOsm",
        ]
        if dose.presentations:
            fits = ", ".join(
                f"{fit.containers} x {fit.size_ml:g} mL"
                + (f" (discard {fit.discard_ml:g} mL)" if fit.discard_ml else "")
                for fit in dose.presentations
            )
            lines.append(f"  from stock: {fits}")
        lines.append(
            f"  sodium: change per litre {signed(result.sodium_change_per_litre_mmol_l, 'mmol/L')}"
            f"   projected {fmt(result.projected_sodium_mmol_l, 'mmol/L')}"
            f" ({signed(result.projected_sodium_rise_mmol_l, 'mmol/L')})"
        )
    lines.append("")
    if result.findings:
        lines.append("checks:")
        lines += [f"  {STATUS_MARK[x.severity]} {x.code}: {x.message}" for x in result.findings]
    else:
        lines.append("checks: none crossed")
    if result.notes:
        lines.append("notes:")
        lines += [f"  - {note}" for note in result.notes]
    if result.labs_file is not None:
        lines += ["", *labs_file_lines(result.labs_file)]
    lines += ["", result.caution]
    return "\n".join(lines) + "\n"


def _method(method: str) -> str:
    return "Watson formula" if method == "watson" else "Adrogue-Madias fraction of weight"


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
