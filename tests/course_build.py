"""Building invented episodes for the course tests (demo data: an invented patient)."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta
from pathlib import Path

from osmodose.course.episode import DoseEntry, Episode, EpisodePatient, LabEntry, ReadingEntry
from osmodose.formulary import Formulary, demo_formulary_path, load_formulary

T0 = datetime(2026, 12, 1, 8, 0, tzinfo=UTC)

#: 70 kg man, 45 y: total body water 0.6 x 70 = 42 L (Adrogue HJ, Madias NE. N Engl J Med 2000).
MAN_70 = EpisodePatient(label="test patient (invented)", weight_kg=70, age_years=45, sex="male")


def at(hours: float) -> datetime:
    return T0 + timedelta(hours=hours)


def lab(hours: float, sodium: float, **values: float) -> LabEntry:
    return LabEntry(time=at(hours), sodium_mmol_l=sodium, **values)


def dose(hours: float, agent: str, volume_ml: float, duration_min: float | None = None) -> DoseEntry:
    return DoseEntry(time=at(hours), agent_id=agent, volume_ml=volume_ml, duration_min=duration_min)


def reading(hours: float, map_mmhg: float, icp_mmhg: float) -> ReadingEntry:
    return ReadingEntry(time=at(hours), map_mmhg=map_mmhg, icp_mmhg=icp_mmhg)


def episode(labs=(), doses=(), readings=(), patient: EpisodePatient = MAN_70) -> Episode:
    return Episode(patient=patient, labs=tuple(labs), doses=tuple(doses), readings=tuple(readings))


def formulary_with_limits(tmp_path: Path, **limits: str) -> Formulary:
    """The demo formulary with extra `[limits]` keys, written to a temporary file."""
    text = demo_formulary_path().read_text(encoding="utf-8")
    extra = "".join(f'{key} = "{value}"\n' for key, value in limits.items())
    path = tmp_path / "unit.toml"
    path.write_text(text.replace("[limits]\n", "[limits]\n" + extra, 1), encoding="utf-8")
    return load_formulary(path)
