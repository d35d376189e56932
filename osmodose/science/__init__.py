"""The science, lowest layer: the unit registry, molar masses, every formula, plausibility ranges.

Nothing here knows about a patient, a formulary or a front end; every other layer builds on it.
"""
