"""One verification: recompute an order, find its discrepancies, decide, and record it all.

`verify_order` is the one entry point for every front end (the command
line, the app's verification screen): patient and labs in, the order as
written in, the verifier's acceptances and initials in, a frozen
`VerificationRecord` out.  The record holds what was typed, what it was read
as, every figure of the recomputation, every finding and discrepancy, the
decision with its reasons, who decided, when (with the time zone), and which
formulary file and program version did the arithmetic.  It is what the log
keeps and what the chart or a printout shows.
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import datetime
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict

from osmodose import __version__
from osmodose.case.inputs import CheckRequest, DoseRequest
from osmodose.check.report import render_text as render_check
from osmodose.check.results import CAUTION, CheckResult, FormularyRef
from osmodose.check.run import run_check
from osmodose.formulary.model import Formulary
from osmodose.verify.decision import Acceptance, Decision, Outcome, decide, parse_initials
from osmodose.verify.discrepancies import Discrepancy, find_discrepancies
from osmodose.verify.order import Order

OUTCOME_MARK: dict[str, str] = {
    "released": "[RELEASED]",
    "released-with-accepted-warnings": "[RELEASED WITH ACCEPTED WARNINGS]",
    "held": "[HELD]",
    "refused": "[REFUSED]",
}
OUTCOME_WORDS: dict[str, str] = {
    "released": "no limit crossed and nothing contradicts the order",
    "released-with-accepted-warnings": "every warning accepted with a reason",
    "held": "a warning is not accepted: not released until it is, or the order changes",
    "refused": "a hard limit is crossed or the order contradicts itself: do not give as written",
}
_SEVERITY_MARK = {"warn": "[WARN]", "refuse": "[REFUSE]"}


class VerificationRecord(BaseModel):
    """Everything one verification saw and decided; what the log stores."""

    model_config = ConfigDict(frozen=True)

    kind: Literal["osmodose verification"] = "osmodose verification"
    record_version: Literal[1] = 1
    timestamp: str
    """ISO 8601 with the time zone offset, e.g. 2026-12-02T07:10:00+01:00."""
    program_version: str
    formulary: FormularyRef
    entered: dict[str, str]
    """Every field as typed: patient, labs, order and initials."""
    request: CheckRequest
    """Patient and labs as read (canonical units), with the order's volume as the checked dose."""
    order: Order
    """The order as written, as read (canonical units)."""
    result: CheckResult
    """Every figure and finding of the recomputation from the volume."""
    discrepancies: list[Discrepancy]
    decision: Decision
    caution: str = CAUTION

    @property
    def outcome(self) -> Outcome:
        return self.decision.outcome

    def to_json(self) -> dict[str, Any]:
        """The public JSON object (plain types only)."""
        return self.model_dump(mode="json")

    def render_text(self) -> str:
        """The readable record, for the chart or a printout; ends with the caution line."""
        return render_record(self)


def verify_order(
    request: CheckRequest,
    order: Order,
    formulary: Formulary,
    acceptances: Sequence[Acceptance] = (),
    initials: str = "",
    now: datetime | None = None,
) -> VerificationRecord:
    """Recompute `order` for the patient and labs of `request`, judge it and decide.

    `request` carries the patient and labs only (from `parse_check_request`
    without order fields); the order as written supplies the agent, the
    volume, the duration and the line.  Raises InputError for anything the
    user typed that cannot be used (unknown agent, a stated dose in grams of
    a mixed fluid, an acceptance naming no finding, missing initials).
    `now` must carry a time zone; it defaults to the local time.
    """
    if request.dose is not None or request.line is not None:
        raise ValueError("verify_order takes the order separately: pass a request without a dose or a line")
    initials_text = parse_initials(initials)
    stamp = now if now is not None else datetime.now().astimezone()
    if stamp.tzinfo is None or stamp.utcoffset() is None:
        raise ValueError("verify_order needs a time zone on `now`")
    agent = formulary.agent(order.agent_id)
    dose = DoseRequest(
        agent_id=agent.id,
        mode="volume",
        amount=order.volume_ml,
        unit="mL",
        duration_min=order.duration_for_check,
        text=order.entered.get("volume", f"{order.volume_ml:g}"),
    )
    checked = request.model_copy(update={"dose": dose, "line": order.line})
    result = run_check(checked, formulary)
    discrepancies = find_discrepancies(order, result, agent, formulary.limits)
    decision = decide([*result.findings, *discrepancies], acceptances, initials_text)
    entered = {**request.entered, **order.entered, "initials": str(initials)}
    return VerificationRecord(
        timestamp=stamp.isoformat(timespec="seconds"),
        program_version=__version__,
        formulary=result.formulary,
        entered=entered,
        request=checked,
        order=order,
        result=result,
        discrepancies=discrepancies,
        decision=decision,
    )


def _order_read_as(order: Order) -> str:
    parts = [f"{order.agent_id} {order.volume_ml:g} mL"]
    if order.duration_min is not None:
        parts.append(f"over {order.duration_min:g} min")
    if order.rate_ml_h is not None:
        parts.append(f"at {order.rate_ml_h:g} mL/h")
    text = " ".join(parts)
    text += f", {order.line} line" if order.line else ", no line named"
    if order.stated_dose is not None:
        text += f"; stated dose {order.stated_dose.label}"
    if order.stated_sodium_mmol_l is not None:
        text += f"; stated expected sodium {order.stated_sodium_mmol_l:g} mmol/L"
    return text


def _check_body(result: CheckResult) -> list[str]:
    """The check report without its header and caution: the same words `osmodose check` prints."""
    lines = render_check(result).rstrip("\n").splitlines()
    start = next((i for i, line in enumerate(lines) if line.startswith("patient:")), 0)
    end = len(lines)
    if lines and lines[-1] == result.caution:
        end -= 1
    body = lines[start:end]
    while body and not body[-1].strip():
        body.pop()
    return body


def render_record(record: VerificationRecord) -> str:
    """The readable record (one implementation for the terminal, the app and printouts)."""
    decision = record.decision
    outcome = decision.outcome
    f = record.formulary
    lines = [
        f"osmodose verification  {OUTCOME_MARK[outcome]} {OUTCOME_WORDS[outcome]}",
        f"verified by {decision.initials} at {record.timestamp} with osmodose {record.program_version}",
        f.line(),
        "",
        "order as written: " + ", ".join(f"{k} {v}" for k, v in record.order.entered.items()),
        f"  read as: {_order_read_as(record.order)}",
        "",
    ]
    if record.discrepancies:
        lines.append("discrepancies (as written against recomputed):")
        lines += [f"  {_SEVERITY_MARK[d.severity]} {d.code}: {d.message}" for d in record.discrepancies]
    else:
        lines.append("discrepancies: none")
    lines += ["", "recomputation from the volume:"]
    lines += [f"  {line}" if line else "" for line in _check_body(record.result)]
    lines += ["", f"decision: {outcome.upper()}"]
    if decision.refusals:
        lines.append("  refused (cannot be accepted): " + ", ".join(decision.refusals))
    for accepted in decision.accepted:
        lines.append(f"  accepted by {accepted.initials}: {accepted.code}: {accepted.reason}")
    for refused in decision.not_accepted:
        lines.append(f"  not accepted: {refused.code}: {refused.reason} ({refused.why})")
    if decision.open_warnings:
        lines.append("  open warnings (need a reason and initials): " + ", ".join(decision.open_warnings))
    lines += ["", record.caution]
    return "\n".join(lines) + "\n"
