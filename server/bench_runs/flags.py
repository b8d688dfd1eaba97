"""Flag bench samples that must not feed a calibration, each with a reason.

A flagged sample stays in the run (the page shows it, struck through, with the reason) but is left out of
every fit. Two families:

- **collapsed supply** (:attr:`FlagReason.SUPPLY_COLLAPSED`): a bench supply (or a tired pack) that hits
  its current limit lets the bus voltage fall; the motor then gets less voltage than the throttle asks for
  and thrust stops rising. Such rows look like a weak motor at full throttle and would corrupt Kv, R and
  the headroom. Detected when the current sits at the run's plateau while the bus voltage is markedly
  below the run's own low-load trend (``V = V0 - R_src I`` fitted on the lower-current samples), or a
  little below it while thrust no longer rises;
- **inconsistent or empty rows**: rpm 0 (or missing) while the propeller makes thrust, rotation without any
  supply current or without thrust, an rpm reading that does not fit the thrust (thrust / rpm^2, a CT
  proxy, 3x off the run's median: the tachometer has not locked on yet), and a motor that has not started;
- **load-cell zero offset** (:attr:`FlagReason.THRUST_OFFSET`): a thrust reading slightly below zero, within
  :func:`idle_thrust_tolerance_n` (the CSV parser rejects anything further below zero, and a run that is
  negative throughout, :func:`looks_reversed`, gets its own message).

Everything is vectorised over the samples of one run and pure.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import StrEnum

import numpy as np

from server.physics._types import ArrayLike, FloatArray, as_float_array

SAG_THRESHOLD = 0.025
"""Bus voltage more than this fraction below the low-load trend, at the current plateau, is a collapse."""
STALLED_SAG_THRESHOLD = 0.01
"""A smaller sag suffices when thrust has also stopped rising."""
PLATEAU_FRACTION = 0.95
"""Current at or above this fraction of the run's maximum counts as sitting at the plateau/limit."""
STALL_GAIN = 0.05
"""Thrust rising by less than this fraction over the best earlier sample counts as stalled."""
TREND_CURRENT_FRACTION = 0.6
"""Samples up to this fraction of the maximum current define the low-load voltage trend."""
CT_PROXY_FACTOR = 3.0
"""A row whose thrust / rpm^2 is this factor above or below the run's median is inconsistent."""
MIN_THRUST_N = 0.02
"""Thrust above this with no rotation is inconsistent; at or below it the motor counts as stopped. [N]"""
MIN_TURNING_RPM = 100.0
"""An rpm reading below this counts as a stopped shaft (or a tachometer that has not locked on). [rpm]

The published 5-inch sweeps (tests/data/reference/bench-5in) report 1-2 rpm with the motor stopped, and 4-29 rpm
beside 0.08-0.13 N of thrust where the tachometer has not caught the spinning motor yet; a real propeller turns at
well over 1000 rpm once it makes thrust. Counted as turning, a 1-2 rpm idle row gives an absurd CT (thrust / rpm^2)
and put a knot of the calibrated CT table at 1-2 rpm.
"""
IDLE_THRUST_TOLERANCE_N = 0.05
"""A thrust reading down to this far below zero is the load cell's zero offset, not an error. [N]

Chosen from the published 5-inch bench sweeps (tests/data/reference/bench-5in, P. Cao and J. Strawson 2018): at
each sweep's first step with the motor stopped (rpm 0 or a tachometer reading of 1-2 rpm), 38 of the 131 idle
readings of the runs that make thrust are negative, the lowest -0.0201 N (about 2 gf). 0.05 N (5.1 gf) is two and
a half times that: every published idle reading passes, and a loaded point never comes near it (those sweeps' peak
thrusts are 0.95-4.6 N). tests/bench_runs/test_idle_thrust.py recomputes these figures.
"""
IDLE_THRUST_TOLERANCE_FRACTION = 0.01
"""Above 5 N of peak thrust the allowance grows as this fraction of the run's largest thrust: a stand for bigger
propellers carries a load cell with a larger range and a larger zero offset. The published offsets reach 1.05 %
of their run's peak (the weakest run), so 1 % keeps the same proportion; the published runs themselves stay under
the 0.05 N floor. Our choice (common practice, no source). [-]"""


class FlagReason(StrEnum):
    """Why a sample is left out of calibration (stable codes for the database and the UI)."""

    SUPPLY_COLLAPSED = "supply_collapsed"
    RPM_MISSING = "rpm_missing"
    NO_CURRENT = "no_current"
    NO_THRUST = "no_thrust"
    RPM_IMPLAUSIBLE = "rpm_implausible"
    MOTOR_STOPPED = "motor_stopped"
    THRUST_OFFSET = "thrust_offset"


REASON_TEXT = {
    FlagReason.SUPPLY_COLLAPSED: "bus voltage collapsed below the run's low-load level while the current sat at "
                                 "its limit and thrust stopped rising (supply limit, not motor behaviour)",
    FlagReason.RPM_MISSING: "rpm is 0, missing or below 100 while the propeller makes thrust (the tachometer has "
                            "not locked on)",
    FlagReason.NO_CURRENT: "the motor turns but the supply current is 0",
    FlagReason.NO_THRUST: "the motor turns but thrust is 0 or negative (load-cell offset or missing channel)",
    FlagReason.RPM_IMPLAUSIBLE: "thrust per rpm^2 (a CT proxy) is more than 3x off the run's typical value: "
                                "the rpm reading (or thrust) is wrong for this row",
    FlagReason.MOTOR_STOPPED: "rpm (nearly) 0 and no thrust: the motor has not started (nothing to fit)",
    FlagReason.THRUST_OFFSET: "thrust slightly below zero, within the load cell's zero offset at idle (kept as "
                              "measured, not fitted)",
}


@dataclass(frozen=True)
class SampleFlags:
    """Per-sample flags of one run (same order as the input arrays).

    ``reasons[i]`` is a tuple of :class:`FlagReason` (empty when the sample is usable); ``expected_bus_voltage_v``
    is the low-load trend the collapse test compared against (NaN when the run is too short to fit one).
    """

    reasons: tuple[tuple[FlagReason, ...], ...]
    expected_bus_voltage_v: FloatArray

    @property
    def usable(self) -> np.ndarray:
        """Samples no flag excludes."""
        return np.array([not r for r in self.reasons], dtype=bool)

    def mask(self, reason: FlagReason) -> np.ndarray:
        """Samples carrying ``reason``."""
        return np.array([reason in r for r in self.reasons], dtype=bool)

    @property
    def count(self) -> int:
        return int(np.sum(~self.usable))


def idle_thrust_tolerance_n(thrust_n: ArrayLike) -> float:
    """How far below zero a run's thrust readings may sit and still count as the load cell's zero offset.

    Parameters
    ----------
    thrust_n : array_like
        Thrust of every sample of one run (NaN ignored). [N]

    Returns
    -------
    float
        ``max(IDLE_THRUST_TOLERANCE_N, IDLE_THRUST_TOLERANCE_FRACTION × largest positive thrust)``. [N]
    """
    t = as_float_array(thrust_n).ravel()
    peak = float(np.nanmax(t, initial=0.0)) if t.size else 0.0
    return max(IDLE_THRUST_TOLERANCE_N, IDLE_THRUST_TOLERANCE_FRACTION * max(peak, 0.0))


def looks_reversed(thrust_n: ArrayLike) -> bool:
    """True when a run's thrust is negative throughout: some readings below the idle tolerance and none above it
    (a load cell mounted or wired the other way round)."""
    t = as_float_array(thrust_n).ravel()
    tolerance = idle_thrust_tolerance_n(t)
    return bool(np.any(t < -tolerance)) and not bool(np.any(t > tolerance))


def _low_load_trend(voltage: FloatArray, current: FloatArray) -> tuple[float, float]:
    """``V = V0 - R_src I`` fitted on the low-current samples; R_src clipped at >= 0."""
    limit = TREND_CURRENT_FRACTION * np.max(current)
    low = current <= limit
    if np.count_nonzero(low) >= 3 and np.ptp(current[low]) > 0.0:
        slope, intercept = np.polyfit(current[low], voltage[low], 1)
        return float(intercept), float(max(-slope, 0.0))
    # too few low-load samples: the highest voltage seen is the open-circuit level, no sag allowed for
    return float(np.max(voltage)), 0.0


def supply_collapse(throttle: ArrayLike, bus_voltage_v: ArrayLike, bus_current_a: ArrayLike,
                    thrust_n: ArrayLike) -> tuple[np.ndarray, FloatArray]:
    """Detect collapsed-supply samples of one run.

    Parameters
    ----------
    throttle : array_like
        Commanded throttle (sets the order of the sweep). [-]
    bus_voltage_v, bus_current_a : array_like
        ESC input voltage [V] and current [A].
    thrust_n : array_like
        Thrust. [N]

    Returns
    -------
    collapsed : ndarray of bool
        Samples whose current is within :data:`PLATEAU_FRACTION` of the run maximum and whose voltage is more
        than :data:`SAG_THRESHOLD` below the low-load trend, or more than :data:`STALLED_SAG_THRESHOLD` below
        it while thrust has not risen by :data:`STALL_GAIN` over every lower-throttle sample.
    expected_bus_voltage_v : ndarray
        The low-load trend ``V0 - R_src I`` at each sample. [V]
    """
    thr, v, i, t = (as_float_array(a).ravel() for a in (throttle, bus_voltage_v, bus_current_a, thrust_n))
    n = thr.size
    if n == 0:
        return np.zeros(0, dtype=bool), np.zeros(0)
    v0, r_src = _low_load_trend(v, i)
    expected = v0 - r_src * i
    order = np.argsort(thr, kind="stable")
    t_sorted = t[order]
    best_before = np.concatenate([[-np.inf], np.maximum.accumulate(t_sorted)[:-1]])
    stalled_sorted = t_sorted < best_before * (1.0 + STALL_GAIN)
    stalled = np.empty(n, dtype=bool)
    stalled[order] = stalled_sorted
    sag = 1.0 - v / expected
    plateau = i >= PLATEAU_FRACTION * np.max(i)
    return plateau & ((sag > SAG_THRESHOLD) | (stalled & (sag > STALLED_SAG_THRESHOLD))), expected


def flag_samples(throttle: ArrayLike, bus_voltage_v: ArrayLike, bus_current_a: ArrayLike, rpm: ArrayLike,
                 thrust_n: ArrayLike) -> SampleFlags:
    """Flag the samples of one run that must not be used for calibration.

    Parameters
    ----------
    throttle : array_like
        Commanded throttle 0..1. [-]
    bus_voltage_v, bus_current_a : array_like
        ESC input voltage [V] and current [A].
    rpm : array_like
        Shaft speed; NaN or below :data:`MIN_TURNING_RPM` counts as not turning. [rpm]
    thrust_n : array_like
        Thrust. [N]

    Returns
    -------
    SampleFlags
        One tuple of reasons per sample (empty = usable).
    """
    thr, v, i, speed, t = (as_float_array(a).ravel() for a in (throttle, bus_voltage_v, bus_current_a, rpm,
                                                               thrust_n))
    collapsed, expected = supply_collapse(thr, v, i, t)
    turning = np.isfinite(speed) & (speed >= MIN_TURNING_RPM)
    loaded = turning & (t > MIN_THRUST_N)
    with np.errstate(divide="ignore", invalid="ignore"):
        ct_proxy = np.where(loaded, t / speed**2, np.nan)
    strong = loaded & (t >= 0.2 * np.max(t, initial=0.0))
    typical = float(np.median(ct_proxy[strong])) if strong.any() else np.nan
    implausible = loaded & ((ct_proxy > CT_PROXY_FACTOR * typical) | (ct_proxy < typical / CT_PROXY_FACTOR))
    checks = (
        (FlagReason.SUPPLY_COLLAPSED, collapsed),
        (FlagReason.RPM_MISSING, ~turning & (t > MIN_THRUST_N)),
        (FlagReason.NO_CURRENT, turning & (i <= 0.0)),
        (FlagReason.NO_THRUST, turning & (t <= 0.0)),
        (FlagReason.RPM_IMPLAUSIBLE, implausible),
        (FlagReason.MOTOR_STOPPED, ~turning & (t <= MIN_THRUST_N)),
        (FlagReason.THRUST_OFFSET, (t < 0.0) & (t >= -idle_thrust_tolerance_n(t))),
    )
    reasons = tuple(tuple(reason for reason, mask in checks if mask[k]) for k in range(thr.size))
    return SampleFlags(reasons=reasons, expected_bus_voltage_v=expected)
