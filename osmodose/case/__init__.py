"""The case: every field a user types, its choices, and the validated request a check is asked."""
