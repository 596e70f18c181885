"""Units-aware physics of the star, the orbit and unseen companions.

Everything here takes and returns astropy Quantities and knows nothing of
fitting; :mod:`ttvkit.diagnosis.diagnose` is the only place that joins the two.
"""

from ttvkit.physics.applegate import (
                        ActivityBudget,
                        activity_budgets,
                        activity_envelope,
                        finite_shell_budget,
                        period_change_from_amplitude,
                        thin_shell_budget,
)
from ttvkit.physics.structure import Polytrope, polytrope
from ttvkit.physics.system import Companion, Orbit, OtherStar, RadialVelocityLimits, Star, System

__all__ = [
    "System", "Star", "OtherStar", "Companion", "Orbit", "RadialVelocityLimits",
    "ActivityBudget", "thin_shell_budget", "finite_shell_budget", "activity_budgets",
    "activity_envelope", "period_change_from_amplitude",
    "Polytrope", "polytrope",
]
