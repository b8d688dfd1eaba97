"""Small hand-made part libraries for the selection tests (values inside the typical ranges of docs/model-reference.md).

Invented parts, not from ``seed_data/``. Where a number comes from a published source it is named beside it;
everything else is an illustrative value inside the typical values of docs/model-reference.md (propeller, motor,
ESC and battery-pack sections).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from server.physics.propeller import PropellerTable
from server.selection import EscLibrary, MissionSpec, MotorLibrary, PackLibrary, PartsLibrary, PropellerLibrary

NAN = float("nan")
INF = float("inf")


def packs() -> PackLibrary:
    """3S 5.0 Ah, 4S 5.0 Ah and 6S 3.0 Ah LiPo packs (r per cell 4-8 mΩ).

    Typical values: docs/model-reference.md#battery-pack-typical-values.
    """
    return PackLibrary(ids=np.array([11, 12, 13]), cells_series=[3, 4, 6], cells_parallel=[1, 1, 1],
                       capacity_ah=[5.0, 5.0, 3.0], cell_resistance_ohm=[0.006, 0.006, 0.008],
                       full_voltage_per_cell_v=[4.2, 4.2, 4.2], max_continuous_c=[25.0, 25.0, 30.0],
                       mass_kg=[0.40, 0.53, 0.48], cost=[40.0, 55.0, 60.0])


def escs() -> EscLibrary:
    """A 30 A ESC with unknown loss data (physics defaults) and a 40 A ESC at 48 kHz with a calibrated k_pwm."""
    return EscLibrary(ids=np.array([21, 22]), continuous_current_a=[30.0, 40.0], min_cells=[2, 3], max_cells=[6, 6],
                      r_on_path_ohm=[NAN, 0.006], switching_frequency_hz=[NAN, 48e3], switching_time_s=[NAN, 150e-9],
                      dead_time_s=[NAN, 0.3e-6], diode_drop_v=[NAN, 0.75], input_esr_ohm=[NAN, 0.010],
                      pwm_loss_coefficient=[NAN, 0.004], mass_kg=[0.030, 0.042], cost=[25.0, 35.0])


def motors() -> MotorLibrary:
    """Kv 920 / 700 / 400 rpm/V motors of the 8-15 in class (docs/model-reference.md#motor-typical-values)."""
    return MotorLibrary(ids=np.array([31, 32, 33]), kv_rpm_per_v=[920.0, 700.0, 400.0],
                        resistance_ohm=[0.10, 0.12, 0.20], no_load_current_a=[0.5, 0.4, 0.3],
                        inductance_h=[30e-6, NAN, 60e-6], max_current_a=[30.0, 28.0, 20.0], max_cells=[4, 6, INF],
                        mass_kg=[0.060, 0.072, 0.095], cost=[30.0, 35.0, 45.0])


def static_rows() -> list[tuple[np.ndarray, np.ndarray, np.ndarray]]:
    """Static tables: 10x4.7 rows of UIUC ``sf_10x4.7_static_kt0835.txt`` (Brandt & Selig 2011, as quoted in
    docs/model-reference.md#propeller-typical-values); an invented constant 12 in pair; an invented 15 in table
    (CT up, CP down with rpm)."""
    return [
        (np.array([2377.0, 4029.0, 5147.0, 6528.0]), np.array([0.1059, 0.1158, 0.1237, 0.1299]),
         np.array([0.0431, 0.0466, 0.0500, 0.0531])),
        (np.array([0.0]), np.array([0.110]), np.array([0.042])),
        (np.array([1500.0, 3000.0, 4500.0]), np.array([0.098, 0.104, 0.108]), np.array([0.036, 0.035, 0.0345])),
    ]


def forward_rows() -> list[tuple[np.ndarray, np.ndarray, np.ndarray]]:
    """Invented forward tables versus J (CT falling with J, eta_p = J CT / CP peaking near 0.70 and 0.79).

    Shaped like the UIUC forward runs of a 10x4.7 and a 10x7 (Brandt & Selig 2011) in
    tests/data/reference/propellers/forward, whose efficiency peaks at 0.64 and 0.69: every point is within
    momentum theory (eta_p below the Froude efficiency; :func:`server.physics.propeller.momentum_limit_ratio`
    0.56-0.89). Typical values: docs/model-reference.md#propeller-typical-values.
    """
    return [
        (np.array([0.0, 0.15, 0.3, 0.45, 0.6]), np.array([0.125, 0.113, 0.092, 0.062, 0.025]),
         np.array([0.053, 0.051, 0.047, 0.040, 0.028])),
        (np.array([0.0, 0.3, 0.6, 0.9]), np.array([0.140, 0.118, 0.080, 0.030]),
         np.array([0.068, 0.066, 0.061, 0.042])),
        (np.array([NAN]), np.array([NAN]), np.array([NAN])),
    ]


def propellers() -> PropellerLibrary:
    diameter_in = np.array([10.0, 12.0, 15.0])
    d = diameter_in * 0.0254
    return PropellerLibrary(ids=np.array([41, 42, 43]), diameter_m=d, diameter_in=diameter_in,
                            static=PropellerTable.from_rows(d, static_rows(), "rpm"),
                            forward=PropellerTable.from_rows(d, forward_rows(), "advance_ratio"),
                            mass_kg=[0.012, 0.016, 0.025], cost=[4.0, 6.0, 12.0])


def library() -> PartsLibrary:
    return PartsLibrary(packs(), escs(), motors(), propellers())


def mixed_propellers() -> PropellerLibrary:
    """The three propellers (``any``) plus the 10 in one made for fixed wings (44) and the 12 in one made for
    multirotors (45): each mission kind has a propeller it must refuse for its application, and one it may use."""
    base = propellers()
    rows, fwd = static_rows(), forward_rows()
    diameter_in = np.array([10.0, 12.0, 15.0, 10.0, 12.0])
    d = diameter_in * 0.0254
    return PropellerLibrary(ids=np.array([41, 42, 43, 44, 45]), diameter_m=d, diameter_in=diameter_in,
                            static=PropellerTable.from_rows(d, [*rows, rows[0], rows[1]], "rpm"),
                            forward=PropellerTable.from_rows(d, [*fwd, fwd[0], fwd[1]], "advance_ratio"),
                            mass_kg=[*base.mass_kg, 0.012, 0.016], cost=[*base.cost, 4.0, 6.0],
                            application=["any", "any", "any", "fixed_wing", "multirotor"])


def mixed_library() -> PartsLibrary:
    """:func:`library` with :func:`mixed_propellers`."""
    return PartsLibrary(packs(), escs(), motors(), mixed_propellers())


def hover_mission(**changes: object) -> MissionSpec:
    """A 4-rotor survey craft, two packs in parallel allowed; a loose duty band so that many are feasible."""
    base = MissionSpec(rotor_count=4, frame_mass_kg=0.9, payload_kg=0.3, max_prop_diameter_in=16.0,
                       max_packs_in_parallel=2, kind="hover", altitude_m=500.0, temperature_offset_c=10.0,
                       min_thrust_to_weight=1.8, duty_min=0.2, duty_max=0.9, min_endurance_min=0.0)
    return replace(base, **changes)  # type: ignore[arg-type]


def cruise_mission(**changes: object) -> MissionSpec:
    """A single-puller fixed wing: 15 m/s, L/D 8, thrust-to-weight floor 0.5 (launch, common practice)."""
    base = MissionSpec(rotor_count=1, frame_mass_kg=1.6, payload_kg=0.2, max_prop_diameter_in=13.0,
                       max_packs_in_parallel=1, kind="cruise", cruise_airspeed_m_s=15.0, lift_to_drag=8.0,
                       min_thrust_to_weight=0.5, duty_min=0.2, duty_max=0.95, min_endurance_min=0.0)
    return replace(base, **changes)  # type: ignore[arg-type]
