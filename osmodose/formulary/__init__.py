"""The unit's formulary: the file model, its loading and the resolved form."""

from __future__ import annotations

from osmodose.formulary.demo import DEMO_FILE_NAME, demo_formulary_path
from osmodose.formulary.load import load_formulary, read_formulary
from osmodose.formulary.model import Agent, Formulary, Limits

__all__ = [
    "DEMO_FILE_NAME",
    "Agent",
    "Formulary",
    "Limits",
    "demo_formulary_path",
    "load_formulary",
    "read_formulary",
]
