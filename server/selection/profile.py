"""Flight profiles in the ranking engine: segments, their flight points, and the profile flown by a batch.

A mission with ``segments`` is flown through them in order (:func:`server.physics.profile.fly`), with the
screening solver (:func:`server.physics.drive_screen.cruise_point`) at every sub-step point. Each segment is a
flight point of the mission's own airframe: the mission with the segment's kind, airspeed and climb rate
(:func:`segment_mission`), so a segment is computed exactly as a single-point mission of that kind would be.
After the segments the craft must still hover (multirotor) or cruise (fixed-wing) for the mission's reserve.

Segment kinds: ``hover``; ``climb`` and ``descent`` (vertical rate); ``forward`` (multirotor at an airspeed);
``cruise`` (fixed-wing level flight at the mission's airspeed; with a climb rate it is a climbing cruise).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from server.physics.battery import PackParams, open_circuit_voltage_per_cell_v
from server.physics.drive_screen import Batch, cruise_point
from server.physics.profile import STOP_TEXT, LegState, ProfileResult, ProfileStop, fly
from server.physics.propeller_segments import PropModel

from .library import MissionSpec, Segment

RESERVE_LABEL = "reserve"


def flown_segments(mission: MissionSpec) -> tuple[Segment, ...]:
    """The mission's segments followed by its reserve (hover for a multirotor, cruise for a fixed-wing)."""
    segments = tuple(mission.segments)
    if mission.reserve_min > 0.0:
        fixed_wing = mission.kind == "cruise"
        segments += (Segment(kind="cruise" if fixed_wing else "hover", duration_s=60.0 * mission.reserve_min,
                             airspeed_m_s=mission.cruise_airspeed_m_s if fixed_wing else 0.0, label=RESERVE_LABEL),)
    return segments


def mission_energy_wh(mission: MissionSpec, result: ProfileResult) -> np.ndarray:
    """Energy drawn over the mission's own segments (reserve excluded; NaN where the flight stopped). [Wh]"""
    n = len(mission.segments)
    energy = np.sum(result.energy_wh[..., :n], axis=-1) if n else np.zeros(result.completed.shape)
    return np.where(result.completed, energy, np.nan)


def segment_mission(mission: MissionSpec, segment: Segment) -> MissionSpec:
    """The single-point mission that flies like ``segment`` (same airframe, conditions and limits)."""
    return replace(mission, **segment.flight_fields(mission), segments=(), reserve_min=0.0)  # type: ignore[arg-type]


def fly_batch(batch: Batch, model: PropModel, mission: MissionSpec) -> ProfileResult:
    """Fly every candidate of ``batch`` through the mission's segments and reserve (screening solver)."""
    segments = flown_segments(mission)
    points = [segment_mission(mission, s) for s in segments]
    # each segment's multirotor flight state (forward flight, climb, descent, coaxial pairs; None: static power)
    flights = [p.flight_state(batch.mass_kg, model.diameter_m[batch.q]) for p in points]
    n_r = float(mission.rotor_count)
    shape = batch.shape

    def state_at(i: int, soc: np.ndarray) -> LegState:
        voc = batch.cells_series * open_circuit_voltage_per_cell_v(soc, batch.full_voltage_per_cell_v)
        point = points[i]
        thrust = point.thrust_per_rotor_n(batch.mass_kg)
        if not np.any(thrust > 0.0):  # a power-off glide: no propulsion current, the pack rests
            zero = np.zeros(np.broadcast_shapes(shape, np.shape(voc)))
            return LegState(pack_current_a=zero, bus_voltage_v=voc + zero, reachable=np.isfinite(voc + zero))
        cr = cruise_point(replace(batch, voc_cruise_v=voc), model, n_r, thrust, flights[i])
        return LegState(pack_current_a=n_r * cr.bus_current_a, bus_voltage_v=cr.bus_voltage_v,
                        reachable=cr.reachable)

    pack = PackParams(cells_series=batch.cells_series, capacity_ah=batch.capacity_ah,
                      cell_resistance_ohm=np.zeros(()),  # the sag is in the operating points already
                      usable_fraction=np.asarray(mission.usable_fraction),
                      cutoff_voltage_per_cell_v=np.asarray(mission.cutoff_v_per_cell))
    return fly([s.duration_s for s in segments], state_at, pack=pack, shape=shape)


def summary(mission: MissionSpec, result: ProfileResult, index: tuple[int, ...] | int) -> dict[str, object]:
    """The API's ``profile`` section of candidate ``index`` of ``result``."""
    idx = (index,) if isinstance(index, int) else index
    segments = flown_segments(mission)
    soc = result.soc_at_boundary[idx]
    energy = result.energy_wh[idx]
    stop = ProfileStop(int(result.stop_reason[idx]))
    stop_at = int(result.stop_segment[idx])
    rows: list[dict[str, object]] = []
    for j, seg in enumerate(segments):
        rows.append({
            "label": seg.label or seg.kind, "kind": seg.kind, "duration_s": seg.duration_s,
            "airspeed_m_s": seg.airspeed_m_s, "climb_rate_m_s": seg.climb_rate_m_s,
            "reserve": j >= len(mission.segments),  # flown_segments appends the reserve after the mission's own
            "start_state_of_charge": _num(soc[j]), "end_state_of_charge": _num(soc[j + 1]),
            "energy_wh": _num(energy[j]), "flown": j < stop_at,  # stop_segment is len(segments) when completed
        })
    return {
        "completed": bool(result.completed[idx]), "stop": STOP_TEXT[stop],
        "stop_segment": None if stop == ProfileStop.COMPLETED else stop_at,
        "completed_share": float(result.completed_share[idx]),
        "total_energy_wh": float(np.nansum(energy[: len(mission.segments)])),
        "reserve_min": float(mission.reserve_min),
        "segments": rows,
    }


def _num(x: float) -> float | None:
    return float(x) if np.isfinite(x) else None
