"""Sliding windows over time-ordered samples, in memory linear in their number.

The course rules ask, for every lab, "the lowest (highest) sodium within the
24 h ending here", "any high-risk lab in the 48 h before", "mannitol started
within the 24 h up to this dose", "the largest rise of the osmolar gap across
a mannitol dose".  Comparing every sample with every other one answers that
with labs x labs matrices: 40,000 labs asked for a 40,000 x 40,000 array.
Here each window is found with `searchsorted` on the sorted times (a window
is a slice), and its minimum or maximum with a monotonic queue as the window
slides, so memory is a few arrays of the samples' length and time is linear.

Every function takes times in ascending order (episode entries are kept in
time order) and returns what the pairwise form returned, ties included: the
earliest sample wins among equal minima or maxima.
"""

from __future__ import annotations

from collections import deque
from fractions import Fraction

import numpy as np


def window_bounds(t: np.ndarray, t_from: np.ndarray, t_to: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """For each window [t_from, t_to] (both ends included): the slice [lo, hi) of `t` inside it."""
    lo = np.searchsorted(t, np.asarray(t_from, dtype=float), side="left")
    hi = np.searchsorted(t, np.asarray(t_to, dtype=float), side="right")
    return lo, np.maximum(hi, lo)


def _monotone(lo: np.ndarray, hi: np.ndarray) -> bool:
    return bool(np.all(np.diff(lo) >= 0) and np.all(np.diff(hi) >= 0))


def sliding_extreme(x: np.ndarray, lo: np.ndarray, hi: np.ndarray, largest: bool = False) -> np.ndarray:
    """Index of the smallest (or `largest`) x in each slice [lo, hi): the earliest on ties; -1 for an empty slice.

    Slices that only ever move forward (both ends non-decreasing, as for
    windows ending at each sample) are done in one pass with a monotonic
    queue; any other set of slices one by one.
    """
    n = len(lo)
    out = np.full(n, -1, dtype=int)
    values = np.asarray(x, dtype=float)
    if not _monotone(lo, hi):
        for k in range(n):
            if hi[k] > lo[k]:
                part = values[lo[k] : hi[k]]
                out[k] = int(lo[k] + (np.argmax(part) if largest else np.argmin(part)))
        return out
    sign = -1.0 if largest else 1.0
    keyed = (sign * values).tolist()
    queue: deque[int] = deque()  # indices whose keys increase from front to back; the front is the extreme
    pushed = 0
    for k in range(n):
        end, start = int(hi[k]), int(lo[k])
        while pushed < end:
            while queue and keyed[queue[-1]] > keyed[pushed]:  # strictly: an earlier equal value stays first
                queue.pop()
            queue.append(pushed)
            pushed += 1
        while queue and queue[0] < start:
            queue.popleft()
        if end > start and queue:
            out[k] = queue[0]
    return out


def window_sums(x: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """The sum of x over each slice [lo, hi), exact (fractions), rounded once: no drift as the window slides."""
    values = [Fraction(v) for v in np.asarray(x, dtype=float).tolist()]
    out = np.zeros(len(lo), dtype=float)
    if not _monotone(lo, hi):
        for k in range(len(lo)):
            out[k] = float(sum(values[lo[k] : hi[k]], Fraction(0)))
        return out
    total, start, end = Fraction(0), 0, 0
    for k in range(len(lo)):
        while end < hi[k]:
            total += values[end]
            end += 1
        while start < lo[k]:
            total -= values[start]
            start += 1
        out[k] = float(total)
    return out


def window_any(flags: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """Whether any flag is set in each slice [lo, hi) (prefix counts: vectorised, linear)."""
    counts = np.concatenate(([0], np.cumsum(np.asarray(flags, dtype=int))))
    return (counts[hi] - counts[lo]) > 0


def largest_rise_across(t: np.ndarray, x: np.ndarray, events: np.ndarray) -> tuple[float, int, int]:
    """(rise, j, i): the largest x[j] - x[i] over pairs with an event at or after t[i] and before t[j].

    -inf (and 0, 0) when no pair has an event between it.  For each later
    sample j the earlier samples allowed are those up to the last event
    before t[j]: a prefix, whose minimum is kept as it grows.  Ties go to the
    earliest j, then the earliest i, as a row-major argmax over the pairs would.
    """
    n = len(t)
    starts = np.sort(np.asarray(events, dtype=float))
    if n == 0 or not len(starts):
        return float("-inf"), 0, 0
    before = np.searchsorted(starts, t, side="left") - 1  # the last event strictly before t[j]
    has_event = before >= 0
    last_event = np.where(has_event, starts[np.maximum(before, 0)], -np.inf)
    cut = np.where(has_event, np.searchsorted(t, last_event, side="right"), 0)  # allowed i: [0, cut)
    running_min = np.minimum.accumulate(x)
    new_min = np.concatenate(([True], x[1:] < running_min[:-1]))
    argmin_prefix = np.maximum.accumulate(np.where(new_min, np.arange(n), 0))
    best_i = argmin_prefix[np.maximum(cut - 1, 0)]
    rise = np.where(cut > 0, x - x[best_i], -np.inf)
    j = int(np.argmax(rise))
    if not np.isfinite(rise[j]):
        return float("-inf"), 0, 0
    return float(rise[j]), j, int(best_i[j])
