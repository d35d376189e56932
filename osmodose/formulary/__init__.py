"""The unit's formulary: the file model, its loading and the resolved form."""

from __future__ import annotations

from pathlib import Path

from osmodose.formulary.load import load_formulary, read_formulary
from osmodose.formulary.model import Agent, Formulary, Limits

DEMO_FILE_NAME = "demo-unit.toml"


def demo_formulary_path() -> Path:
    """The bundled demo formulary: inside the installed package, else the source tree's."""
    packaged = Path(__file__).resolve().parent.parent / "formularies" / DEMO_FILE_NAME
    if packaged.is_file():
        return packaged
    return Path(__file__).resolve().parent.parent.parent / "formularies" / DEMO_FILE_NAME


__all__ = ["Agent", "Formulary", "Limits", "demo_formulary_path", "load_formulary", "read_formulary"]
