"""How an ordered volume is drawn from the bag and vial sizes a unit keeps."""

from __future__ import annotations

import math
from collections.abc import Sequence

from osmodose.check.results import PresentationFit

#: A volume this close above a whole number of containers still counts as that
#: number (0.5 mL: below what a bag is graduated in).
ROUNDING_ML = 0.5


def fit_presentations(volume_ml: float, sizes_ml: Sequence[float]) -> list[PresentationFit]:
    """For each size: how many containers make up the volume and what is discarded.

    Each is an alternative (the whole volume from that size alone), listed best
    first: the least discarded, then the fewest containers, then the smaller size.
    """
    fits = []
    for size in sorted(set(sizes_ml)):
        containers = max(1, math.ceil((volume_ml - ROUNDING_ML) / size))
        discard = max(0.0, containers * size - volume_ml)
        fits.append(PresentationFit(size_ml=size, containers=containers, discard_ml=round(discard, 1)))
    return sorted(fits, key=lambda fit: (fit.discard_ml, fit.containers, fit.size_ml))


def matches_presentation(volume_ml: float, sizes_ml: Sequence[float]) -> bool:
    """Whether the volume is a whole number of one of the sizes (within rounding)."""
    return any(
        abs(volume_ml - round(volume_ml / s) * s) <= ROUNDING_ML and volume_ml >= s - ROUNDING_ML for s in sizes_ml
    )
