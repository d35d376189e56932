"""`course.judging.past_limit`: one figure against its (warn, refuse) limits, as the check judges it.

The limits here are the default sodium ceilings of `formulary.limits`, warn 155 mmol/L (common
practice) and refuse 160 mmol/L (US Joint Trauma System guideline: hold hyperosmolar infusions above
160), and the default low limits, warn 130 and refuse 125 mmol/L (moderate and profound
hyponatraemia, Spasovski G et al. Eur J Endocrinol 2014, from memory).
"""

from __future__ import annotations

from datetime import UTC, datetime

import pytest

from osmodose.course.judging import past_limit

AT = datetime(2026, 12, 1, 8, 0, tzinfo=UTC)
CEILINGS = (155.0, 160.0)
FLOORS = (130.0, 125.0)


def _words(severity: str, limit: float) -> str:
    return f"sodium is past the {severity} limit of {limit:g} mmol/L"


@pytest.mark.parametrize(
    ("sodium", "severity", "limit"),
    [
        (154.9, None, None),
        (155.0, None, None),  # at the limit is not above it
        (155.0 * (1 + 1e-12), None, None),  # within rounding of it neither (judging.LIMIT_RELATIVE_TOLERANCE)
        (155.1, "warn", 155.0),
        (160.0, "warn", 155.0),
        (160.1, "refuse", 160.0),
    ],
)
def test_a_figure_above_a_limit_is_a_finding_with_the_limit_it_crossed(sodium, severity, limit) -> None:
    found = past_limit("projected-sodium-high", sodium, CEILINGS, "mmol/L", AT, _words)
    assert [(f.severity, f.limit, f.value) for f in found] == ([(severity, limit, sodium)] if severity else [])
    if severity:
        assert found[0].message == f"sodium is past the {severity} limit of {limit:g} mmol/L"
        assert (found[0].code, found[0].unit, found[0].time) == ("projected-sodium-high", "mmol/L", AT)


@pytest.mark.parametrize(("sodium", "severity"), [(130.0, None), (129.9, "warn"), (124.9, "refuse")])
def test_below_judges_a_floor(sodium: float, severity: str | None) -> None:
    found = past_limit("projected-sodium-low", sodium, FLOORS, "mmol/L", AT, _words, below=True)
    assert [f.severity for f in found] == ([severity] if severity else [])


def test_limits_the_unit_does_not_set_never_fire_and_words_are_made_only_for_a_finding() -> None:
    def never(_severity: str, _limit: float) -> str:
        raise AssertionError("worded without a finding")

    assert past_limit("projected-sodium-high", 199.0, (None, None), "mmol/L", AT, never) == []
    assert past_limit("projected-sodium-high", float("nan"), CEILINGS, "mmol/L", AT, never) == []
    assert past_limit("projected-sodium-high", 150.0, CEILINGS, "mmol/L", AT, never) == []
