"""Helpers for the verification tests: typed orders in, records out, at a fixed time."""

from __future__ import annotations

from datetime import datetime, timedelta, timezone

from osmodose.case.inputs import parse_check_request
from osmodose.formulary import Formulary
from osmodose.verify import VerificationRecord, make_acceptance, parse_order, verify_order

#: A fixed clock (UTC+01:00) so records are reproducible.
NOW = datetime(2026, 12, 2, 8, 30, 0, tzinfo=timezone(timedelta(hours=1)))

#: An invented adult man: 70 kg, 45 y, TBW 0.6 x 70 = 42 L (Adrogue-Madias fraction).
MAN_70 = {"weight": "70", "age": "45", "sex": "male", "sodium": "141", "glucose": "6", "urea": "5"}


def verify(
    formulary: Formulary,
    patient: dict[str, object] | None = None,
    accept: dict[str, str] | None = None,
    initials: str = "AB",
    **order: object,
) -> VerificationRecord:
    """Verify an order typed as CLI-style keys (stated_dose -> stated-dose)."""
    request = parse_check_request(dict(patient or MAN_70))
    fields = {k.replace("_", "-"): v for k, v in order.items()}
    acceptances = [make_acceptance(code, reason) for code, reason in (accept or {}).items()]
    return verify_order(request, parse_order(fields), formulary, acceptances, initials, now=NOW)


def codes(record: VerificationRecord) -> dict[str, str]:
    """code -> severity of every check finding and discrepancy."""
    found = {f.code: f.severity for f in record.result.findings}
    found.update({d.code: d.severity for d in record.discrepancies})
    return found


def discrepancy(record: VerificationRecord, code: str):  # type: ignore[no-untyped-def]
    return next(d for d in record.discrepancies if d.code == code)
