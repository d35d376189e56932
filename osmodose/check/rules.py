"""The safety rules of a check, as one table: each row a figure, its limits, when it applies, its words.

Rules run on whole columns (a check is a batch of one), so an audit row and a
single check get the same findings.  Each `Rule` names the figure it judges
(an attribute of `Batch`), its warn and refuse limits (a limit's name in the
formulary, or a function of the batch for limits that depend on the case or
the agent), the condition under which it applies (another `Batch` attribute),
and how it fires: `above` or `below` its limits, `missing` when the figure
cannot be computed at all, or `flag` whenever it applies.  The comparison is
always `judging.threshold`; messages are built here only, once per finding.

The course judges the same limits through the same rows (`RULES_BY_CODE`) and
the same helpers in `judging`; its time-window rules (24 h windows, a gap
growing, stale labs, cumulative mannitol) stay course rules.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from functools import cached_property
from typing import Literal

import numpy as np

from osmodose.check import patient_rules as p
from osmodose.check.engine import AgentColumns, Cases, Figures, UrineColumns
from osmodose.check.judging import (
    NONE,
    REFUSE,
    SEVERITY_NAMES,
    WARN,
    Severity,
    high_risk,
    judged_osmolality,
    rise_limits,
    threshold,
    threshold_below,
)
from osmodose.check.patient_rules import PatientColumns
from osmodose.formulary.file_model import SettingsTable
from osmodose.formulary.model import Agent, DoseKind, Limits
from osmodose.science.precision import apart, rounded

Describe = Callable[[float, float, str], str]
#: A rule's words: a template over {value}, {limit}, {severity}, {shown} (`shown(value, limit)`), {what},
#: {unit} and {side}, or a function of (value, limit, severity) for words a template cannot say.
Words = str | Describe
LimitOf = Callable[["Batch"], "np.ndarray | float"]
Detail = Callable[[PatientColumns, int], str]


@dataclass(frozen=True)
class RuleOutcome:
    """One rule over all cases: severity, the value judged and the limit crossed."""

    code: str
    severity: np.ndarray
    value: np.ndarray
    limit: np.ndarray
    unit: str
    describe: Describe
    extra: Callable[[int], str] | None = None  # more words for a row, from more of the case than (value, limit)
    #: The words show the value only through `shown`: values with one `shown_key` get one message.
    shows_value: bool = False

    def message(self, row: int) -> str:
        sev = SEVERITY_NAMES[int(self.severity[row])]
        text = self.describe(float(self.value[row]), float(self.limit[row]), sev)
        return text if self.extra is None else text + self.extra(row)


def shown(value: float, limit: float) -> str:
    """`value` to one decimal, or to as many as it takes not to print the limit itself (`precision.apart`).

    "310.0 is above the limit of 310" reads as a contradiction; "310.04" does not.
    The JSON's `value` is rounded by the same rule, so the message and the figure agree.
    """
    digits = apart(value, limit, 1)
    figure = rounded(value, digits)
    if value != limit and figure == limit:
        return f"{value:.6g}"
    return f"{figure:.{digits}f}"


def shown_keys(values: np.ndarray, limit: float) -> np.ndarray:
    """A key per value judged against `limit`, equal where `shown` writes the values alike.

    `shown` writes a value to one decimal unless that decimal is the limit
    itself: the value rounded to one decimal is the key, and a value that
    rounds onto the limit is its own key.  (A batch makes one message per key.)
    """
    tenths = rounded(values, 1)
    return np.where(tenths == limit, values, tenths)


#: Word functions whose only use of the judged value is `shown(value, limit)` (a template says so by itself).
_SHOWN_ONLY: set[Describe] = set()


def _shows(describe: Describe) -> Describe:
    _SHOWN_ONLY.add(describe)
    return describe


#: The words of a rule that says no more than that its figure crossed its limit.
CROSSED = "{what} {shown} {unit} is {side} the {severity} limit of {limit:g} {unit}"


@dataclass(frozen=True)
class Batch:
    """What the rules read for a batch of cases: figures, conditions and limits, in canonical units."""

    limits: Limits
    agent: AgentColumns
    figures: Figures
    line: np.ndarray
    # Figures judged.
    sodium: np.ndarray
    osmolality: np.ndarray
    projected_sodium: np.ndarray
    rise: np.ndarray
    fall: np.ndarray
    osmolar_gap: np.ndarray
    agent_osmolarity: np.ndarray
    rise_without_losses: np.ndarray
    rise_high: np.ndarray
    sodium_age_h: np.ndarray
    # Conditions.
    always: np.ndarray
    has_agent: np.ndarray
    not_lowering: np.ndarray
    order_not_lowering: np.ndarray
    lowering: np.ndarray
    mannitol: np.ndarray
    mannitol_or_no_order: np.ndarray
    rise_applies: np.ndarray
    rise_refuse: np.ndarray
    central_only_peripheral: np.ndarray
    other_peripheral: np.ndarray
    # The patient and lab rules' figures and conditions (`check.patient_rules`).
    patient: PatientColumns
    aquaresis: np.ndarray
    range_judged: np.ndarray

    def figure(self, name: str) -> np.ndarray:
        """A judged figure: one the batch derives (`osmolality`, `rise`), a patient column or an engine figure."""
        found = getattr(self, name, None)
        if found is None:
            found = getattr(self.patient, name, None)
        value = getattr(self.figures, name) if found is None else found
        return np.asarray(value, dtype=float)

    def condition(self, name: str) -> np.ndarray:
        """Where a rule applies: a condition of the batch or of the patient columns."""
        found = getattr(self, name, None)
        return np.asarray(getattr(self.patient, name) if found is None else found, dtype=bool)


def apply_rules(
    cases: Cases,
    figures: Figures,
    agents: Sequence[Agent],
    limits: Limits,
    line: np.ndarray,
    settings: SettingsTable | None = None,
) -> list[RuleOutcome]:
    """Every rule of the table over every case; `line` holds "", "central" or "peripheral" per case.

    `settings` (the formulary's) gives the adult age; without it, the default.  The rules read the
    batch's figures, conditions and limits (`Batch`), gathered here once for every rule.
    """
    agent = AgentColumns.gather(agents, cases.agent_index)
    has_agent = agent.has_agent
    sodium = cases.sodium
    rise = figures.projected_rise
    # Fluids that lower sodium (5 % glucose in hypernatraemia) are what a high sodium
    # calls for: the ceilings judge orders that raise sodium or osmolality.
    with np.errstate(invalid="ignore"):
        not_lowering = ~(rise < 0)  # NaN compares False: judged
    applies, _, refuse = rise_limits_in_force(limits, sodium, high_risk(sodium, cases.potassium))
    peripheral = np.asarray(line) == "peripheral"
    lowering = has_agent & ~not_lowering
    patient = PatientColumns.of(cases, figures, agent, limits, settings or SettingsTable(), lowering)
    rise_applies = has_agent & applies
    batch = Batch(
        limits=limits,
        agent=agent,
        figures=figures,
        line=line,
        sodium=sodium,
        osmolality=judged_osmolality(cases.osmolality, figures.calculated_osmolality),
        projected_sodium=figures.projected_sodium,
        rise=rise,
        fall=-rise,
        osmolar_gap=figures.osmolar_gap,
        agent_osmolarity=agent.osmolarity_mosm_l,
        rise_without_losses=figures.projected_sodium_without_losses - sodium,
        rise_high=figures.projected_sodium_high - sodium,
        sodium_age_h=(
            np.full(np.shape(sodium), np.nan) if cases.sodium_age_h is None else np.asarray(cases.sodium_age_h)
        ),
        always=np.ones(np.shape(has_agent), dtype=bool),
        has_agent=has_agent,
        not_lowering=not_lowering,
        order_not_lowering=has_agent & not_lowering,
        lowering=lowering,
        mannitol=agent.is_mannitol,
        mannitol_or_no_order=agent.is_mannitol | ~has_agent,
        # The 24 h rise limits come from correcting chronic hyponatraemia: they protect a
        # brain adapted to a low sodium. Osmotherapy from a normal sodium is judged by the
        # sodium ceilings instead.
        rise_applies=rise_applies,
        rise_refuse=refuse,
        central_only_peripheral=peripheral & agent.central_only,
        other_peripheral=peripheral & ~agent.central_only,
        patient=patient,
        aquaresis=rise_applies & dilute_urine(cases),
        # The point past the refuse limit is refused by sodium-rise-24h: the range adds nothing then.
        range_judged=rise_applies & (threshold(rise, refuse, None) == 0),
    )
    return [rule.judge(batch) for rule in RULES]


def rise_limits_in_force(
    limits: Limits, lowest_sodium: np.ndarray, at_high_risk: np.ndarray
) -> tuple[np.ndarray, float, np.ndarray]:
    """`judging.rise_limits` with a formulary's limits: whether they apply, the warn and the refuse in force."""
    return rise_limits(
        limits.sodium_rise_applies_below,
        limits.sodium_rise_24h_warn,
        limits.sodium_rise_24h_refuse,
        limits.sodium_rise_24h_high_risk_refuse,
        lowest_sodium,
        at_high_risk,
    )


Kind = Literal["above", "below", "missing", "flag"]


@dataclass(frozen=True)
class Rule:
    """One row of the rule table.

    `warn` and `refuse` are a limit's name in the formulary, a function of the
    batch (a per-case limit), or None (no such limit).  `kind` says how the rule
    fires: above or below its limits, when the figure is missing, or whenever
    it applies (`flag`, at the refuse level).  `describe` words the message from
    (value, limit, severity), a template or a function (`Words`); the default,
    `CROSSED`, says the figure crossed the limit.
    """

    code: str
    figure: str
    what: str
    unit: str
    warn: str | LimitOf | None
    refuse: str | LimitOf | None
    applies: str
    kind: Kind = "above"
    describe: Words = CROSSED
    flags: Severity = "refuse"  # the severity of a `flag` rule
    detail: Detail | None = None  # words from more of the case, after the message

    def named_limits(self, limits: Limits) -> tuple[float | None, float | None]:
        """(warn, refuse) of a rule whose limits are formulary names, for judging a single figure."""
        assert not callable(self.warn) and not callable(self.refuse), f"{self.code} has per-case limits"
        return (
            None if self.warn is None else getattr(limits, self.warn),
            None if self.refuse is None else getattr(limits, self.refuse),
        )

    def limit(self, which: str | LimitOf | None, batch: Batch) -> np.ndarray | float:
        if which is None:
            return np.inf if self.kind == "above" else -np.inf
        if isinstance(which, str):
            value = getattr(batch.limits, which)
            return np.nan if value is None else float(value)
        return which(batch)

    def words(self) -> Describe:
        """The message of a finding from (value, limit, severity): the rule's function, or its template filled."""
        return self._words

    @cached_property
    def _words(self) -> Describe:  # made once per rule, not on every check
        if callable(self.describe):
            return self.describe
        template = self.describe
        fixed = {"what": self.what, "unit": self.unit, "side": "below" if self.kind == "below" else "above"}
        with_shown = "{shown" in template  # `shown` costs a rounding: only where the words print it

        def describe(value: float, limit: float, severity: str) -> str:
            text = shown(value, limit) if with_shown else ""
            return template.format(value=value, limit=limit, severity=severity, shown=text, **fixed)

        return describe

    def judge(self, batch: Batch) -> RuleOutcome:
        value = batch.figure(self.figure)
        applies = batch.condition(self.applies)
        warn, refuse = self.limit(self.warn, batch), self.limit(self.refuse, batch)
        if self.kind == "above":
            severity = threshold(value, warn, refuse)
        elif self.kind == "below":
            severity = threshold_below(value, warn, refuse)
        elif self.kind == "missing":
            severity = np.where(np.isnan(value), WARN, NONE)
        else:
            severity = np.full(np.shape(value), REFUSE if self.flags == "refuse" else WARN)
        severity = np.where(applies, severity, NONE).astype(np.int8)
        limit = np.where(severity == REFUSE, refuse, warn)
        if self.kind in ("missing", "flag") and self.warn is None:
            limit = np.full(np.shape(value), np.nan)
        detail = self.detail
        extra = None if detail is None else (lambda row: detail(batch.patient, row))
        limit = np.asarray(limit, dtype=float)
        return RuleOutcome(self.code, severity, value, limit, self.unit, self.words(), extra, self.shows_value)

    @property
    def shows_value(self) -> bool:
        """Whether the words show the judged value only through `shown` (so the audit words each shown value once).

        A template does when it never formats `{value}` itself; a function when it is marked `@_shows`.
        """
        if callable(self.describe):
            return self.describe in _SHOWN_ONLY
        return "{value" not in self.describe


@_shows
def _negative_gap(value: float, limit: float, _severity: str) -> str:
    return (
        f"osmolar gap {shown(value, limit)} mOsm/kg: measured osmolality is more than {-limit:g} below the "
        "calculated one; check the units of glucose and urea, and the sample"
    )


_OSMOLALITY_UNKNOWN = (
    "mannitol ordered with no serum osmolality (measured, or sodium, glucose and urea to calculate it): "
    "the osmolality hold cannot be checked"
)
_CENTRAL = "this agent ({value:.0f} mOsm/L) is for a central line only and is ordered peripheral"
_TOO_FAST = "rate {shown} mL/h is faster than the agent's maximum of {limit:g} mL/h"


def _agent_limit(pick: Callable[[Agent], float | None]) -> LimitOf:
    """A per-case limit from each case's agent (NaN where the agent sets none, or there is no agent)."""

    def of(batch: Batch) -> np.ndarray:
        return batch.agent.column(pick)

    return of


def _dose_limit(which: str, kind: DoseKind) -> LimitOf:
    """The agent's per-kg `dose_warn`/`dose_refuse` where it is written in `kind`, else no limit."""

    def pick(agent: Agent) -> float | None:
        limit = getattr(agent, which)
        return limit.value if limit is not None and limit.kind == kind else None

    return _agent_limit(pick)


_DOSE_WORDS = "{what} {value:.2f} {unit} is above the agent's {severity} limit of {limit:g} {unit}"


def _dose_rule(figure: str, what: str, kind: DoseKind) -> Rule:
    return Rule(
        "dose-per-kg",
        figure,
        what,
        kind,
        _dose_limit("dose_warn", kind),
        _dose_limit("dose_refuse", kind),
        "has_agent",
        describe=_DOSE_WORDS,
    )


def dilute_urine(cases: Cases) -> np.ndarray:
    """Urine given whose Na + K is below the serum sodium: passing it leaves sodium behind (aquaresis)."""
    urine = UrineColumns.of(cases)
    with np.errstate(invalid="ignore"):
        return urine.given & (urine.volume_l > 0) & (urine.cations_mmol_l < cases.sodium)


def _aquaresis_limit(batch: Batch) -> np.ndarray:
    """The first rise limit in force that the order without the urine's losses stays within (NaN: none)."""
    warn = batch.limits.sodium_rise_24h_warn
    warn_limit = np.nan if warn is None else float(warn)
    without = batch.rise_without_losses
    within_warn = threshold(without, warn_limit, None) == 0
    within_refuse = threshold(without, batch.rise_refuse, None) == 0
    return np.where(within_warn & ~np.isnan(warn_limit), warn_limit, np.where(within_refuse, batch.rise_refuse, np.nan))


_AQUARESIS = (
    "urine more dilute than serum (Na + K below the serum sodium: aquaresis) takes the projected rise to "
    "{shown} mmol/L, past the limit of {limit:g} mmol/L that the order alone stays within: "
    "watch the urine output and re-measure sodium early"
)
_RANGE_HIGH = (
    "the high end of the projected rise, {shown} mmol/L, is above the refuse limit of "
    "{limit:g} mmol/L: measured rises often outrun the projection (Mohmand 2007); re-measure sodium early"
)
_SODIUM_TOO_OLD = (
    "the sodium was drawn {shown} h before this check, more than the {limit:g} h limit: re-measure before dosing"
)


def _negative_gap_limit(batch: Batch) -> float:
    allowed = batch.limits.osmolar_gap_negative_warn
    return np.nan if allowed is None else -float(allowed)


#: The rule table, in the order findings are listed (refusals first, then this order).
RULES: tuple[Rule, ...] = (
    Rule("sodium-high", "sodium", "serum sodium", "mmol/L", "sodium_warn", "sodium_refuse", "not_lowering"),
    Rule(
        "projected-sodium-high",
        "projected_sodium",
        "projected sodium",
        "mmol/L",
        "sodium_warn",
        "sodium_refuse",
        "order_not_lowering",
    ),
    Rule(
        "projected-sodium-low",
        "projected_sodium",
        "projected sodium",
        "mmol/L",
        "sodium_low_warn",
        "sodium_low_refuse",
        "lowering",
        kind="below",
    ),
    # Hinson 2013: hold mannitol above 320. For hypertonic saline the sodium ceilings govern
    # (urea and glucose would otherwise refuse a saline bolus to a patient inside the 145-160
    # sodium target).
    Rule(
        "osmolality-high",
        "osmolality",
        "serum osmolality",
        "mOsm/kg",
        "osmolality_warn",
        "osmolality_refuse",
        "mannitol_or_no_order",
    ),
    Rule(
        "osmolar-gap-high",
        "osmolar_gap",
        "osmolar gap",
        "mOsm/kg",
        "osmolar_gap_warn",
        "osmolar_gap_refuse",
        "mannitol",
    ),
    Rule(
        "osmolar-gap-negative",
        "osmolar_gap",
        "osmolar gap",
        "mOsm/kg",
        _negative_gap_limit,
        None,
        "always",
        kind="below",
        describe=_negative_gap,
    ),
    Rule(
        "osmolality-unknown",
        "osmolality",
        "serum osmolality",
        "mOsm/kg",
        None,
        None,
        "mannitol",
        "missing",
        _OSMOLALITY_UNKNOWN,
    ),
    Rule(
        "sodium-rise-24h",
        "rise",
        "projected sodium rise from this order",
        "mmol/L",
        "sodium_rise_24h_warn",
        lambda batch: batch.rise_refuse,
        "rise_applies",
    ),
    Rule(
        "aquaresis-rise",
        "rise",
        "projected sodium rise with the urine's losses",
        "mmol/L",
        _aquaresis_limit,
        None,
        "aquaresis",
        describe=_AQUARESIS,
    ),
    Rule(
        "rise-range-high",
        "rise_high",
        "high end of the projected sodium rise",
        "mmol/L",
        lambda batch: batch.rise_refuse,
        None,
        "range_judged",
        describe=_RANGE_HIGH,
    ),
    Rule(
        "sodium-fall-24h",
        "fall",
        "projected sodium fall from this order",
        "mmol/L",
        "sodium_fall_24h_warn",
        "sodium_fall_24h_refuse",
        "has_agent",
    ),
    _dose_rule("solute_g_per_kg", "dose", "g/kg"),
    _dose_rule("volume_ml_per_kg", "volume", "mL/kg"),
    _dose_rule("sodium_mmol_per_kg", "sodium dose", "mmol/kg"),
    _dose_rule("osmoles_mosm_per_kg", "osmolar dose", "mOsm/kg"),
    Rule(
        "rate-too-fast",
        "rate_ml_h",
        "rate",
        "mL/h",
        None,
        _agent_limit(lambda a: a.max_rate_ml_h),
        "has_agent",
        describe=_TOO_FAST,
    ),
    Rule(
        "central-line-only",
        "agent_osmolarity",
        "infusate osmolarity",
        "mOsm/L",
        None,
        None,
        "central_only_peripheral",
        "flag",
        _CENTRAL,
    ),
    Rule(
        "peripheral-osmolarity",
        "agent_osmolarity",
        "infusate osmolarity on a peripheral line",
        "mOsm/L",
        "peripheral_osmolarity_warn",
        None,
        "other_peripheral",
    ),
    # --- the patient and the labs themselves, with or without an order (`check.patient_rules`) ---
    Rule(
        "weight-low-for-age",
        "weight_kg",
        "weight",
        "kg",
        None,
        lambda batch: batch.patient.lightest_for_age,
        "always",
        kind="below",
        describe=p.WEIGHT_LOW,
        detail=p.weight_detail,
    ),
    Rule(
        "weight-high-for-age",
        "weight_kg",
        "weight",
        "kg",
        None,
        lambda batch: batch.patient.heaviest_for_age,
        "always",
        describe=p.WEIGHT_HIGH,
        detail=p.weight_detail,
    ),
    Rule(
        "hyponatraemia-profound",
        "sodium",
        "serum sodium",
        "mmol/L",
        "hyponatraemia_profound_warn",
        None,
        "always",
        kind="below",
        describe=p.PROFOUND,
    ),
    Rule(
        "hyponatraemia-moderate",
        "sodium",
        "serum sodium",
        "mmol/L",
        "hyponatraemia_moderate_warn",
        None,
        "not_profound",
        kind="below",
        describe=p.MODERATE,
    ),
    Rule(
        "hypokalaemia-severe",
        "potassium",
        "serum potassium",
        "mmol/L",
        "hypokalaemia_severe_warn",
        None,
        "always",
        kind="below",
        describe=p.HYPOKALAEMIA,
    ),
    Rule(
        "osmolar-gap-unexplained",
        "osmolar_gap",
        "osmolar gap",
        "mOsm/kg",
        "osmolar_gap_unexplained_warn",
        None,
        "not_mannitol",
        describe=p.GAP_UNEXPLAINED,
    ),
    # --- the order against the patient -------------------------------------------------------
    Rule(
        "hyponatraemia-not-hypotonic",
        "effective_osmolality",
        "effective osmolality",
        "mOsm/kg",
        "hypotonic_effective_osmolality_below",
        None,
        "raising_not_hypotonic",
        kind="flag",
        describe=p.NOT_HYPOTONIC,
        flags="warn",
    ),
    Rule(
        "osmolar-rate-high",
        "osmoles_mosm_per_kg_min",
        "osmolar rate",
        "mOsm/kg/min",
        "osmolar_rate_warn",
        "osmolar_rate_refuse",
        "default_rate_applies",
        describe=p.OSMOLAR_RATE,
    ),
    Rule(
        "body-water-obesity",
        "bmi",
        "body mass index",
        "kg/m^2",
        "bmi_obese_from",
        None,
        "obese_on_fraction",
        kind="flag",
        describe=p.OBESITY,
        flags="warn",
        detail=p.obesity_detail,
    ),
    Rule(
        "adult-only-agent",
        "age_years",
        "age",
        "years",
        None,
        None,
        "adult_only_for_child",
        kind="flag",
        describe=p.ADULT_ONLY,
    ),
    Rule(
        "hypotonic-raised-icp",
        "rise",
        "projected sodium change",
        "mmol/L",
        None,
        None,
        "lowering_with_raised_icp",
        kind="flag",
        describe=p.HYPOTONIC_RAISED_ICP,
        flags="warn",
    ),
    # Judged only where a labs file gave the sodium's effective time (typed labs carry none).
    Rule(
        "sodium-too-old",
        "sodium_age_h",
        "sodium age",
        "h",
        "lab_max_age",
        None,
        "always",
        describe=_SODIUM_TOO_OLD,
    ),
)

#: Each rule by its code; "dose-per-kg" has one row per dose unit, the first here.
RULES_BY_CODE: dict[str, Rule] = {}
for _rule in RULES:
    RULES_BY_CODE.setdefault(_rule.code, _rule)
