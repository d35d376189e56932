"""One line per shown figure: what it is and the formula the core uses for it.

The formulas themselves live once in `osmodose.science.formulas` and `osmodose.check.engine`;
this is their description for the help screen, with the published source.  The names are the
labels the screen shows (`view.PATIENT_FIGURES`, `view.DOSE_FIGURES`).
"""

from __future__ import annotations

FIGURE_HELP: tuple[tuple[str, str], ...] = (
    (
        "total body water",
        "TBW = weight × fraction (Adrogué–Madias: men 0.6, elderly men 0.5, "
        "women 0.5, elderly women 0.45, children 0.6), or the Watson formula from age, height and weight",
    ),
    ("calculated osmolality", "2 × Na + glucose + urea (+ ethanol), all in mmol/L"),
    ("effective osmolality", "2 × Na + glucose: urea and ethanol cross cell membranes"),
    ("osmolar gap", "measured osmolality − calculated osmolality"),
    (
        "free-water deficit",
        "above Na 145: TBW × (Na ÷ 140 − 1), the water alone (secondary sources); the fluids beside it lower Na "
        "by the daily fall limit",
    ),
    ("urine free water", "electrolyte-free water in the urine typed: V × (1 − (U_Na + U_K) ÷ Na)"),
    ("body mass index", "weight ÷ height², kg/m² (WHO); from 30, the fraction overstates body water"),
    (
        "Na corrected for glucose",
        "Na + 1.6 (Katz 1973) or 2.4 (Hillier 1999) mmol/L per 100 mg/dL of glucose above 100 mg/dL",
    ),
    (
        "24 h rise",
        "this order's projected rise (with what the course already measured) against the 24 h rise limits, "
        "and the goal band (Verbalis 2013)",
    ),
    (
        "volume",
        "dose ÷ the agent's concentration (× weight for a per-kg dose); for a target Na change "
        "R: V = R × TBW ÷ (Na_inf + K_inf − Na − R); a target Na is the change target − Na",
    ),
    ("rate", "volume ÷ duration, in mL/h"),
    ("solute", "volume × the agent's g/L; per kg ÷ weight"),
    ("sodium load", "the sodium the volume carries: volume × the agent's sodium mmol/L; per kg ÷ weight"),
    ("osmolar load", "the osmoles the volume carries: volume × the agent's mOsm/L"),
    (
        "from stock",
        "alternatives, the least waste first: the whole volume from bags or vials of one size, "
        "and what is left to discard",
    ),
    (
        "Na change per litre of this fluid",
        "Adrogué–Madias: what one litre of this fluid changes serum sodium by, (Na_inf + K_inf − Na) ÷ (TBW + 1)",
    ),
    (
        "projected Na",
        "mass balance Na + V (Na_inf + K_inf − Na) ÷ (TBW + V), and the change; with urine typed, the full balance "
        "(Na × TBW + V (Na+K)_inf − V_urine (Na+K)_urine) ÷ (TBW + V − V_urine) (Barsoum & Levine 2002); "
        "the range spans TBW (fraction against Watson, ± Watson's error), sodium ± 2 and, in hyponatraemia, "
        "2.4 × the predicted rise (Mohmand 2007); none for mannitol",
    ),
    ("Na without urine losses", "the same projection with the infusate alone, as without urine"),
    ("equiosmolar", "the volume of each other osmotherapy agent with the same ideal mOsm as the order"),
    ("checks", "each figure against the formulary's limit: warn or refuse when strictly above it"),
)
