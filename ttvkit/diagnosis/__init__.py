"""The diagnosis: fits joined with the physics of the star and planet, verdicts, forecast, perturber map.

The only room where fits and physics meet.  A plausibility screen, not a proof.
"""

from ttvkit.diagnosis.diagnose import (
    CAUTION,
    Assessment,
    Diagnosis,
    DiagnosisOptions,
    diagnose,
    timing_context,
)

__all__ = ["diagnose", "DiagnosisOptions", "Diagnosis", "Assessment", "timing_context", "CAUTION"]
