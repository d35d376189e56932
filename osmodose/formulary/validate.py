"""Validate a formulary file whole: every error and every warning, with key path and line.

Errors are what `load_formulary` rejects (so `osmodose check` stops on them
too); warnings are judged here, from the parts that could be resolved, and
never stop a file being used: they point at something a checker should look
at twice, such as a peripheral agent above the peripheral osmolarity limit.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from osmodose.errors import FormularyError, FormularyWarning
from osmodose.formulary.load import COMPOSITION_TOLERANCE, ReadResult, read_formulary
from osmodose.formulary.locate import key_lines, line_of
from osmodose.formulary.model import Agent, Limits
from osmodose.science.units import Q_

#: A percentage written in a label: "Sodium chloride 23.4 % 30 mL" (or "0,9 %" with a decimal comma).
_LABEL_PERCENT = re.compile(r"(\d+(?:[.,]\d+)?)\s*%")


@dataclass(frozen=True)
class Validation:
    """The verdict on one file: errors (the file cannot be used) and warnings (it can)."""

    path: Path
    errors: tuple[FormularyError, ...]
    warnings: tuple[FormularyWarning, ...]
    readable: bool
    name: str | None = None
    version: str | None = None
    agent_count: int = 0

    @property
    def valid(self) -> bool:
        return not self.errors

    def lines(self) -> list[str]:
        """One `FILE:LINE: key.path: problem` line each: errors by line, then warnings by line."""
        return [e.located() for e in _by_line(self.errors)] + [w.located() for w in _by_line(self.warnings)]

    def summary(self) -> str:
        """The last line: the verdict in words."""
        warned = f" ({_count(len(self.warnings), 'warning')})" if self.warnings else ""
        if self.valid:
            agents = _count(self.agent_count, "agent")
            return f'{self.path}: valid: "{self.name}" version "{self.version}", {agents}{warned}'
        return f"{self.path}: not valid: {_count(len(self.errors), 'error')}{warned}"

    def to_json(self) -> dict[str, Any]:
        return {
            "file": str(self.path),
            "valid": self.valid,
            "name": self.name,
            "version": self.version,
            "errors": [_problem_json(e) for e in _by_line(self.errors)],
            "warnings": [_problem_json(w) for w in _by_line(self.warnings)],
        }


def validate_formulary(path: Path | str) -> Validation:
    """Read `path` and judge it; never raises for a bad file (`readable` is False when it cannot be opened)."""
    result = read_formulary(path)
    warnings = formulary_warnings(result)
    formulary = result.formulary
    return Validation(
        path=result.path,
        errors=tuple(result.problems),
        warnings=tuple(warnings),
        readable=result.readable,
        name=formulary.name if formulary else None,
        version=formulary.version if formulary else None,
        agent_count=len(formulary.agents) if formulary else 0,
    )


def formulary_warnings(result: ReadResult) -> list[FormularyWarning]:
    """Warnings on every agent that could be resolved, even in a file with errors."""
    if result.text is None or result.limits is None:
        return []
    lines = key_lines(result.text)
    warnings: list[FormularyWarning] = []

    def warn(key_path: str, problem: str) -> None:
        warnings.append(FormularyWarning(result.path, problem, key_path, line_of(lines, key_path)))

    for index, agent in result.agents:
        where = f"agents[{index}]"
        problem = peripheral_problem(agent, result.limits)
        if problem:
            warn(f"{where}.route", problem)
        problem = label_problem(agent)
        if problem:
            warn(f"{where}.label", problem)
    return warnings


def peripheral_problem(agent: Agent, limits: Limits) -> str | None:
    """A peripheral route for an infusate above the peripheral osmolarity limit.

    Not an error: 3 % saline (1027 mOsm/L) is widely given peripherally for
    short periods; the unit decides, and every peripheral order is warned.
    """
    limit = limits.peripheral_osmolarity_warn
    if agent.route != "peripheral" or limit is None or not agent.osmolarity_mosm_l > limit:
        return None
    return (
        f"'peripheral' for an agent of {agent.osmolarity_mosm_l:.0f} mOsm/L, above peripheral_osmolarity_warn "
        f"({limit:g} mOsm/L): every order on a peripheral line will be warned"
    )


def label_problem(agent: Agent) -> str | None:
    """A label whose percentages all disagree with the concentration: one of the two is mistyped.

    The label is free text, so this is a warning; it catches a 23.4 % vial
    entered as "2.34% w/v" even when no sodium is given to cross-check.
    """
    if agent.solute_g_per_l is None:
        return None
    written = [float(number.replace(",", ".")) for number in _LABEL_PERCENT.findall(agent.label)]
    percent = float(Q_(agent.solute_g_per_l, "g/L").m_as("percent_wv"))
    if not written or any(abs(value - percent) <= COMPOSITION_TOLERANCE * percent for value in written):
        return None
    shown = " or ".join(f"{value:g} %" for value in written)
    return f"{agent.label!r} says {shown} but the concentration is {percent:.4g} % w/v: check which one is right"


def _by_line(items: tuple[Any, ...]) -> list[Any]:
    return sorted(items, key=lambda item: item.line or 0)


def _count(number: int, word: str) -> str:
    return f"{number} {word}{'' if number == 1 else 's'}"


def _problem_json(item: FormularyError | FormularyWarning) -> dict[str, Any]:
    return {"line": item.line, "key_path": item.key_path, "problem": item.problem, "message": item.located()}
