"""Flight profiles: one pack discharged through a sequence of flight segments in order.

A profile is a list of segments (take-off climb, transit, survey legs, descent, a reserve ...), each flown for
a known time at a known thrust per rotor. The state of charge, and with it the open-circuit voltage and the
sag, carries over from one segment to the next. Each segment is cut into sub-steps of at most
:data:`MAX_SUBSTEP_S`; a sub-step is integrated with the midpoint rule in time (coulomb counting, Plett 2015
[1]): the operating point is solved at the sub-step's start to predict the state of charge at its middle,
solved again there, and that middle current drains the pack for the whole sub-step. Peukert's correction is
applied as in :mod:`.endurance`.

The flight stops at the first sub-step point where

- ``USABLE_CAPACITY``: the state of charge falls below ``1 - usable_fraction``,
- ``CUTOFF_VOLTAGE``: the terminal voltage per cell under load is below the cut-off,
- ``THRUST_UNREACHABLE``: the segment's thrust needs duty > 1 (no operating point).

The caller supplies the operating point (``state_at(segment, soc)``): the ranking engine passes its screening
solver, predict and the brute-force reference pass the physics engine's bracketed solver, so the same march
serves both. Sub-step counts depend on the segment durations only (never on the candidates), so a candidate
gets the same numbers alone and in a batch.

References
----------
.. [1] G. L. Plett, *Battery Management Systems, Vol. I: Battery Modeling*, Artech House, 2015.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from enum import IntEnum

import numpy as np

from ._types import SECONDS_PER_HOUR_S, FloatArray
from .battery import PackParams, peukert_effective_current_a

MAX_SUBSTEP_S = 60.0
"""Longest sub-step of a segment [s]: 60 s keeps the profile energy within 0.1 % of a 1 s march on the
check cases (tests/physics/test_profile.py)."""


class ProfileStop(IntEnum):
    """How a profile ended."""

    COMPLETED = 0
    USABLE_CAPACITY = 1
    CUTOFF_VOLTAGE = 2
    THRUST_UNREACHABLE = 3


STOP_TEXT = {
    ProfileStop.COMPLETED: "completed",
    ProfileStop.USABLE_CAPACITY: "usable capacity used up",
    ProfileStop.CUTOFF_VOLTAGE: "pack voltage under load below the cut-off",
    ProfileStop.THRUST_UNREACHABLE: "segment thrust not reachable (duty > 1)",
}


@dataclass(frozen=True)
class LegState:
    """The operating point of every candidate at one state of charge in one segment (batch shape).

    ``pack_current_a``: current drawn from the pack [A]; ``bus_voltage_v``: pack terminal voltage [V];
    ``reachable``: an operating point exists (False also for NaN inputs).
    """

    pack_current_a: FloatArray
    bus_voltage_v: FloatArray
    reachable: np.ndarray


@dataclass(frozen=True)
class ProfileResult:
    """Outcome per candidate (batch shape ``B``; ``S`` segments).

    Attributes
    ----------
    completed : bool, B
        Every segment flown to its end.
    stop_reason : int8, B
        :class:`ProfileStop` code.
    stop_segment : int, B
        Index of the segment in which the flight stopped (``S`` when completed).
    time_s : B
        Time flown until the end or the stop. [s]
    completed_share : B
        ``time_s`` over the profile's whole duration (1 when completed). [-]
    soc_at_boundary : B + (S + 1,)
        State of charge at the start of each segment and at the end (NaN past the stop). [-]
    energy_wh : B + (S,)
        Electrical energy drawn from the pack in each segment, terminal voltage times current (the part
        flown before a stop; NaN for segments never started). [Wh]
    peak_current_a : B
        Highest pack current met. [A]
    min_voltage_per_cell_v : B
        Lowest terminal voltage per cell met. [V]
    """

    completed: np.ndarray
    stop_reason: np.ndarray
    stop_segment: np.ndarray
    time_s: FloatArray
    completed_share: FloatArray
    soc_at_boundary: FloatArray
    energy_wh: FloatArray
    peak_current_a: FloatArray
    min_voltage_per_cell_v: FloatArray

    @property
    def total_energy_wh(self) -> FloatArray:
        """Energy over the segments flown. [Wh]"""
        return np.asarray(np.nansum(self.energy_wh, axis=-1))


def substeps(duration_s: float) -> int:
    """Number of sub-steps of a segment lasting ``duration_s`` (at least one). [-]"""
    return max(1, int(math.ceil(float(duration_s) / MAX_SUBSTEP_S - 1e-9)))


def fly(durations_s: Sequence[float], state_at: Callable[[int, FloatArray], LegState], *, pack: PackParams,
        shape: tuple[int, ...], initial_state_of_charge: float = 1.0) -> ProfileResult:
    """Fly every candidate through the segments of ``durations_s`` in order (see the module docstring).

    Parameters
    ----------
    durations_s : sequence of float
        Duration of each segment, > 0. [s]
    state_at : callable
        ``state_at(i, soc)`` returns the :class:`LegState` of segment ``i`` at state of charge ``soc``
        (batch shape). [-]
    pack : PackParams
        The pack (capacity, cells, usable fraction, cut-off, Peukert), broadcast to ``shape``.
    shape : tuple of int
        Batch shape.
    initial_state_of_charge : float, default 1
        State of charge at take-off. [-]
    """
    durations = [float(d) for d in durations_s]
    if any(not (d > 0.0 and math.isfinite(d)) for d in durations):
        raise ValueError("every segment needs a positive, finite duration")
    n_seg = len(durations)
    capacity = np.broadcast_to(pack.capacity_ah, shape)
    cells = np.broadcast_to(pack.cells_series, shape)
    low = np.broadcast_to(1.0 - pack.usable_fraction, shape)
    cutoff = np.broadcast_to(pack.cutoff_voltage_per_cell_v, shape)
    k_exp = np.broadcast_to(pack.peukert_exponent, shape)
    rated_h = np.broadcast_to(pack.peukert_rated_hours_h, shape)

    soc = np.full(shape, float(initial_state_of_charge))
    running = np.ones(shape, dtype=bool)
    reason = np.full(shape, ProfileStop.COMPLETED, dtype=np.int8)
    stop_segment = np.full(shape, n_seg, dtype=np.intp)
    time = np.zeros(shape)
    boundary = np.full(shape + (n_seg + 1,), np.nan)
    energy = np.full(shape + (n_seg,), np.nan)
    peak = np.zeros(shape)
    v_min = np.full(shape, np.inf)

    def check(i: int, state: LegState, s: FloatArray) -> np.ndarray:
        """Stop the running candidates that fail at this point; returns the ones still running."""
        nonlocal running, reason, stop_segment, peak, v_min
        with np.errstate(invalid="ignore", divide="ignore"):
            reach = np.broadcast_to(state.reachable, shape) & np.isfinite(state.pack_current_a)
            per_cell = np.broadcast_to(state.bus_voltage_v, shape) / cells
            codes = np.where(~reach, ProfileStop.THRUST_UNREACHABLE,
                             np.where(s < low - 1e-12, ProfileStop.USABLE_CAPACITY,
                                      np.where(per_cell < cutoff, ProfileStop.CUTOFF_VOLTAGE,
                                               ProfileStop.COMPLETED)))
        fail = running & (codes != ProfileStop.COMPLETED)
        reason = np.where(fail, codes, reason).astype(np.int8)
        stop_segment = np.where(fail, i, stop_segment)
        running = running & ~fail
        peak = np.where(running, np.fmax(peak, np.broadcast_to(state.pack_current_a, shape)), peak)
        v_min = np.where(running, np.fmin(v_min, per_cell), v_min)
        still: np.ndarray = np.asarray(running, dtype=bool)
        return still

    def drain(state: LegState, h: float) -> FloatArray:
        """State-of-charge drop over ``h`` seconds at this point's current. [-]"""
        i_eff = peukert_effective_current_a(np.broadcast_to(state.pack_current_a, shape), capacity, k_exp, rated_h)
        with np.errstate(invalid="ignore", divide="ignore"):
            out: FloatArray = np.asarray(i_eff * h / (SECONDS_PER_HOUR_S * capacity), dtype=np.float64)
        return out

    for i, duration in enumerate(durations):
        boundary[..., i] = np.where(running, soc, np.nan)
        energy[..., i] = np.where(running, 0.0, np.nan)
        m = substeps(duration)
        h = duration / m
        for _ in range(m):
            if not running.any():
                break
            start = state_at(i, soc)
            was = running.copy()
            after_start = check(i, start, soc).copy()
            mid_soc = np.where(running, soc - 0.5 * drain(start, h), soc)
            mid = state_at(i, mid_soc)
            check(i, mid, mid_soc)
            # Flown: the whole sub-step, half of it when the stop came at its midpoint, none at its start.
            flown = np.where(running, h, np.where(after_start, 0.5 * h, 0.0))
            ds = drain(mid, h)
            with np.errstate(invalid="ignore"):
                e = np.asarray(np.broadcast_to(mid.bus_voltage_v * mid.pack_current_a, shape)) * (
                    flown / SECONDS_PER_HOUR_S)
            energy[..., i] = np.where(was & np.isfinite(e), energy[..., i] + np.where(flown > 0, e, 0.0),
                                      energy[..., i])
            time = np.where(was, time + flown, time)
            soc = np.where(running, soc - ds, soc)
    # The end of the last segment is a point of the flight too (cut-off or capacity reached at landing).
    if n_seg and running.any():
        end = state_at(n_seg - 1, soc)
        check(n_seg - 1, end, soc)
    boundary[..., n_seg] = np.where(running, soc, np.nan)
    total = float(sum(durations))
    share = np.where(running, 1.0, time / total) if total > 0 else np.ones(shape)
    return ProfileResult(completed=running.copy(), stop_reason=reason, stop_segment=stop_segment, time_s=time,
                         completed_share=np.asarray(share), soc_at_boundary=boundary, energy_wh=energy,
                         peak_current_a=peak, min_voltage_per_cell_v=np.where(np.isfinite(v_min), v_min, np.nan))

