"""Pure, vectorised propulsion physics: numpy in, numpy out, no I/O, nothing else of ``server`` imported.

One module per component (atmosphere, propeller, motor, esc, battery), the coupled operating point of N rotors
on one pack (drive), discharge integration (endurance) and common-practice sizing rules (sizing). Every
function broadcasts over candidates; batch solvers return a per-element :class:`Status` and never raise.
The model, its sources and its check cases are documented in docs/model-reference.md (reference model v1).
"""

from ._types import FloatArray, Status

ENGINE_VERSION = "1.1-ref-v1"
"""Version of the engine's numbers; stored with every ranking, calibration and shortlist snapshot.

1.1: priors instead of zeros for unmeasured parameters (k_pwm above all), fitted CP knots held at or above the
momentum limit, ties broken in favour of measured parts, bands on predictions and ranking rows."""

__all__ = ["ENGINE_VERSION", "FloatArray", "Status"]
