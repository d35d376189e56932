"""The caution every output ends with, in one place that imports nothing.

Kept apart from the result models (`check.results` re-exports it) so the app
can show it from its first frame, before pydantic and the engine have loaded.
"""

from __future__ import annotations

CAUTION = (
    "Decision support only: verify every figure against local protocol "
    "and licensed clinical judgement before giving anything."
)
