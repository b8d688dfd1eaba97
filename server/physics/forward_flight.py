"""Flight state of a multirotor: hover, axial climb or descent, forward flight at an airspeed with a climb rate.

Model (docs/model-reference.md#multirotor-flight-state), per rotor, all rotors alike:

- **Trim.** The craft moves at horizontal airspeed V and climb rate V_c (positive up) in still air. Airframe drag
  ``D = 1/2 rho V_rel^2 C_D A`` (``drag_area_m2`` = C_D A) acts along the relative wind, ``V_rel^2 = V^2 + V_c^2``.
  The rotors' resultant thrust balances weight and drag: ``T_x = D V / V_rel``, ``T_z = W + D V_c / V_rel``; the
  disks tilt forward by ``tilt = atan2(T_x, T_z)`` and each rotor makes ``T = |T_vec| / N``.
- **Inflow.** The free stream relative to a disk has a component through it (from the front, against the
  thrust) ``V_perp = V sin(tilt) + V_c cos(tilt)`` and one in its plane ``V_par = |V cos(tilt) - V_c sin(tilt)|``.
  Glauert's momentum theory for an inclined disk (Leishman 2006, ch. 2 and 5):
  ``v_i = v_h^2 / sqrt(V_par^2 + (V_perp + v_i)^2)``, ``v_h = sqrt(T / (2 rho A))``; solved vectorised by a
  bracketed Newton iteration on the quartic ``lam^2 (m^2 + (x + lam)^2) = 1`` (``lam = v_i/v_h``,
  ``x = V_perp/v_h``, ``m = V_par/v_h``). Ideal power ``T (v_i + V_perp)`` = induced + parasite ``D V_rel`` +
  climb ``W V_c``. Axial climb (V = 0) gives ``v_i = -V_c/2 + sqrt(V_c^2/4 + v_h^2)``.
- **Descent** (V_c < 0). Momentum theory does not hold in the vortex-ring and turbulent-wake states
  (Leishman 2006, ch. 2). Conservative rule of our own (common practice, no source): a descent gets no power
  credit below level flight at the same airspeed; its ideal power per unit thrust is the larger of Glauert's
  value and that of level flight (``V_c = 0``).
- **Coaxial pairs.** The lower rotor works in the fully contracted wake of the upper: its induced power is
  ``(sqrt(17) - 1)/2 = 1.5616`` times an isolated rotor's at equal thrust, the pair's mean
  ``COAXIAL_INDUCED_FACTOR = 1.2808`` (momentum theory, derived in the docs; Leishman 2006, ch. 4). Applied to
  the induced part ``T v_i`` of every rotor.
- **Shaft power with a measured propeller** (:func:`shaft_power_w`). The static table gives the speed for the
  thrust and the hover shaft power P_static. Its non-ideal part ``P_static - T v_h`` is kept, grown with the
  edgewise advance ratio ``mu = V_par / (Omega R)`` by the profile-power factor ``1 + 4.65 mu^2`` (Leishman 2006,
  ch. 5, after Bennett), and the hover ideal power ``T v_h`` is replaced by the flight state's ideal power.
  The shaft power is therefore never below the ideal power where FM <= 1 (the static data's own guard).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ._types import STANDARD_GRAVITY_M_S2, ArrayLike, FloatArray, as_float_array

PROFILE_POWER_GROWTH = 4.65
"""K in the profile-power factor ``1 + K mu^2`` (Leishman 2006, ch. 5, after Bennett; simple theory gives 3)."""
LOWER_ROTOR_INDUCED_FACTOR = 0.5 * (math.sqrt(17.0) - 1.0)
"""Induced power of a coaxial pair's lower rotor over an isolated rotor's at equal thrust (momentum theory). [-]"""
COAXIAL_INDUCED_FACTOR = 0.5 * (1.0 + LOWER_ROTOR_INDUCED_FACTOR)
"""Induced power of a coaxial pair over two isolated rotors at equal thrust, 1.2808 (Leishman 2006, ch. 4). [-]"""
GLAUERT_RTOL = 1e-13
GLAUERT_MAX_ITER = 80


def hover_induced_velocity_m_s(thrust_n: ArrayLike, disk_area_m2: ArrayLike, density_kg_m3: ArrayLike) -> FloatArray:
    """Ideal hover induced velocity ``v_h = sqrt(T / (2 rho A))`` (Leishman 2006, ch. 2). [m/s]"""
    t = as_float_array(thrust_n)
    with np.errstate(invalid="ignore", divide="ignore"):
        v_h: FloatArray = np.sqrt(t / (2.0 * as_float_array(density_kg_m3) * as_float_array(disk_area_m2)))
    return v_h


def glauert_inflow_ratio(edgewise_ratio: ArrayLike, through_ratio: ArrayLike) -> FloatArray:
    """Largest root ``lam = v_i / v_h`` of Glauert's ``lam^2 (m^2 + (x + lam)^2) = 1``. [-]

    Parameters
    ----------
    edgewise_ratio : array_like
        ``m = V_par / v_h``, free stream in the disk plane over the hover induced velocity. [-]
    through_ratio : array_like
        ``x = V_perp / v_h``, free stream through the disk (positive against the thrust, i.e. climb). [-]

    Bracketed Newton: ``g(0) = -1 < 0`` and ``g >= 0`` at ``min(max(0, -x) + 1, 1/sqrt(m^2 + max(x, 0)^2))``, so a
    root lies in between; Newton steps from the upper end, bisection where a step leaves the bracket, until the
    relative step is below 1e-13.
    """
    m = as_float_array(edgewise_ratio)
    x = as_float_array(through_ratio)
    m, x = np.broadcast_arrays(m, x)
    m2 = m * m
    lo = np.zeros(m.shape)
    with np.errstate(divide="ignore"):
        # Every root lies below 1/sqrt(m^2 + x^2) for x >= 0 (lam < 1/sqrt(m^2 + (x + lam)^2)), below 1/m, and below
        # max(0, -x) + 1; from that upper bound Newton descends monotonically where g is convex (x >= 0).
        hi = np.minimum(np.maximum(0.0, -x) + 1.0, 1.0 / np.sqrt(m2 + np.maximum(x, 0.0) ** 2))
    lam: FloatArray = hi.copy()
    if not lam.size:
        return lam
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        for _ in range(GLAUERT_MAX_ITER):
            s = x + lam
            g = lam * lam * (m2 + s * s) - 1.0
            dg = 2.0 * lam * (m2 + s * s) + 2.0 * lam * lam * s
            lo = np.where(g < 0.0, lam, lo)
            hi = np.where(g >= 0.0, lam, hi)
            new = lam - g / dg
            new = np.where((new >= lo) & (new <= hi) & np.isfinite(new), new, 0.5 * (lo + hi))
            step = np.abs(new - lam) / np.maximum(new, 1e-300)
            lam = new
            if not np.nanmax(step, initial=0.0) > GLAUERT_RTOL:
                break
    out: FloatArray = np.where(np.isfinite(m) & np.isfinite(x), lam, np.nan)
    return out


@dataclass(frozen=True)
class FlightState:
    """Per-rotor flight state of a multirotor (arrays of the broadcast shape).

    ``ideal_power_w`` is the momentum-theory power of one rotor with the coaxial factor on its induced part and
    the descent rule applied; ``hover_ideal_power_w`` = ``T v_h`` at the same thrust (what a static table's
    figure of merit is measured against).
    """

    thrust_n: FloatArray
    """Thrust of one rotor. [N]"""
    tilt_rad: FloatArray
    """Forward tilt of the thrust (and disk) from vertical. [rad]"""
    drag_n: FloatArray
    """Airframe drag ``1/2 rho V_rel^2 C_D A``. [N]"""
    hover_induced_velocity_m_s: FloatArray
    """``v_h`` at this thrust. [m/s]"""
    induced_velocity_m_s: FloatArray
    """Glauert induced velocity ``v_i``. [m/s]"""
    through_disk_speed_m_s: FloatArray
    """Free stream through the disk ``V_perp`` (positive against the thrust). [m/s]"""
    edgewise_speed_m_s: FloatArray
    """Free stream in the disk plane ``V_par``. [m/s]"""
    induced_factor: FloatArray
    """Factor on the induced power (1, or :data:`COAXIAL_INDUCED_FACTOR` for coaxial pairs). [-]"""
    ideal_power_w: FloatArray
    """Ideal power of one rotor ``T (k v_i + V_perp)`` (descent rule applied). [W]"""
    hover_ideal_power_w: FloatArray
    """``T v_h`` at this thrust, isolated rotor (what a static table's figure of merit is measured against). [W]"""


def craft_thrust_n(weight_n: ArrayLike, density_kg_m3: ArrayLike, airspeed_m_s: ArrayLike = 0.0,
                   climb_rate_m_s: ArrayLike = 0.0, drag_area_m2: ArrayLike = 0.0) -> tuple[FloatArray, FloatArray,
                                                                                             FloatArray]:
    """Resultant thrust of the craft, its forward tilt from vertical, and the airframe drag. ([N], [rad], [N])"""
    w = as_float_array(weight_n)
    v = as_float_array(airspeed_m_s)
    vc = as_float_array(climb_rate_m_s)
    v_rel = np.hypot(v, vc)
    drag = 0.5 * as_float_array(density_kg_m3) * v_rel * v_rel * as_float_array(drag_area_m2)
    with np.errstate(invalid="ignore", divide="ignore"):
        per_speed = np.where(v_rel > 0.0, drag / v_rel, 0.0)  # D / V_rel: the drag components are D V / V_rel ...
    t_x = per_speed * v
    t_z = w + per_speed * vc
    return np.hypot(t_x, t_z), np.arctan2(t_x, t_z), drag


def flight_state(weight_n: ArrayLike, rotor_count: ArrayLike, disk_area_m2: ArrayLike, density_kg_m3: ArrayLike,
                 airspeed_m_s: ArrayLike = 0.0, climb_rate_m_s: ArrayLike = 0.0, drag_area_m2: ArrayLike = 0.0,
                 coaxial: bool = False) -> FlightState:
    """Trim, Glauert inflow and ideal power of every rotor (module docstring; docs/model-reference.md).

    Parameters
    ----------
    weight_n : array_like
        Weight of the craft ``m g0``. [N]
    rotor_count : array_like
        Rotors N (a coaxial craft counts both rotors of every pair). [-]
    disk_area_m2 : array_like
        Disk area of one rotor ``pi D^2 / 4``. [m^2]
    density_kg_m3 : array_like
        Air density. [kg/m^3]
    airspeed_m_s, climb_rate_m_s : array_like, default 0
        Horizontal airspeed and climb rate (negative: descent) in still air. [m/s]
    drag_area_m2 : array_like, default 0
        Airframe drag area C_D A (0: no airframe drag). [m^2]
    coaxial : bool, default False
        Rotors stacked in pairs: induced power times :data:`COAXIAL_INDUCED_FACTOR`.
    """
    rho = as_float_array(density_kg_m3)
    area = as_float_array(disk_area_m2)
    v = as_float_array(airspeed_m_s)
    vc = as_float_array(climb_rate_m_s)
    k = COAXIAL_INDUCED_FACTOR if coaxial else 1.0
    total, tilt, drag = craft_thrust_n(weight_n, rho, v, vc, drag_area_m2)
    thrust = total / as_float_array(rotor_count)
    v_h = hover_induced_velocity_m_s(thrust, area, rho)
    through, edgewise, lam = _inflow(v, vc, tilt, v_h)
    ideal_per_thrust = k * lam * v_h + through
    if np.any(vc < 0.0):
        # Descent rule: no credit below level flight at the same airspeed (same weight and drag area).
        total_0, tilt_0, _ = craft_thrust_n(weight_n, rho, v, 0.0, drag_area_m2)
        v_h0 = hover_induced_velocity_m_s(total_0 / as_float_array(rotor_count), area, rho)
        through_0, _, lam_0 = _inflow(v, 0.0, tilt_0, v_h0)
        level = k * lam_0 * v_h0 + through_0
        ideal_per_thrust = np.where(vc < 0.0, np.maximum(ideal_per_thrust, level), ideal_per_thrust)
    return FlightState(thrust_n=thrust, tilt_rad=tilt, drag_n=drag, hover_induced_velocity_m_s=v_h,
                       induced_velocity_m_s=lam * v_h, through_disk_speed_m_s=through, edgewise_speed_m_s=edgewise,
                       induced_factor=np.full(np.shape(thrust), k), ideal_power_w=thrust * ideal_per_thrust,
                       hover_ideal_power_w=thrust * v_h)


def _inflow(v: FloatArray, vc: ArrayLike, tilt: FloatArray,
            v_h: FloatArray) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Through-disk and in-plane free stream [m/s] and Glauert's ``v_i / v_h`` [-]."""
    climb = as_float_array(vc)
    through: FloatArray = v * np.sin(tilt) + climb * np.cos(tilt)
    edgewise: FloatArray = np.abs(v * np.cos(tilt) - climb * np.sin(tilt))
    with np.errstate(invalid="ignore", divide="ignore"):
        lam = glauert_inflow_ratio(edgewise / v_h, through / v_h)
    return through, edgewise, lam


def shaft_power_w(static_power_w: ArrayLike, omega_rad_s: ArrayLike, radius_m: ArrayLike,
                  state: FlightState) -> FloatArray:
    """Shaft power of a measured propeller in the flight state, from its static power at the same thrust. [W]

    ``P = (P_static - T v_h)(1 + K mu^2) + P_ideal`` with ``mu = V_par / (Omega R)`` (module docstring). With
    FM <= 1 (``P_static >= T v_h``) the result is at least the ideal power ``P_ideal``.
    """
    omega = as_float_array(omega_rad_s)
    with np.errstate(invalid="ignore", divide="ignore"):
        mu = state.edgewise_speed_m_s / (omega * as_float_array(radius_m))
    non_ideal = as_float_array(static_power_w) - state.hover_ideal_power_w
    power: FloatArray = non_ideal * (1.0 + PROFILE_POWER_GROWTH * mu * mu) + state.ideal_power_w
    return power


def shaft_torque_nm(static_torque_nm: ArrayLike, omega_rad_s: ArrayLike, radius_m: ArrayLike,
                    state: FlightState) -> FloatArray:
    """Shaft torque ``P / Omega`` of :func:`shaft_power_w` from the static torque at the same speed. [N m]"""
    omega = as_float_array(omega_rad_s)
    with np.errstate(invalid="ignore", divide="ignore"):
        torque: FloatArray = shaft_power_w(as_float_array(static_torque_nm) * omega, omega, radius_m, state) / omega
    return torque


def weight_for_rotor_thrust_n(thrust_n: ArrayLike, rotor_count: ArrayLike, density_kg_m3: ArrayLike,
                              airspeed_m_s: ArrayLike = 0.0, climb_rate_m_s: ArrayLike = 0.0,
                              drag_area_m2: ArrayLike = 0.0) -> FloatArray:
    """The weight that rotors making ``thrust_n`` each carry in this flight (inverse of :func:`craft_thrust_n`). [N]

    ``N T`` balances weight and drag: ``T_z = sqrt((N T)^2 - T_x^2)``, ``W = T_z - D V_c / V_rel``; NaN where the
    thrust cannot even balance the drag.
    """
    total = as_float_array(thrust_n) * as_float_array(rotor_count)
    v = as_float_array(airspeed_m_s)
    vc = as_float_array(climb_rate_m_s)
    v_rel = np.hypot(v, vc)
    drag = 0.5 * as_float_array(density_kg_m3) * v_rel * v_rel * as_float_array(drag_area_m2)
    with np.errstate(invalid="ignore", divide="ignore"):
        per_speed = np.where(v_rel > 0.0, drag / v_rel, 0.0)
        vertical = np.sqrt(total * total - (per_speed * v) ** 2)
        weight: FloatArray = vertical - per_speed * vc
    return np.where(weight > 0.0, weight, np.nan)


def weight_n(mass_kg: ArrayLike) -> FloatArray:
    """Weight ``m g0``. [N]"""
    return as_float_array(mass_kg) * STANDARD_GRAVITY_M_S2
