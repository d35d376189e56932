"""The figures of an audit's result rows: their output names (as in `check --json`) and engine figures.

Kept apart, with no imports, so that the benchmark's floor program can name the
same figures without loading the core.
"""

from __future__ import annotations

#: Output name (as in `check --json`) -> engine figure.
FIGURES: tuple[tuple[str, str], ...] = (
    ("total_body_water_l", "tbw_l"),
    ("calculated_osmolality_mosm_kg", "calculated_osmolality"),
    ("effective_osmolality_mosm_kg", "effective_osmolality"),
    ("osmolar_gap_mosm_kg", "osmolar_gap"),
    ("volume_ml", "volume_ml"),
    ("solute_g", "solute_g"),
    ("sodium_mmol", "sodium_mmol"),
    ("osmoles_mosm", "osmoles_mosm"),
    ("volume_ml_per_kg", "volume_ml_per_kg"),
    ("solute_g_per_kg", "solute_g_per_kg"),
    ("sodium_mmol_per_kg", "sodium_mmol_per_kg"),
    ("osmoles_mosm_per_kg", "osmoles_mosm_per_kg"),
    ("rate_ml_h", "rate_ml_h"),
    ("sodium_change_per_litre_mmol_l", "sodium_change_per_litre"),
    ("projected_sodium_mmol_l", "projected_sodium"),
    ("projected_sodium_rise_mmol_l", "projected_rise"),
    # check --json's projected_sodium_range_mmol_l [low, high], as two columns.
    ("projected_sodium_without_losses_mmol_l", "projected_sodium_without_losses"),
    ("projected_sodium_range_low_mmol_l", "projected_sodium_low"),
    ("projected_sodium_range_high_mmol_l", "projected_sodium_high"),
    ("electrolyte_free_water_clearance_l", "free_water_clearance_l"),
    ("free_water_deficit_l", "free_water_deficit_l"),
)
