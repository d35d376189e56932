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
        "volume",
        "dose ÷ the agent's concentration (× weight for a per-kg dose); for a target Na change "
        "R: V = R × TBW ÷ (Na_inf + K_inf − Na − R)",
    ),
    ("rate", "volume ÷ duration, in mL/h"),
    ("solute", "volume × the agent's g/L; per kg ÷ weight"),
    ("sodium load", "the sodium the volume carries: volume × the agent's sodium mmol/L; per kg ÷ weight"),
    ("osmolar load", "the osmoles the volume carries: volume × the agent's mOsm/L"),
    ("from stock", "whole bags or vials of one size kept that hold the volume, and what is left to discard"),
    (
        "Na change per litre of this fluid",
        "Adrogué–Madias: what one litre of this fluid changes serum sodium by, (Na_inf + K_inf − Na) ÷ (TBW + 1)",
    ),
    ("projected Na", "mass balance Na + V (Na_inf + K_inf − Na) ÷ (TBW + V), and the change; none for mannitol"),
    ("checks", "each figure against the formulary's limit: warn or refuse when strictly above it"),
)
