"""Sliding windows: the same answers as comparing every pair of entries, in memory linear in the entries."""

from __future__ import annotations

import tracemalloc

import numpy as np
from hypothesis import given
from hypothesis import strategies as st

from osmodose.course.findings import course_findings
from osmodose.course.timeline import SECONDS_PER_HOUR, WINDOW_H, build_timeline, lookback, window_change
from osmodose.course.windows import largest_rise_across, window_bounds, window_sums
from tests.course_build import dose, episode, lab

# Times on a coarse grid (quarter hours) so that equal times and windows ending exactly 24 h apart occur often.
times = st.lists(st.integers(0, 400), min_size=0, max_size=40).map(lambda q: np.sort(np.asarray(q) * 900.0))


def _values(n: int, draw: st.DrawFn) -> np.ndarray:
    return np.asarray(draw(st.lists(st.integers(110, 170), min_size=n, max_size=n)), dtype=float)


@st.composite
def samples(draw: st.DrawFn) -> tuple[np.ndarray, np.ndarray]:
    t = draw(times)
    return t, _values(len(t), draw)


def pairwise_window_change(t: np.ndarray, x: np.ndarray, hours: float = WINDOW_H):  # type: ignore[no-untyped-def]
    """The former labs x labs implementation, kept here as the reference."""
    dt = t[:, None] - t[None, :]
    inside = (dt >= 0) & (dt <= hours * SECONDS_PER_HOUR)
    low = np.where(inside, x[None, :], np.inf)
    high = np.where(inside, x[None, :], -np.inf)
    earlier = np.any(inside & ~np.eye(len(x), dtype=bool), axis=1)
    low_index, high_index = np.argmin(low, axis=1), np.argmax(high, axis=1)
    return (
        np.where(earlier, x - x[low_index], np.nan),
        low_index,
        np.where(earlier, x[high_index] - x, np.nan),
        high_index,
    )


@given(samples())
def test_window_change_matches_every_pair(sample: tuple[np.ndarray, np.ndarray]) -> None:
    t, x = sample
    if not len(t):
        return
    got = window_change(t, x)
    rise, low_index, fall, high_index = pairwise_window_change(t, x)
    np.testing.assert_array_equal(got.rise, rise)
    np.testing.assert_array_equal(got.low_index, low_index)
    np.testing.assert_array_equal(got.fall, fall)
    np.testing.assert_array_equal(got.high_index, high_index)


@given(samples(), st.integers(0, 200), st.integers(0, 200))
def test_lookback_matches_every_pair(sample: tuple[np.ndarray, np.ndarray], back: int, width: int) -> None:
    t, sodium = sample
    potassium = np.where(sodium > 150, 3.2, 4.0)
    t_to = t + width * 900.0
    t_from = t_to - back * 900.0
    got = lookback(t, sodium, potassium, t_from, t_to)
    inside = (t[None, :] >= t_from[:, None]) & (t[None, :] <= t_to[:, None])
    risky = (sodium <= 105) | (potassium < 3.5)
    lowest = np.min(np.where(inside, sodium[None, :], np.inf), axis=1, initial=np.inf)
    np.testing.assert_array_equal(got.lowest_sodium, lowest)
    np.testing.assert_array_equal(got.high_risk, np.any(inside & risky[None, :], axis=1))


@given(samples())
def test_window_sums_match_every_pair(sample: tuple[np.ndarray, np.ndarray]) -> None:
    t, grams = sample
    grams = grams / 7.0  # not whole numbers: rounding must not drift as the window slides
    lo, hi = window_bounds(t, t - WINDOW_H * SECONDS_PER_HOUR, t)
    dt = t[:, None] - t[None, :]
    inside = (dt >= 0) & (dt <= WINDOW_H * SECONDS_PER_HOUR)
    expected = [float(np.sum(np.asarray(sorted(grams[row]), dtype=np.longdouble))) for row in inside]
    np.testing.assert_allclose(window_sums(grams, lo, hi), expected, rtol=1e-15, atol=0)


@given(samples(), st.lists(st.integers(0, 400), max_size=10))
def test_largest_rise_across_an_event_matches_every_pair(sample: tuple[np.ndarray, np.ndarray], events) -> None:  # type: ignore[no-untyped-def]
    t, gap = sample
    starts = np.sort(np.asarray(events, dtype=float) * 900.0)
    value, j, i = largest_rise_across(t, gap, starts)
    if not len(t):
        assert value == float("-inf")
        return
    before = np.searchsorted(starts, t[:, None], side="left") - np.searchsorted(starts, t[None, :], side="left")
    rise = np.where(before > 0, gap[:, None] - gap[None, :], -np.inf)  # [j, i]: an event in [t_i, t_j)
    jj, ii = np.unravel_index(int(np.argmax(rise)), rise.shape)
    assert value == float(rise[jj, ii])
    if np.isfinite(value):
        assert (j, i) == (int(jj), int(ii))


def test_five_thousand_labs_take_megabytes_not_a_labs_by_labs_matrix(demo) -> None:
    # Pairwise, 5,000 labs need several 5,000 x 5,000 arrays (200 MB each in float64); sliding, a few arrays of 5,000.
    n = 5000
    labs = [
        lab(k * 0.25, 130 + k % 20, osmolality_mosm_kg=280 + k % 30, glucose_mmol_l=6, urea_mmol_l=5) for k in range(n)
    ]
    doses = [dose(k * 0.5 + 0.1, "mannitol-20" if k % 2 else "nacl-3", 100) for k in range(n // 2)]
    ep = episode(labs=labs, doses=doses)
    tracemalloc.start()
    try:
        timeline = build_timeline(ep, demo)
        found = course_findings(timeline, demo.limits)
        _now, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert {f.code for f in found} >= {"sodium-rise-24h", "osmolar-gap-rising"}
    assert peak < 20_000_000, f"peak {peak / 1e6:.0f} MB"
