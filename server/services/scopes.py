"""Say which values are per rotor and which are for the whole craft.

The first API fields (``thrust_n``, ``motor_current_a`` per rotor beside ``electrical_power_w``, ``bus_current_a``
for the craft) stay as they are — scripts read them — and every result also carries explicit twins named
``…_per_rotor_…`` or ``…_craft_…``. Added at read time, so results stored by an older version get them too.
"""

from __future__ import annotations

from typing import Any

# (first name, explicit twin) within a "cruise" or "full_throttle" block
TWINS = (
    ("thrust_n", "thrust_per_rotor_n"),
    ("motor_current_a", "motor_current_per_rotor_a"),
    ("shaft_power_w", "shaft_power_per_rotor_w"),
    ("electrical_power_w", "electrical_power_craft_w"),
    ("bus_current_a", "bus_current_craft_a"),
)


def with_scopes(metrics: dict[str, Any]) -> dict[str, Any]:
    """``metrics`` (a ranking row or a candidate evaluation) with the explicit twins added, in place."""
    for block in ("cruise", "full_throttle"):
        values = metrics.get(block)
        if isinstance(values, dict):
            for first, twin in TWINS:
                if first in values:
                    values[twin] = values[first]
    if "thrust_required_n" in metrics:
        metrics["thrust_required_per_rotor_n"] = metrics["thrust_required_n"]
    return metrics
