"""The verifier's decision: which warnings are accepted, and whether the order is released.

Rules (the same for every front end):

* a warn may be accepted only with a written reason and the verifier's
  initials; every warn must be accepted before the order is released;
* a refuse can never be accepted: an attempt is recorded as not accepted,
  and the order stays refused;
* a warning that the order leaves out what a high-alert agent needs (the
  line of a central-only agent, the duration or rate of an agent whose rate
  is judged) can never be accepted either: the order stays held until it
  states it, so leaving a field out never turns a refusal into a release;
* an acceptance that names no finding of this order is an input error (a
  typo must not look like a sign-off).

Outcomes: `released` (nothing crossed), `released-with-accepted-warnings`,
`held` (a warning not yet accepted: not released, awaiting a reason or a new
order), `refused` (a hard limit or a self-contradicting order).
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from typing import Literal, Protocol

from pydantic import Field

from osmodose.errors import InputError
from osmodose.frozen import Frozen

Outcome = Literal["released", "released-with-accepted-warnings", "held", "refused"]

#: What each decision means for giving the order, as a check's status: the top-level `status` of
#: `verify --json` and the exit status (0 ok, 3 warn, 4 refuse).
OUTCOME_STATUS: dict[str, Literal["ok", "warn", "refuse"]] = {
    "released": "ok",
    "released-with-accepted-warnings": "ok",
    "held": "warn",
    "refused": "refuse",
}


def decision_word(outcome: str) -> str:
    """The one spelling of a decision in text: its JSON value in capitals (RELEASED-WITH-ACCEPTED-WARNINGS)."""
    return outcome.upper()


#: The shortest written reason accepted: enough for a few words, not "ok".
MIN_REASON_LENGTH = 8
MAX_REASON_LENGTH = 500
_INITIALS = re.compile(r"^[^\W\d_](?:[^\W\d_]|-){0,4}[^\W\d_]$")
INITIALS_ACCEPTED = "2 to 6 letters, e.g. AB"
ACCEPT_FORM = "CODE=REASON, e.g. volume-not-a-presentation=drawn from a 500 mL bag"
NOT_ACCEPTABLE = "a refuse cannot be accepted: the order must be changed"
MUST_BE_STATED = "the order must state it: leaving it out cannot be accepted"


class Judged(Protocol):
    """Anything with a code, a severity and a message: a check finding or a discrepancy."""

    @property
    def code(self) -> str: ...
    @property
    def severity(self) -> str: ...
    @property
    def message(self) -> str: ...


class Acceptance(Frozen, use_attribute_docstrings=True):
    """A verifier's acceptance of one warning code, with the written reason."""

    code: str
    """The finding code accepted, e.g. "volume-not-a-presentation"."""
    reason: str
    """Why the warning is accepted, in the verifier's words."""


class AcceptedWarning(Frozen, use_attribute_docstrings=True):
    """A warning accepted: its code, the reason, the initials and what it said."""

    code: str
    reason: str
    initials: str
    messages: list[str]


class RefusedAcceptance(Frozen, use_attribute_docstrings=True):
    """An acceptance that was not granted, and why."""

    code: str
    reason: str
    why: str


class Decision(Frozen, use_attribute_docstrings=True):
    """The outcome and everything that led to it."""

    outcome: Outcome
    initials: str
    accepted: list[AcceptedWarning]
    not_accepted: list[RefusedAcceptance]
    open_warnings: list[str]
    """Codes of warnings not accepted (the order is held while any remain)."""
    refusals: list[str]
    """Codes of refusals (the order is refused while any remain)."""
    must_state: list[str] = Field(default_factory=list)
    """Codes of open warnings no reason can accept: the order must state what it leaves out."""


def parse_initials(raw: object) -> str:
    """The verifier's initials, upper case, dots and spaces dropped ("a.b." -> "AB")."""
    if raw is None or not str(raw).strip():
        raise InputError("initials", None, "are required", INITIALS_ACCEPTED)
    text = re.sub(r"[.\s]", "", str(raw)).upper()
    if not _INITIALS.match(text):
        raise InputError("initials", raw, "are not initials", INITIALS_ACCEPTED)
    return text


def parse_acceptance(raw: str) -> Acceptance:
    """Read "CODE=REASON" as typed after --accept."""
    code, sep, reason = str(raw).partition("=")
    code = code.strip().lower()
    if not sep or not code:
        raise InputError("accept", raw, "is not CODE=REASON", ACCEPT_FORM)
    return make_acceptance(code, reason, shown=raw)


def make_acceptance(code: str, reason: str, shown: object | None = None) -> Acceptance:
    """An acceptance from a code and a reason (a form's two boxes); checks the reason."""
    text = " ".join(str(reason).split())
    if len(text) < MIN_REASON_LENGTH:
        raise InputError(
            "accept",
            shown if shown is not None else f"{code}={reason}",
            f"needs a written reason of at least {MIN_REASON_LENGTH} characters",
            ACCEPT_FORM,
        )
    if len(text) > MAX_REASON_LENGTH:
        raise InputError("accept", code, f"has a reason longer than {MAX_REASON_LENGTH} characters", ACCEPT_FORM)
    return Acceptance(code=code.strip().lower(), reason=text)


def decide(items: Sequence[Judged], acceptances: Sequence[Acceptance], initials: str) -> Decision:
    """Apply the acceptance rules to every finding and discrepancy of one order."""
    initials = parse_initials(initials)
    by_code: dict[str, list[Judged]] = {}
    for item in items:
        by_code.setdefault(item.code, []).append(item)
    refused_codes = [code for code, group in by_code.items() if any(i.severity == "refuse" for i in group)]
    warn_codes = [code for code in by_code if code not in refused_codes]
    unstated = {code for code, group in by_code.items() if any(not getattr(i, "acceptable", True) for i in group)}
    seen: set[str] = set()
    accepted: list[AcceptedWarning] = []
    not_accepted: list[RefusedAcceptance] = []
    for acceptance in acceptances:
        code = acceptance.code
        if code in seen:
            raise InputError("accept", code, "is accepted twice", "one --accept per code")
        seen.add(code)
        if code not in by_code:
            acceptable = [c for c in warn_codes if c not in unstated]
            known = ", ".join(acceptable) if acceptable else "none: this order has no warning"
            raise InputError("accept", code, "is not a finding of this order", f"a warning code: {known}")
        if code in refused_codes:
            not_accepted.append(RefusedAcceptance(code=code, reason=acceptance.reason, why=NOT_ACCEPTABLE))
            continue
        if code in unstated:
            not_accepted.append(RefusedAcceptance(code=code, reason=acceptance.reason, why=MUST_BE_STATED))
            continue
        accepted.append(
            AcceptedWarning(
                code=code,
                reason=acceptance.reason,
                initials=initials,
                messages=[i.message for i in by_code[code]],
            )
        )
    accepted_codes = {a.code for a in accepted}
    open_warnings = [code for code in warn_codes if code not in accepted_codes]
    outcome: Outcome
    if refused_codes:
        outcome = "refused"
    elif open_warnings:
        outcome = "held"
    elif accepted:
        outcome = "released-with-accepted-warnings"
    else:
        outcome = "released"
    return Decision(
        outcome=outcome,
        initials=initials,
        accepted=accepted,
        not_accepted=not_accepted,
        open_warnings=open_warnings,
        refusals=refused_codes,
        must_state=[code for code in open_warnings if code in unstated],
    )
