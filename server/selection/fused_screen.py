"""The multirotor screen as one compiled loop: every candidate of a chunk solved and checked in registers.

:func:`.constraints.screen` is the definition: numpy arrays, one operation at a time over the whole chunk, which
costs memory traffic and Python overhead per operation (about 0.5 µs per candidate). For the missions most
rankings are — a multirotor on static propeller tables, hovering, in forward flight, climbing or descending,
coaxial or not, without temperature effects, a cold-day re-check or a flight profile (:func:`supports`) — this
module runs the same equations in one loop compiled by numba (3.5–5× the numpy screen on one core:
``python benchmarks/ranking.py --compare-screens``):

- per configuration and motor, the full-throttle points at the low and full states of charge of every propeller,
  once per distinct ESC on-path resistance (:func:`.drive_screen.full_throttle_points`);
- per ESC, the cruise point of every propeller: the flight state's thrust and shaft-power correction
  (:mod:`server.physics.forward_flight`, Glauert's inflow per rotor), the speed for the thrust on the
  propeller's segment polynomial by Newton, the bus voltage by Newton with every ESC loss term, the loss-step
  band just below full throttle answered by the full-throttle point (:func:`.drive_screen.cruise_point`); no
  balanced bus voltage gives NaN bus values, as there;
- every check of :data:`.constraints.REASONS` in order (:func:`.constraints.operating_checks`), counted as the
  numpy screen counts them: the first failing reason, and every violated reason;
- the rejection examples (:mod:`.examples`: the smallest part-order keys per reason) and the metrics of the
  feasible candidates only — nothing per candidate leaves the loop.

The propellers of a block are solved side by side ("lanes"): each lane's Newton iterations stop on its own
step, the independent chains overlap in the processor. Differences from the numpy screen are at rounding level:
a Newton iteration also stops once its step is below 1e-8 of the iterate after a step at least 1000 times larger
(quadratic convergence: the next step would be below rounding), divisions by the bus voltage are multiplications
by its reciprocal, the figure of merit's ``CT^1.5`` is ``CT sqrt(CT)``, and sin, cos, atan2 and hypot are the C
library's. Verdicts and metrics equal the numpy screen's (to 1e-12) and the brute-force reference's
(tests/selection/test_fused_screen.py). The loop is compiled
on first use and cached on disk (numba's ``cache=True``); :func:`warm_up` compiles it ahead of forked workers.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from server.physics import motor_out
from server.physics._types import STANDARD_GRAVITY_M_S2
from server.physics.battery import open_circuit_voltage_per_cell_v
from server.physics.drive_screen import BUS_CONVERGED_RTOL, BUS_MAX_ITER, FULL_THROTTLE_SLACK_RTOL
from server.physics.forward_flight import (
    COAXIAL_INDUCED_FACTOR,
    GLAUERT_MAX_ITER,
    GLAUERT_RTOL,
    PROFILE_POWER_GROWTH,
)
from server.physics.propeller import disk_area_m2
from server.physics.propeller_segments import NEWTON_MAX_ITER, NEWTON_RTOL, PropModel

from . import pareto
from .compiled import jit
from .constraints import BUS_COLLAPSE_FRACTION, CODE, REASONS
from .enumerate import Block, Chunk
from .examples import EXAMPLES_PER_REASON, ExampleKeys
from .library import MissionSpec, PartsLibrary

SETTLED_RTOL = 1e-8
"""A Newton step below this share of the iterate, after one at least 1 / :data:`SETTLED_SHRINK` times larger, ends
the iteration (quadratic convergence: the next step would be below rounding)."""
SETTLED_SHRINK = 1e-3
_RPM_TO_RAD_S = 2.0 * math.pi / 60.0
"""The constant of :meth:`PropModel.omega_rad_s` and :meth:`PropModel.emf_per_y` for rpm tables."""
_FM_FACTOR = math.sqrt(2.0 / math.pi)
"""The figure-of-merit constant of :func:`server.physics.propeller.momentum_limit_ratio`."""
_CHECKED = ("over_mass", "cruise_unreachable", "prop_data_out_of_range", "duty_out_of_band", "bus_collapse",
            "below_thrust_to_weight", "motor_out_thrust_short", "motor_over_current", "esc_over_current",
            "pack_over_current", "endurance_short")
"""The operating-point reasons of a plain mission, in the order of :func:`.constraints.operating_checks`."""
assert [name for name in REASONS if name in _CHECKED] == list(_CHECKED)
_NO_KEY = np.iinfo(np.int64).max
_CHECKED_CODES = np.array([CODE[name] for name in _CHECKED], dtype=np.int64)
_PATTERN_BITS = (np.arange(1 << len(_CHECKED))[:, None] >> np.arange(len(_CHECKED))[None, :]) & 1
"""Row b: the checks failed in bit pattern b."""
_FIRST_CODE = np.array([0] + [int(_CHECKED_CODES[(b & -b).bit_length() - 1]) for b in range(1, 1 << len(_CHECKED))],
                       dtype=np.int64)
"""Per bit pattern, the code of its first failed check (0: none failed)."""


def supports(mission: MissionSpec, model: PropModel) -> bool:
    """Whether the compiled loop covers this mission (else :func:`.constraints.screen` is used)."""
    return (model.axis == "rpm" and not mission.temperature_effects and mission.cold_day_temperature_c is None
            and not mission.has_profile)


@dataclass(frozen=True)
class FusedChunk:
    """A screened chunk: counts per reason code (0 = feasible), violations per reason (:data:`REASONS` order), the
    examples found (codes and keys), and the feasible candidates (flat positions in the chunk's cube, C order)
    with their metrics: craft electrical power [W], screening endurance [min], specific thrust [g/W],
    thrust-to-weight [-], all-up mass [kg]."""

    size: int
    counts: np.ndarray
    violations: np.ndarray
    example_codes: np.ndarray
    example_keys: np.ndarray
    feasible: np.ndarray
    electrical_power_w: np.ndarray
    endurance_min: np.ndarray
    specific_thrust_g_per_w: np.ndarray
    thrust_to_weight: np.ndarray
    mass_kg: np.ndarray


def screen_chunk(library: PartsLibrary, mission: MissionSpec, model: PropModel, block: Block, chunk: Chunk,
                 keys: ExampleKeys) -> FusedChunk:
    """Screen a chunk of a block (configurations ``c0:c1``, ESCs ``e0:e1``, every motor and propeller)."""
    pk, es, mo, pr = library.packs, library.escs, library.motors, library.propellers
    pack = block.packs[chunk.c0:chunk.c1]
    k = block.ks[chunk.c0:chunk.c1]
    esc = block.escs[chunk.e0:chunk.e1]
    motor, prop = block.motors, block.props
    n_c, n_e, n_m, n_q = len(pack), len(esc), len(motor), len(prop)
    n_r = float(mission.rotor_count)
    kf = k.astype(np.float64)
    cells = pk.cells_series[pack]
    full_v = pk.full_voltage_per_cell_v[pack]
    capacity = pk.capacity_ah[pack] * kf
    config = np.stack([
        cells * open_circuit_voltage_per_cell_v(mission.cruise_state_of_charge, full_v),
        cells * open_circuit_voltage_per_cell_v(mission.low_state_of_charge, full_v),
        cells * open_circuit_voltage_per_cell_v(1.0, full_v),
        cells * pk.cell_resistance_ohm[pack] / (pk.cells_parallel[pack] * kf),
        capacity,
        mission.pack_current_fraction * pk.max_continuous_c[pack] * capacity,
        (mission.frame_mass_kg + mission.payload_kg) + kf * pk.mass_kg[pack],  # sizing.all_up_mass_kg's first term
    ])
    constants = es.constants
    escs = np.stack([np.broadcast_to(np.asarray(v, dtype=np.float64), es.ids.shape)[esc] for v in (
        constants.on_path_resistance_ohm, constants.switching_per_v_a, constants.dead_time_v, constants.ripple_s2,
        constants.input_esr_ohm, constants.pwm_loss_coefficient, es.continuous_current_a, es.mass_kg)])
    motors = np.stack([mo.kv_rpm_per_v[motor] * (2.0 * np.pi / 60.0), mo.resistance_ohm[motor],
                       mo.no_load_current_a[motor], mo.inductance_h[motor], mo.max_current_a[motor],
                       mo.mass_kg[motor]])
    distinct, esc_group = np.unique(escs[0], return_inverse=True)
    pr_rank, er_rank, mr_rank, qr_rank = keys.ranks
    key_c = ((pr_rank[pack] * keys.k_max + (k.astype(np.int64) - 1)) * len(er_rank)) * len(mr_rank) * len(qr_rank)
    key_e = er_rank[esc] * (len(mr_rank) * len(qr_rank))
    key_m = mr_rank[motor] * len(qr_rank)
    left = math.nan if mission.min_thrust_to_weight_motor_out is None else float(
        motor_out.worst_thrust_fraction(mission.rotor_count))
    settings = np.array([
        n_r,
        float(STANDARD_GRAVITY_M_S2 * np.asarray(mission.thrust_per_weight, dtype=np.float64) / n_r),
        mission.duty_min, mission.duty_max, mission.min_thrust_to_weight, left,
        math.nan if mission.min_thrust_to_weight_motor_out is None else mission.min_thrust_to_weight_motor_out,
        math.nan if mission.max_all_up_mass_kg is None else 1000.0 * mission.max_all_up_mass_kg,
        mission.esc_current_margin, mission.usable_fraction * 60.0, mission.min_endurance_min,
        n_r / STANDARD_GRAVITY_M_S2, 1000.0 / STANDARD_GRAVITY_M_S2,
        *_flight_settings(mission),
    ], dtype=np.float64)
    diameter = model.diameter_m[prop]
    prop_lanes = np.stack([disk_area_m2(diameter), 0.5 * diameter])
    size = n_c * n_e * n_m * n_q
    patterns = np.zeros(1 << len(_CHECKED), dtype=np.int64)
    examples = np.full((len(REASONS) + 1, EXAMPLES_PER_REASON), _NO_KEY, dtype=np.int64)
    feasible = np.empty(size, dtype=np.int64)
    metrics = np.empty((5, size), dtype=np.float64)
    def f64(a: np.ndarray) -> np.ndarray:
        return np.ascontiguousarray(a, dtype=np.float64)

    def i64(a: np.ndarray) -> np.ndarray:
        return np.ascontiguousarray(a, dtype=np.int64)

    lanes = [f64(knots[prop].T) for knots in (model.thrust_knots, model.speed_knots, model.torque_knots)]
    found = _screen_loop(
        f64(config), f64(escs), f64(motors), np.ascontiguousarray(prop, dtype=np.intp), f64(pr.mass_kg[prop]),
        f64(distinct), np.ascontiguousarray(esc_group.ravel(), dtype=np.intp), i64(key_c), i64(key_e), i64(key_m),
        i64(qr_rank[prop]), settings, f64(prop_lanes), f64(model.kt), f64(model.kq), lanes[0], lanes[1], lanes[2],
        f64(model.speed_knots), f64(model.torque_knots), f64(model.ct_a), f64(model.ct_b), f64(model.cp_a),
        f64(model.cp_b), f64(model.cp_mid), f64(model.seg_lo), f64(model.seg_hi), f64(model.seg_root_thrust_lo),
        f64(model.seg_root_thrust_hi), _FIRST_CODE, patterns, examples, feasible, metrics)
    counts = np.bincount(_FIRST_CODE, weights=patterns, minlength=len(REASONS) + 1).astype(np.int64)
    violations = np.zeros(len(REASONS), dtype=np.int64)
    violations[_CHECKED_CODES - 1] = patterns @ _PATTERN_BITS
    kept = examples != _NO_KEY
    codes = np.broadcast_to(np.arange(len(REASONS) + 1)[:, None], examples.shape)
    order = np.argsort(feasible[:found], kind="stable")
    metrics = metrics[:, :found][:, order]
    return FusedChunk(size=size, counts=counts, violations=violations, example_codes=codes[kept],
                      example_keys=examples[kept], feasible=feasible[:found][order], electrical_power_w=metrics[0],
                      endurance_min=metrics[1], specific_thrust_g_per_w=metrics[2], thrust_to_weight=metrics[3],
                      mass_kg=metrics[4])


def _flight_settings(mission: MissionSpec) -> list[float]:
    """The multirotor flight state's constants (forward_flight.craft_thrust_n and flight_state): whether there is
    one, horizontal airspeed V and climb rate V_c [m/s], air density [kg/m^3], the induced-power factor, and the
    drag terms ``D V / V_rel`` [N] and ``D / V_rel`` [N s/m] of the flight and of level flight (the descent rule)."""
    if not mission.has_flight_state:
        return [0.0] * 8
    rho = mission.density_kg_m3
    v = np.float64(mission.horizontal_airspeed_m_s)
    vc = np.float64(mission.climb_rate_m_s)
    out = [1.0, float(v), float(vc), rho, COAXIAL_INDUCED_FACTOR if mission.coaxial else 1.0]
    for climb in (vc, np.float64(0.0)):  # as forward_flight.craft_thrust_n computes them
        v_rel = np.hypot(v, climb)
        drag = 0.5 * np.float64(rho) * v_rel * v_rel * np.float64(mission.drag_area_m2)
        out.append(float(drag / v_rel if v_rel > 0.0 else 0.0))
    out.insert(6, float(np.float64(out[5]) * v))  # T_x of the flight
    return out


_SETTINGS = 21
"""Length of the settings vector :func:`screen_chunk` passes (13 mission values, 8 flight-state constants)."""


def warm_up() -> None:
    """Compile (or load from numba's cache) the ranking's compiled loops now — this screen's on an empty cube with
    the argument types :func:`screen_chunk` passes, and the Pareto filter's — e.g. before forking screening
    processes, or when a job runner starts (about 0.3 s from the cache, 10 s to compile)."""
    pareto.nondominated(np.zeros((2, 4)))
    f2, i1, f1 = np.zeros((2, 2)), np.zeros(0, dtype=np.intp), np.zeros(0)
    k1 = np.zeros(0, dtype=np.int64)
    _screen_loop(np.zeros((7, 0)), np.zeros((8, 0)), np.zeros((6, 0)), i1, f1, f1, i1, k1, k1, k1, k1,
                 np.zeros(_SETTINGS), np.zeros((2, 0)), f1, f1, f2, f2, f2, f2, f2, f2, f2, f2, f2, f2, f2, f2,
                 f2, f2, _FIRST_CODE,
                 np.zeros(_FIRST_CODE.shape, dtype=np.int64), np.zeros((2, 2), dtype=np.int64), k1, np.zeros((5, 0)))


@jit
def _clip(value: float, lo: float, hi: float) -> float:
    """``np.minimum(np.maximum(value, lo), hi)``: NaN in any argument gives NaN."""
    if value != value or lo != lo or hi != hi:
        return math.nan
    return min(max(value, lo), hi)

@jit
def _lane_step(i: int, value: float, new: float, lo: float, hi: float, values: np.ndarray, previous: np.ndarray,
               active: np.ndarray) -> bool:
    """One lane of a lockstep Newton iteration: ``new`` kept inside ``[lo, hi]`` (NaN stays NaN), stored in
    ``values[i]`` while the lane is active; returns whether the lane goes on.

    A lane stops once its step is below :data:`NEWTON_RTOL` of the iterate (the numpy screen's rule), or below
    :data:`SETTLED_RTOL` after a step at least 1 / :data:`SETTLED_SHRINK` times larger: convergence is then
    quadratic, so the iterate just computed is exact to rounding (one confirming iteration saved). NaN stops.
    Written without branches, so that the loops calling it vectorise.
    """
    new = new if new != new else (lo if new < lo else (hi if new > hi else new))
    step = abs(new - value)
    size = abs(new)
    going = (step > NEWTON_RTOL * size) & ~((step <= SETTLED_RTOL * size) & (step <= SETTLED_SHRINK * previous[i]))
    on = active[i]
    values[i] = new if on else value
    previous[i] = step if on else previous[i]
    going = going & on
    active[i] = going
    return bool(going)


@jit
def _momentum_ratio(ct: float, cp: float) -> float:
    """:func:`server.physics.propeller.momentum_limit_ratio` of a static point (``CT^1.5`` as ``CT sqrt(CT)``)."""
    ratio = _FM_FACTOR * (ct * math.sqrt(ct)) / cp
    return ratio if ct > 0.0 else (math.nan if (ct != ct) | (cp != cp) else 0.0)


@jit
def _full_throttle_lanes(voc: float, loop: float, sag: float, kv: float, i0: float, beta: float,
                         qs: np.ndarray, kt: np.ndarray, kq: np.ndarray, speed_knots_t: np.ndarray,
                         torque_knots_t: np.ndarray, cp_a: np.ndarray, cp_b: np.ndarray, cp_mid: np.ndarray,
                         ct_a: np.ndarray, ct_b: np.ndarray, seg_lo: np.ndarray, seg_hi: np.ndarray, seg: np.ndarray,
                         y: np.ndarray, w1: np.ndarray, w2: np.ndarray, w3: np.ndarray, w4: np.ndarray,
                         prev: np.ndarray, act: np.ndarray, thrust: np.ndarray, current: np.ndarray, bus: np.ndarray,
                         ratio: np.ndarray) -> None:
    """Full-throttle points (d = 1) of one motor on every propeller lane: propeller_segments.full_throttle.

    ``kt`` and ``kq`` are per lane (the propeller of lane i is ``qs[i]``).

    Lanes are solved together (independent Newton chains overlap in the processor), each until its own step is
    small. Writes thrust [N], motor current [A], bus voltage [V] and momentum ratio [-] per lane.
    """
    n = qs.shape[0]
    gamma0 = loop * kv
    drive = voc - loop * i0
    for i in range(n):
        seg[i] = 0
        w3[i] = gamma0 * kq[i]
    for j in range(speed_knots_t.shape[0]):
        for i in range(n):
            seg[i] += (drive - beta * speed_knots_t[j, i]) > w3[i] * torque_knots_t[j, i]
    for i in range(n):
        q = qs[i]
        s = seg[i]
        gamma = w3[i]
        y[i] = 2.0 * drive / (beta + math.sqrt(beta * beta + 4.0 * gamma * cp_mid[q, s] * drive))
        gc = gamma * cp_a[q, s]
        gd = gamma * cp_b[q, s]
        w1[i] = gc
        w2[i] = gd
        w3[i] = seg_lo[q, s]
        w4[i] = seg_hi[q, s]
        prev[i] = math.inf
    for i in range(n):
        act[i] = True
    for _ in range(NEWTON_MAX_ITER):
        busy = False
        for i in range(n):
            v = y[i]
            gc = w1[i]
            gd = w2[i]
            f = ((gd * v + gc) * v + beta) * v - drive
            df = ((3.0 * gd) * v + 2.0 * gc) * v + beta
            busy |= _lane_step(i, v, v - f / df, w3[i], w4[i], y, prev, act)
        if not busy:
            break
    for i in range(n):
        q = qs[i]
        s = seg[i]
        v = y[i]
        if not (drive > 0.0 and math.isfinite(v) and v > 0.0):
            v = math.nan
        ct = ct_a[q, s] + ct_b[q, s] * v
        cp = cp_a[q, s] + cp_b[q, s] * v
        y2 = v * v
        c = i0 + kv * (kq[i] * cp * y2)
        thrust[i] = kt[i] * ct * y2
        current[i] = c
        bus[i] = voc - sag * c
        ratio[i] = _momentum_ratio(ct, cp)


@jit
def _full_throttle(voc: float, loop: float, sag: float, kv: float, i0: float, beta: float, q: int,
                   kt: np.ndarray, kq: np.ndarray, speed_knots: np.ndarray, torque_knots: np.ndarray,
                   cp_a: np.ndarray, cp_b: np.ndarray, cp_mid: np.ndarray, ct_a: np.ndarray, ct_b: np.ndarray,
                   seg_lo: np.ndarray, seg_hi: np.ndarray) -> tuple[float, float, float, float]:
    """(thrust, motor current, bus voltage, momentum ratio) at d = 1 of one candidate (the loss-step band)."""
    drive = voc - loop * i0
    gamma = (loop * kv) * kq[q]
    seg = 0
    for j in range(speed_knots.shape[1]):
        if drive - beta * speed_knots[q, j] > gamma * torque_knots[q, j]:
            seg += 1
    y = 2.0 * drive / (beta + math.sqrt(beta * beta + 4.0 * gamma * cp_mid[q, seg] * drive))
    gc = gamma * cp_a[q, seg]
    gd = gamma * cp_b[q, seg]
    lo = seg_lo[q, seg]
    hi = seg_hi[q, seg]
    for _ in range(NEWTON_MAX_ITER):
        f = ((gd * y + gc) * y + beta) * y - drive
        df = ((3.0 * gd) * y + 2.0 * gc) * y + beta
        new = _clip(y - f / df, lo, hi)
        diff = abs(new - y) / abs(new)
        y = new
        if not diff > NEWTON_RTOL:
            break
    if not (drive > 0.0 and math.isfinite(y) and y > 0.0):
        y = math.nan
    ct = ct_a[q, seg] + ct_b[q, seg] * y
    cp = cp_a[q, seg] + cp_b[q, seg] * y
    y2 = y * y
    current = i0 + kv * (kq[q] * cp * y2)
    return kt[q] * ct * y2, current, voc - sag * current, _momentum_ratio(ct, cp)


@jit
def _extra_w(ripple_w: float, cap_w: float, pwm_w: float, sw_w: float, dt_w: float, bus: float,
             motor_v: float) -> float:
    """esc.extra_loss_below_full_w of one candidate. [W]"""
    u = 1.0 - motor_v / bus
    return (ripple_w * u + cap_w * (1.0 - u) + pwm_w) * u + sw_w * bus + dt_w


@jit
def _keep_example(examples: np.ndarray, code: int, key: int) -> None:
    """Insert ``key`` among the smallest keys of reason ``code`` (a sorted row, :data:`_NO_KEY` where empty)."""
    row = examples[code]
    j = row.shape[0] - 1
    if not key < row[j]:
        return
    while j > 0 and row[j - 1] > key:
        row[j] = row[j - 1]
        j -= 1
    row[j] = key


@jit
def _glauert(m: float, x: float) -> float:
    """forward_flight.glauert_inflow_ratio of one rotor: the largest root ``lam`` of ``lam^2 (m^2 + (x + lam)^2) = 1``
    by the same bracketed Newton iteration, stopped on this rotor's own step."""
    m2 = m * m
    lo = 0.0
    xp = max(x, 0.0) if x == x else x
    hi = min(max(0.0, -x) + 1.0, 1.0 / math.sqrt(m2 + xp * xp)) if (x == x and m == m) else math.nan
    lam = hi
    for _ in range(GLAUERT_MAX_ITER):
        s = x + lam
        g = lam * lam * (m2 + s * s) - 1.0
        dg = 2.0 * lam * (m2 + s * s) + 2.0 * lam * lam * s
        lo = lam if g < 0.0 else lo
        hi = lam if g >= 0.0 else hi
        new = lam - g / dg
        new = new if (new >= lo) & (new <= hi) & math.isfinite(new) else 0.5 * (lo + hi)
        step = abs(new - lam) / max(new, 1e-300)
        lam = new
        if not step > GLAUERT_RTOL:
            break
    return lam if math.isfinite(m) & math.isfinite(x) else math.nan


@jit
def _flight_lane(weight: float, n_r: float, area: float, settings: np.ndarray) -> tuple[float, float, float, float]:
    """One rotor's thrust [N], in-plane free stream [m/s], hover ideal power ``T v_h`` [W] and ideal power [W] in
    the mission's flight state (forward_flight.craft_thrust_n, flight_state; the descent rule)."""
    v, vc, rho, k, per_speed, t_x, per_speed_0 = settings[14], settings[15], settings[16], settings[17], \
        settings[18], settings[19], settings[20]
    total = math.hypot(t_x, weight + per_speed * vc)
    tilt = math.atan2(t_x, weight + per_speed * vc)
    thrust = total / n_r
    v_h = math.sqrt(thrust / (2.0 * rho * area))
    through = v * math.sin(tilt) + vc * math.cos(tilt)
    edgewise = abs(v * math.cos(tilt) - vc * math.sin(tilt))
    lam = _glauert(edgewise / v_h, through / v_h)
    ideal_per_thrust = k * lam * v_h + through
    if vc < 0.0:  # descent: no credit below level flight at the same airspeed
        t_x0 = per_speed_0 * v
        t_z0 = weight + per_speed_0 * 0.0
        tilt_0 = math.atan2(t_x0, t_z0)
        v_h0 = math.sqrt((math.hypot(t_x0, t_z0) / n_r) / (2.0 * rho * area))
        through_0 = v * math.sin(tilt_0) + 0.0 * math.cos(tilt_0)
        edgewise_0 = abs(v * math.cos(tilt_0) - 0.0 * math.sin(tilt_0))
        level = k * _glauert(edgewise_0 / v_h0, through_0 / v_h0) * v_h0 + through_0
        ideal_per_thrust = math.nan if (ideal_per_thrust != ideal_per_thrust) | (level != level) else \
            max(ideal_per_thrust, level)
    return thrust, edgewise, thrust * v_h, thrust * ideal_per_thrust


@jit
def _verdict_bits(m_kg: float, reachable: bool, momentum: float, duty: float, bus_v: float, bus_current: float,
                  thrust: float, low_thrust: float, low_mr: float, full_mr: float, low_bus: float, full_bus: float,
                  full_current: float, voc_low: float, voc_full: float, capacity: float, pack_limit: float,
                  motor_rating: float, esc_rating: float, settings: np.ndarray, metrics_lane: np.ndarray,
                  i: int) -> int:
    """The checks of constraints.operating_checks as bits (bit k set: ``_CHECKED[k]`` failed; NaN fails every
    check), and the lane's metrics (power [W], endurance [min], specific thrust [g/W], thrust-to-weight [-])."""
    n_r, duty_min, duty_max, min_tw = settings[0], settings[2], settings[3], settings[4]
    mo_left, mo_floor, max_mass_g = settings[5], settings[6], settings[7]
    esc_margin, usable_60, min_endurance = settings[8], settings[9], settings[10]
    per_rotor_power = bus_v * bus_current
    tw = settings[11] * low_thrust / m_kg
    endurance = usable_60 * capacity / (n_r * bus_current)
    metrics_lane[0, i] = n_r * per_rotor_power
    metrics_lane[1, i] = endurance
    metrics_lane[2, i] = settings[12] * thrust / per_rotor_power
    metrics_lane[3, i] = tw
    # np.fmax over the cruise and the two full-throttle points
    momentum = low_mr if (momentum != momentum) | (low_mr > momentum) else momentum
    momentum = full_mr if (momentum != momentum) | (full_mr > momentum) else momentum
    r1 = low_bus / voc_low
    r2 = full_bus / voc_full
    bus_ratio = math.nan if (r1 != r1) | (r2 != r2) else min(r1, r2)
    bits = 0
    bits |= ((max_mass_g == max_mass_g) & ~(1000.0 * m_kg <= max_mass_g)) * 1
    bits |= (not reachable) * 2
    bits |= (not momentum <= 1.0) * 4
    bits |= (not ((duty >= duty_min) & (duty <= duty_max))) * 8
    bits |= (not bus_ratio >= BUS_COLLAPSE_FRACTION) * 16
    bits |= (not tw >= min_tw) * 32
    bits |= ((mo_floor == mo_floor) & ~(mo_left * tw >= mo_floor)) * 64
    bits |= (not full_current <= motor_rating) * 128
    bits |= (not esc_margin * full_current <= esc_rating) * 256
    bits |= (not n_r * full_current <= pack_limit) * 512
    bits |= (not endurance >= min_endurance) * 1024
    return int(bits)


@jit
def _screen_loop(config: np.ndarray, esc: np.ndarray, motor: np.ndarray, qs: np.ndarray,  # noqa: C901
                 prop_mass: np.ndarray, distinct: np.ndarray, esc_group: np.ndarray, key_c: np.ndarray,
                 key_e: np.ndarray, key_m: np.ndarray, key_q: np.ndarray, settings: np.ndarray,
                 prop_lanes: np.ndarray, kt: np.ndarray,
                 kq: np.ndarray, thrust_knots_t: np.ndarray, speed_knots_t: np.ndarray, torque_knots_t: np.ndarray,
                 speed_knots: np.ndarray, torque_knots: np.ndarray, ct_a: np.ndarray, ct_b: np.ndarray,
                 cp_a: np.ndarray, cp_b: np.ndarray, cp_mid: np.ndarray, seg_lo: np.ndarray, seg_hi: np.ndarray,
                 root_lo: np.ndarray, root_hi: np.ndarray, first_code: np.ndarray, patterns: np.ndarray,
                 examples: np.ndarray, feasible: np.ndarray, metrics: np.ndarray) -> int:
    """Screen the cube (configuration x ESC x motor x propeller); returns the number of feasible candidates written.

    ``patterns[b]`` counts the candidates whose failed checks are the bit pattern ``b`` (bit k: ``_CHECKED[k]``);
    ``first_code[b]`` is the reason code of the lowest bit (0 for no bit).
    """
    n_c = config.shape[1]
    n_e = esc.shape[1]
    n_m = motor.shape[1]
    n_q = qs.shape[0]
    n_u = distinct.shape[0]
    n_r, thrust_factor = settings[0], settings[1]
    low_thrust = np.empty((n_u, n_q))
    low_current = np.empty((n_u, n_q))
    low_bus = np.empty((n_u, n_q))
    low_mr = np.empty((n_u, n_q))
    full_thrust = np.empty((n_u, n_q))
    full_current = np.empty((n_u, n_q))
    full_bus = np.empty((n_u, n_q))
    full_mr = np.empty((n_u, n_q))
    seg = np.empty(n_q, dtype=np.intp)
    y = np.empty(n_q)
    w1 = np.empty(n_q)
    w2 = np.empty(n_q)
    w3 = np.empty(n_q)
    w4 = np.empty(n_q)
    prev = np.empty(n_q)
    settled = np.empty(n_q, dtype=np.bool_)
    bus = np.empty(n_q)
    drawn = np.empty(n_q)
    motor_v = np.empty(n_q)
    current = np.empty(n_q)
    ripple = np.empty(n_q)
    cap = np.empty(n_q)
    pwm = np.empty(n_q)
    ct_arr = np.empty(n_q)
    cp_arr = np.empty(n_q)
    tau_arr = np.empty(n_q)
    mass = np.empty(n_q)
    thrust_l = np.empty(n_q)
    edgewise = np.empty(n_q)
    hover_ideal_w = np.empty(n_q)
    ideal_w = np.empty(n_q)
    flying = settings[13] != 0.0
    kt_l = np.empty(n_q)  # the propellers' constants per lane (contiguous, no gather in the lane loops)
    kq_l = np.empty(n_q)
    for i in range(n_q):
        kt_l[i] = kt[qs[i]]
        kq_l[i] = kq[qs[i]]
    bits = np.empty(n_q, dtype=np.int64)
    jumped = np.empty(n_q, dtype=np.bool_)
    metrics_lane = np.empty((4, n_q))
    act = np.empty(n_q, dtype=np.bool_)
    found = 0
    for ic in range(n_c):
        voc, voc_low, voc_full = config[0, ic], config[1, ic], config[2, ic]
        r_pack, capacity, pack_limit, base_mass = config[3, ic], config[4, ic], config[5, ic], config[6, ic]
        load = n_r * r_pack
        rounding = FULL_THROTTLE_SLACK_RTOL * voc
        half = 0.5 * voc
        for im in range(n_m):
            kv, r_motor, i0, inductance, motor_rating, motor_mass = motor[0, im], motor[1, im], motor[2, im], \
                motor[3, im], motor[4, im], motor[5, im]
            beta = _RPM_TO_RAD_S / kv
            for u in range(n_u):
                loop = (r_motor + distinct[u]) + load
                _full_throttle_lanes(voc_low, loop, load, kv, i0, beta, qs, kt_l, kq_l, speed_knots_t, torque_knots_t,
                                     cp_a, cp_b, cp_mid, ct_a, ct_b, seg_lo, seg_hi, seg, y, w1, w2, w3, w4, prev,
                                     act, low_thrust[u], low_current[u], low_bus[u], low_mr[u])
                _full_throttle_lanes(voc_full, loop, load, kv, i0, beta, qs, kt_l, kq_l, speed_knots_t, torque_knots_t,
                                     cp_a, cp_b, cp_mid, ct_a, ct_b, seg_lo, seg_hi, seg, y, w1, w2, w3, w4, prev,
                                     act, full_thrust[u], full_current[u], full_bus[u], full_mr[u])
            for ie in range(n_e):
                u = esc_group[ie]
                r_on, sw_coef, dt_coef, ripple_s2, esr, k_pwm, esc_rating, esc_mass = esc[0, ie], esc[1, ie], \
                    esc[2, ie], esc[3, ie], esc[4, ie], esc[5, ie], esc[6, ie], esc[7, ie]
                series = r_motor + r_on
                ripple_k = series * (ripple_s2 / (inductance * inductance))
                key_cem = key_c[ic] + key_e[ie] + key_m[im]
                # --- speed for the thrust on every propeller lane (propeller_segments.speed_for_thrust, rpm)
                for i in range(n_q):
                    m_kg = base_mass + n_r * (esc_mass + (motor_mass + prop_mass[i]))
                    mass[i] = m_kg
                    if flying:  # the multirotor flight state (forward_flight.flight_state) and its thrust
                        t, edge, hover_ideal, ideal = _flight_lane(m_kg * STANDARD_GRAVITY_M_S2, n_r,
                                                                   prop_lanes[0, i], settings)
                        edgewise[i] = edge
                        hover_ideal_w[i] = hover_ideal
                        ideal_w[i] = ideal
                    else:
                        t = m_kg * thrust_factor
                    thrust_l[i] = t
                    tau_arr[i] = t / kt_l[i]
                    seg[i] = 0
                for j in range(thrust_knots_t.shape[0]):
                    for i in range(n_q):
                        seg[i] += tau_arr[i] >= thrust_knots_t[j, i]
                for i in range(n_q):
                    q = qs[i]
                    s = seg[i]
                    a = ct_a[q, s]
                    b = ct_b[q, s]
                    lo = seg_lo[q, s]
                    hi = seg_hi[q, s]
                    tau = tau_arr[i]
                    if b == 0.0:
                        y[i] = math.sqrt(tau / a)
                    else:
                        r_lo = root_lo[q, s]
                        y[i] = lo + (hi - lo) * (math.sqrt(tau) - r_lo) / (root_hi[q, s] - r_lo)
                    w1[i] = a
                    w2[i] = b
                    w3[i] = lo
                    w4[i] = hi
                    prev[i] = math.inf
                for i in range(n_q):
                    act[i] = True
                for _ in range(NEWTON_MAX_ITER):
                    busy = False
                    for i in range(n_q):
                        v = y[i]
                        a = w1[i]
                        b = w2[i]
                        f = (b * v + a) * (v * v) - tau_arr[i]
                        df = ((3.0 * b) * v + 2.0 * a) * v
                        busy |= _lane_step(i, v, v - f / df, w3[i], w4[i], y, prev, act)
                    if not busy:
                        break
                # --- motor state and the bus start (drive_screen.cruise_point)
                for i in range(n_q):
                    q = qs[i]
                    s = seg[i]
                    v = y[i]
                    if not (math.isfinite(v) and v > 0.0):
                        v = math.nan
                    ct_arr[i] = w1[i] + w2[i] * v
                    cp = cp_a[q, s] + cp_b[q, s] * v
                    cp_arr[i] = cp
                    torque = (kq_l[i] * cp) * (v * v)
                    if flying:  # forward_flight.shaft_torque_nm: the static power corrected to the flight state
                        omega = v * _RPM_TO_RAD_S
                        mu = edgewise[i] / (omega * prop_lanes[1, i])
                        power = (torque * omega - hover_ideal_w[i]) * (1.0 + PROFILE_POWER_GROWTH * mu * mu) \
                            + ideal_w[i]
                        torque = power / omega
                    c = i0 + kv * torque
                    mv = v * beta + c * series
                    current[i] = c
                    motor_v[i] = mv
                    ripple[i] = ripple_k * (mv * mv)
                    cap[i] = esr * (c * c)
                    pwm[i] = k_pwm * (c * mv)
                    d = load * (mv * c)
                    drawn[i] = d
                    bus[i] = 0.5 * (voc + math.sqrt(voc * voc - 4.0 * d))
                    settled[i] = False
                    prev[i] = math.inf
                # --- the bus voltage with every loss term, Newton per lane
                for i in range(n_q):
                    act[i] = True
                for _ in range(BUS_MAX_ITER):
                    busy = False
                    for i in range(n_q):
                        vb = bus[i]
                        mv = motor_v[i]
                        c = current[i]
                        rw = ripple[i]
                        cw = cap[i]
                        pw = pwm[i]
                        sw = sw_coef * c
                        inv = 1.0 / vb
                        ratio = mv * inv
                        uu = 1.0 - ratio
                        extra = (rw * uu + cw * (1.0 - uu) + pw) * uu + sw * vb + dt_coef * c
                        slope = (2.0 * (rw - cw) * uu + cw + pw) * ratio * inv + sw
                        h = vb * (vb - voc) + drawn[i] + load * extra
                        dh = 2.0 * vb - voc + load * slope
                        busy |= _lane_step(i, vb, vb - h / dh, -math.inf, math.inf, bus, prev, act)
                    if not busy:
                        break
                for i in range(n_q):  # settled: stopped by its own rule, or out of iterations after a small step
                    settled[i] = (not act[i]) or prev[i] <= BUS_CONVERGED_RTOL * abs(bus[i])
                # --- the verdict of every lane: metrics and a bit per failed check (bit k: _CHECKED[k])
                for i in range(n_q):
                    m_kg = mass[i]
                    c = current[i]
                    mv = motor_v[i]
                    rw = ripple[i]
                    cw = cap[i]
                    pw = pwm[i]
                    sw = sw_coef * c
                    dt = dt_coef * c
                    vb = bus[i]
                    slack = voc - mv - load * c
                    at_duty_one = mv >= half
                    h_half = half * (half - voc) + drawn[i] + load * _extra_w(rw, cw, pw, sw, dt, half, mv)
                    solvable = math.isfinite(slack) & ((at_duty_one & (slack >= -rounding))
                                                       | (~at_duty_one & (h_half <= 0.0)))
                    at_full = solvable & at_duty_one & (slack <= rounding)
                    jump = solvable & at_duty_one & ~at_full & (load > 0.0) \
                        & (load * _extra_w(rw, cw, pw, sw, dt, mv, mv) >= mv * slack)
                    vb = mv if at_full else vb
                    duty = mv / vb
                    reachable = solvable & ~jump & (settled[i] | at_full) & math.isfinite(vb) & (duty > 0.0) \
                        & (duty <= 1.0)
                    extra = 0.0 if at_full else _extra_w(rw, cw, pw, sw, dt, vb, mv)
                    bus_current = duty * c + extra / vb
                    if not reachable | jump:  # no balanced bus voltage: NaN, as drive_screen.cruise_point
                        vb = duty = bus_current = math.nan
                    thrust = thrust_l[i]
                    momentum = _momentum_ratio(ct_arr[i], cp_arr[i])
                    bits[i] = _verdict_bits(
                        m_kg, reachable, momentum, duty, vb, bus_current, thrust, low_thrust[u, i], low_mr[u, i],
                        full_mr[u, i], low_bus[u, i], full_bus[u, i], full_current[u, i], voc_low, voc_full,
                        capacity, pack_limit, motor_rating, esc_rating, settings, metrics_lane, i)
                    jumped[i] = jump
                for i in range(n_q):  # the loss-step band just below d = 1: the full-throttle point (_saturate)
                    if jumped[i]:
                        thrust, bus_current, vb, momentum = _full_throttle(
                            voc, series + load, load, kv, i0, beta, qs[i], kt, kq, speed_knots, torque_knots, cp_a,
                            cp_b, cp_mid, ct_a, ct_b, seg_lo, seg_hi)
                        bits[i] = _verdict_bits(
                            mass[i], math.isfinite(vb), momentum, 1.0, vb, bus_current, thrust, low_thrust[u, i],
                            low_mr[u, i], full_mr[u, i], low_bus[u, i], full_bus[u, i], full_current[u, i], voc_low,
                            voc_full, capacity, pack_limit, motor_rating, esc_rating, settings, metrics_lane, i)
                # --- counts (a histogram of bit patterns), examples and the feasible candidates
                key_cem = key_c[ic] + key_e[ie] + key_m[im]
                position = ((ic * n_e + ie) * n_m + im) * n_q
                for i in range(n_q):
                    pattern = bits[i]
                    patterns[pattern] += 1
                    if pattern != 0:
                        _keep_example(examples, first_code[pattern], key_cem + key_q[i])
                    else:
                        feasible[found] = position + i
                        for r in range(4):
                            metrics[r, found] = metrics_lane[r, i]
                        metrics[4, found] = mass[i]
                        found += 1
    return found
