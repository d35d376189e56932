"""Order verification: recompute an order as written, decide, and keep a tamper-evident record.

Front ends call `parse_order` and `verify_order`, then `append_record`; see
docs/verify.md.
"""

from __future__ import annotations

from osmodose.verify.appending import append_record
from osmodose.verify.decision import Acceptance, Decision, make_acceptance, parse_acceptance, parse_initials
from osmodose.verify.discrepancies import Discrepancy
from osmodose.verify.log_read import read_log, verify_chain, walk_log
from osmodose.verify.order import Order, parse_order
from osmodose.verify.paths import default_log_path, log_path
from osmodose.verify.record import VerificationRecord, verify_order

__all__ = [
    "Acceptance",
    "Decision",
    "Discrepancy",
    "Order",
    "VerificationRecord",
    "append_record",
    "default_log_path",
    "log_path",
    "make_acceptance",
    "parse_acceptance",
    "parse_initials",
    "parse_order",
    "read_log",
    "verify_chain",
    "verify_order",
    "walk_log",
]
