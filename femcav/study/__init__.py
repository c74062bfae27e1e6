"""Design studies on a case: sweeps with mode tracking, tuning, sensitivities, extraction."""
