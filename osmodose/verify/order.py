"""The order as the prescriber wrote it, read from typed text.

An order arrives as a volume of one agent ("mannitol 20 % 350 mL over
20 min"), sometimes with the prescriber's own arithmetic beside it ("1 g/kg",
"expect Na 145").  Verification recomputes everything from the volume and
compares; so the volume is required, and the stated figures are kept apart
from it as claims to check, never as inputs to the computation.
"""

from __future__ import annotations

from pydantic import Field

from osmodose.case.fields import FIELDS, WRITTEN_ORDER_KEYS, read
from osmodose.case.inputs import DoseUnit, Line, given_fields, parse_dose
from osmodose.errors import InputError
from osmodose.frozen import Frozen
from osmodose.science.choices import LINE
from osmodose.science.formulas import MINUTES_PER_HOUR


class StatedDose(Frozen, use_attribute_docstrings=True):
    """The dose the prescriber wrote beside the volume."""

    amount: float
    """The amount in `unit` (per kg when `per_kg`)."""
    unit: DoseUnit
    """g of solute, mL, mmol of sodium or mOsm."""
    per_kg: bool
    """Whether the dose is per kg of body weight."""
    text: str
    """The dose as written, e.g. "1 g/kg"."""

    @property
    def label(self) -> str:
        """The dose in canonical units, e.g. "1 g/kg" or "50 g"."""
        return f"{self.amount:g} {self.unit}" + ("/kg" if self.per_kg else "")


class Order(Frozen, use_attribute_docstrings=True):
    """One order as written, normalised to mL, minutes and mmol/L."""

    agent_id: str
    """Id of the agent in the formulary."""
    volume_ml: float
    """The volume ordered."""
    duration_min: float | None = None
    """The infusion time as written."""
    rate_ml_h: float | None = None
    """The rate as written."""
    line: Line | None = None
    """The line named in the order."""
    stated_dose: StatedDose | None = None
    """The prescriber's stated dose, per kg or absolute."""
    stated_sodium_mmol_l: float | None = None
    """The serum sodium the prescriber expects after the order."""
    entered: dict[str, str] = Field(default_factory=dict)
    """Each order field as typed."""

    @property
    def duration_for_check(self) -> float | None:
        """The duration the rate check uses: the shorter of the written duration and volume / rate.

        When both are written and disagree, the faster one is what a pump
        could be set to, so the maximum-rate rule judges that one.
        """
        candidates = [d for d in (self.duration_min, self.duration_from_rate) if d is not None]
        return min(candidates) if candidates else None

    @property
    def duration_from_rate(self) -> float | None:
        """volume / rate in minutes, when a rate is written."""
        if self.rate_ml_h is None:
            return None
        return self.volume_ml * MINUTES_PER_HOUR / self.rate_ml_h


def parse_order(fields: dict[str, object]) -> Order:
    """Read an order from typed text; raises InputError on the first bad field.

    Keys: agent, volume (both required), duration, rate, line, stated-dose,
    stated-sodium.  A bare number is mL, minutes, mL/h or mmol/L.
    """
    given = given_fields({k: fields.get(k) for k in WRITTEN_ORDER_KEYS})
    if "agent" not in given:
        raise InputError("agent", None, "is required", "an agent id from the formulary")
    if "volume" not in given:
        raise InputError("volume", None, "is required", "the volume as ordered, e.g. 350 mL")
    agent_id = str(given["agent"]).strip()
    volume = read("volume", given["volume"])
    duration = read("duration", given["duration"]) if "duration" in given else None
    rate = _rate(given["rate"], volume) if "rate" in given else None
    line = LINE.read("line", given["line"]) if "line" in given else None
    stated_dose = None
    if "stated-dose" in given:
        dose = parse_dose(agent_id, given["stated-dose"], field="stated-dose")
        stated_dose = StatedDose(amount=dose.amount, unit=dose.unit, per_kg=dose.per_kg, text=dose.text)
    stated_sodium = read("stated-sodium", given["stated-sodium"]) if "stated-sodium" in given else None
    return Order(
        agent_id=agent_id,
        volume_ml=volume,
        duration_min=duration,
        rate_ml_h=rate,
        line=line,
        stated_dose=stated_dose,
        stated_sodium_mmol_l=stated_sodium,
        entered={k: str(v) for k, v in given.items()},
    )


def _rate(raw: object, volume_ml: float) -> float:
    """A rate in mL/h whose duration for this volume is plausible."""
    rate = read("rate", raw)
    if rate <= 0:
        raise InputError("rate", raw, "is not above zero", "a rate in mL/h, e.g. 1000 or 2 mL/min")
    minutes = volume_ml * MINUTES_PER_HOUR / rate
    bounds = FIELDS["duration"].bounds
    if not (bounds.low <= minutes <= bounds.high):
        raise InputError(
            "rate",
            raw,
            f"gives {volume_ml:g} mL over {minutes:.3g} min, outside the plausible duration",
            bounds.describe(),
        )
    return rate
