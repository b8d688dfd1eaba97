"""Multirotor flight states in the ranking: defaults keep hover exactly, forward flight changes the numbers."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from server.selection import rank
from server.selection.library import MissionSpec

from . import parts


def test_plain_hover_has_no_flight_state_and_ranks_as_before() -> None:
    hover = parts.hover_mission()
    assert not hover.has_flight_state
    assert hover.flight_state(2.0, 0.25) is None
    assert float(hover.thrust_per_rotor_n(2.0)) == pytest.approx(2.0 * 9.80665 / 4, rel=1e-15)
    # A drag area alone changes nothing in hover (no airspeed, no climb): the same rows, bit for bit.
    a = rank(parts.mixed_library(), hover, objective="cruise_power", top_n=50)
    b = rank(parts.mixed_library(), replace(hover, drag_area_m2=0.05), objective="cruise_power", top_n=50)
    assert [r.as_dict() for r in a.top] == [r.as_dict() for r in b.top]
    assert a.rejected == b.rejected


def test_forward_flight_ranks_on_the_corrected_power() -> None:
    hover = parts.hover_mission()
    forward = replace(hover, kind="forward_flight", cruise_airspeed_m_s=12.0, drag_area_m2=0.02)
    assert forward.has_flight_state
    h = {(r.battery_id, r.esc_id, r.motor_id, r.propeller_id, r.packs_in_parallel): r
         for r in rank(parts.mixed_library(), hover, top_n=500).top}
    f = rank(parts.mixed_library(), forward, top_n=500).top
    assert f
    ratios = [r.cruise["electrical_power_w"] / h[k].cruise["electrical_power_w"] for r in f
              if (k := (r.battery_id, r.esc_id, r.motor_id, r.propeller_id, r.packs_in_parallel)) in h]
    assert ratios and max(ratios) < 1.0  # a light drag area at 12 m/s needs less than hover
    assert all(r.cruise["thrust_n"] > 0 for r in f)


@pytest.mark.parametrize("changes, message", [
    ({"kind": "forward_flight"}, "cruise_airspeed_m_s"),
    # a fixed wing climbs (a flight-profile segment) only slower than it flies
    ({"kind": "cruise", "cruise_airspeed_m_s": 15.0, "lift_to_drag": 8.0, "climb_rate_m_s": 15.0}, "climb_rate"),
    ({"coaxial": True, "rotor_count": 3}, "coaxial"),
    ({"drag_area_m2": -1.0}, "drag_area_m2"),
])
def test_bad_flight_state_inputs_are_refused(changes: dict[str, object], message: str) -> None:
    with pytest.raises(ValueError, match=message):
        MissionSpec(**{"rotor_count": 4, "frame_mass_kg": 1.0, **changes})  # type: ignore[arg-type]


def test_thrust_per_rotor_is_the_trim_thrust() -> None:
    forward = replace(parts.hover_mission(), kind="forward_flight", cruise_airspeed_m_s=12.0, drag_area_m2=0.03)
    mass = np.array([2.4])
    weight = 2.4 * 9.80665
    drag = 0.5 * forward.density_kg_m3 * 144.0 * 0.03
    assert forward.thrust_per_rotor_n(mass)[0] == pytest.approx(np.hypot(weight, drag) / 4, rel=1e-14)
