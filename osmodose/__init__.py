"""osmodose: hyperosmolar therapy and sodium fluid dosing support for intensive care.

Decision support only: every figure must be verified against local protocol
and licensed clinical judgement.
"""

from __future__ import annotations

__version__ = "0.1.0"
