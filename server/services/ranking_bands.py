"""80 % bands of a ranking's rows, from the ranking's own snapshot and the ranking engine's own physics.

Each stored part carries, in the snapshot, the standard uncertainty, covariance and origin of its values
(:func:`server.services.ranking_inputs.part_uncertainty`). For each row,
:func:`server.services.bands.drawn_values` samples the four parts' uncertain values; the engine's library is built
from the rows' parts once and each row repeated per draw with the drawn values, and the engine screens all of them
as one batch — the same screening (and, for rows whose endurance was refined, the same discharge simulation) that
ranked the rows. The 10th–90th percentiles of cruise power, g/W, full-throttle thrust-to-weight and endurance are
the row's bands; a multiplicative model-discrepancy factor per draw scales electrical power (and divides g/W and
endurance). Every row is drawn with the same seed, so two rows that share a part share its draws (common random
numbers). ``feasible_share`` is the share of draws that pass every limit.

A row is ``indistinguishable_from_best`` when the band of the ranking's objective overlaps rank 1's (mass and
cost carry no band: equal values only). ``assumed_share`` is the width of the cruise-power band with only priors
varied over its width with everything varied: how much of the spread rests on assumptions, not measurements.
"""

from __future__ import annotations

from dataclasses import fields, replace
from typing import Any

import numpy as np
from sqlalchemy.orm import Session

from server.models import Mission
from server.physics import uncertainty
from server.physics.propeller import PropellerTable
from server.selection import CandidateRow, PartsLibrary
from server.selection.constraints import screen
from server.selection.enumerate import batch_for
from server.selection.refine import refine
from server.selection.result import CandidateSet
from server.services import bands
from server.services import power_system as ps
from server.services.ranking_inputs import LIBRARY_COLUMNS, PART_FIELDS, engine_inputs, snapshot

SAMPLES = 100
"""Draws per row: the 10th/90th percentiles of 100 draws move by about 1/4 of a standard uncertainty between
seeds, fine for grouping rows; predict uses :data:`server.physics.uncertainty.DEFAULT_SAMPLES`."""
DRAW_SOC_STEP = 0.04
"""SOC step of the drawn discharges (the row itself keeps the reference 0.01; as for predict's endurance band, the
coarser march moves a band by far less than its width)."""
MAX_ROWS = 120
"""Rows that get bands (top rows first, then Pareto rows); the rest show none."""
BAND_METRICS = {
    "cruise_power": ("cruise", "electrical_power_w"),
    "specific_thrust": ("cruise", "specific_thrust_g_per_w"),
    "thrust_to_weight": ("full_throttle", "thrust_to_weight"),
    "endurance": (None, "endurance_min"),
    "profile_energy": ("profile", "total_energy_wh"),
}
"""Objective -> (section of the row, metric) whose band decides ``indistinguishable_from_best``."""
KINDS = ("batteries", "escs", "motors", "propellers")
ROW_KEYS = ("battery_id", "esc_id", "motor_id", "propeller_id")


def resolved_from_snapshot(kind: str, row: dict[str, Any]) -> ps.Resolved:
    """A snapshot part as a :class:`~server.services.power_system.Resolved` (sources default to ``part``)."""
    values = {f: row.get(f) for f in PART_FIELDS[kind]}
    stored_sources = row.get("sources", {})
    sources = {f: stored_sources.get(f, "part") for f in ps.MODEL_FIELDS[kind] if values.get(f) is not None}
    u = row.get("uncertainty") or {}
    return ps.Resolved(kind=kind, values=values, sources=sources, part_id=row["id"], sd=dict(u.get("sd", {})),
                       origins=dict(u.get("origins", {})), covariance=u.get("covariance"),
                       residual_rms=u.get("residual_rms"))


def has_uncertainty(snap: dict[str, Any]) -> bool:
    """Snapshots taken before bands existed carry no uncertainties: their rankings get no bands."""
    return all("uncertainty" in r for rows in snap["parts"].values() for r in rows)


def _system(by_id: dict[str, dict[int, dict[str, Any]]],
            row: CandidateRow) -> tuple[dict[str, dict[str, Any]], ps.PowerSystem]:
    ids = (row.battery_id, row.esc_id, row.motor_id, row.propeller_id)
    parts = {kind: by_id[kind][int(i)] for kind, i in zip(KINDS, ids, strict=True)}
    resolved = {kind: resolved_from_snapshot(kind, parts[kind]) for kind in KINDS}
    return parts, ps.PowerSystem(battery=resolved["batteries"], esc=resolved["escs"], motor=resolved["motors"],
                                 propeller=resolved["propellers"])


def _expand(lib: Any, samples: int, drawn: list[dict[str, np.ndarray]], kind: str, **extra: Any) -> Any:
    """Library ``lib`` (one row per system) with each row repeated ``samples`` times, the drawn fields replaced."""
    changes: dict[str, Any] = dict(extra)
    for f in fields(lib):
        value = getattr(lib, f.name)
        if f.init and isinstance(value, np.ndarray) and value.ndim == 1:
            changes[f.name] = np.repeat(value, samples)
    changes["ids"] = np.arange(len(lib.ids) * samples, dtype=np.int64)
    for attr, (name, scale, _) in LIBRARY_COLUMNS.get(kind, {}).items():
        if all(name in d for d in drawn):
            changes[attr] = np.concatenate([d[name] for d in drawn]) * scale
    return replace(lib, **changes)


def _expand_table(table: PropellerTable | None, samples: int, key: str,
                  drawn: list[bands.DrawnValues]) -> PropellerTable | None:
    """A propeller table (one row per system) repeated ``samples`` times with each draw's CT and CP knots."""
    if table is None:
        return None
    axis = np.repeat(table.axis_values, samples, axis=0)
    ct = np.repeat(table.thrust_coefficient, samples, axis=0)
    cp = np.repeat(table.power_coefficient, samples, axis=0)
    for i, d in enumerate(drawn):
        knots_ct_cp = d.tables[key]
        if knots_ct_cp is None:
            continue
        knots, dct, dcp = knots_ct_cp
        order = np.argsort(np.asarray(knots, dtype=np.float64), kind="stable")  # PropellerTable.from_rows' order
        rows = slice(i * samples, (i + 1) * samples)
        ct[rows, : len(order)] = dct[:, order]
        cp[rows, : len(order)] = dcp[:, order]
    return PropellerTable(np.repeat(table.diameter_m, samples), axis, ct, cp, table.axis)


def _metrics(snap: dict[str, Any], systems: list[tuple[dict[str, dict[str, Any]], bands.DrawnValues, int, bool]],
             samples: int) -> list[dict[str, np.ndarray]]:
    """The ranking engine's metrics of several drawn power systems, screened together as one batch.

    ``systems`` holds (snapshot parts, draws, packs in parallel, refine?) per system; the engine's library is
    built from the snapshot parts once (one row per system) and each row repeated per draw with the drawn values.
    """
    base, mission = engine_inputs({"mission": snap["mission"], "airframe": snap["airframe"],
                                   "parts": {kind: [dict(parts[kind], id=i) for i, (parts, *_) in enumerate(systems)]
                                             for kind in KINDS}})
    drawn = [d for _, d, _, _ in systems]
    pr = base.propellers
    library = PartsLibrary(
        _expand(base.packs, samples, [d.parts["batteries"] for d in drawn], "batteries"),
        _expand(base.escs, samples, [d.parts["escs"] for d in drawn], "escs"),
        _expand(base.motors, samples, [d.parts["motors"] for d in drawn], "motors"),
        _expand(pr, samples, [{} for _ in drawn], "propellers",
                static=_expand_table(pr.static, samples, "static_table", drawn),
                forward=_expand_table(pr.forward, samples, "forward_table", drawn)))
    model = mission.propeller_model(library.propellers)
    n = len(systems) * samples
    index = np.arange(n, dtype=np.intp)
    k_all = np.repeat(np.array([k for _, _, k, _ in systems], dtype=np.intp), samples)
    sc = screen(batch_for(library, mission, index, k_all, index, index, index), model, mission, all_violations=False)
    endurance = np.array(sc.endurance_min, dtype=np.float64)
    refined = np.repeat(np.array([r for *_, r in systems], dtype=bool), samples)
    if refined.any():
        which = index[refined]
        zeros = np.zeros(which.size)
        cs = CandidateSet(which, k_all[which], which, which, which, *(zeros for _ in range(7)))
        endurance[which], _ = refine(library, mission, model, cs, soc_step=DRAW_SOC_STEP)
    out = []
    for i, d in enumerate(drawn):
        rows = slice(i * samples, (i + 1) * samples)
        factor = np.asarray(d.discrepancy, dtype=np.float64)
        out.append({"electrical_power_w": np.asarray(sc.electrical_power_w)[rows] * factor,
                    "specific_thrust_g_per_w": np.asarray(sc.specific_thrust_g_per_w)[rows] / factor,
                    "thrust_to_weight": np.asarray(sc.thrust_to_weight, dtype=np.float64)[rows],
                    "endurance_min": endurance[rows] / factor,
                    "profile_energy_wh": np.broadcast_to(sc.profile_energy_wh, np.shape(sc.code)).ravel()[rows]
                    * factor,
                    "feasible": np.asarray(sc.code)[rows] == 0})
    return out


def rows_bands(snap: dict[str, Any], rows: list[CandidateRow], samples: int = SAMPLES) -> list[dict[str, Any]]:
    """Bands of ranking rows, computed from the ranking's snapshot (see the module docstring)."""
    if not rows:
        return []
    by_id = {kind: {r["id"]: r for r in snap["parts"][kind]} for kind in KINDS}  # once, not per row
    systems = [_system(by_id, row) for row in rows]
    everything = [(parts, bands.drawn_values(system, samples), int(row.packs_in_parallel), row.endurance_refined)
                  for row, (parts, system) in zip(rows, systems, strict=True)]
    with_priors = [i for i, (_, system) in enumerate(systems)
                   if any(r.assumed for r in (system.battery, system.esc, system.motor, system.propeller))]
    priors_only = [(systems[i][0], bands.drawn_values(systems[i][1], samples, vary=("prior",)),
                    int(rows[i].packs_in_parallel), False) for i in with_priors]
    metrics = _metrics(snap, everything + priors_only, samples)
    assumed_metrics = dict(zip(with_priors, metrics[len(rows):], strict=True))

    def bands_of(name: str, which: list[dict[str, np.ndarray]]) -> list[list[float] | None]:
        lo, hi = uncertainty.band(np.stack([m[name] for m in which]), axis=1)  # one percentile call per metric
        return [[float(a), float(b)] if np.isfinite(a) and np.isfinite(b) else None for a, b in zip(lo, hi,
                                                                                                     strict=True)]

    own = metrics[:len(rows)]
    power, specific, tw, minutes, energy = (bands_of(name, own) for name in (
        "electrical_power_w", "specific_thrust_g_per_w", "thrust_to_weight", "endurance_min", "profile_energy_wh"))
    assumed_power = dict(zip(with_priors, bands_of("electrical_power_w", [assumed_metrics[i] for i in with_priors]),
                             strict=True)) if with_priors else {}
    out = []
    for i, ((_, system), m) in enumerate(zip(systems, own, strict=True)):
        full = power[i]
        share: float | None = 0.0
        if i in assumed_power:
            assumed = assumed_power[i]
            share = None
            if full is not None and assumed is not None and full[1] > full[0]:
                share = min(1.0, (assumed[1] - assumed[0]) / (full[1] - full[0]))
        out.append({
            "level": uncertainty.BAND_LEVEL,
            "cruise": {"electrical_power_w_band": full, "specific_thrust_g_per_w_band": specific[i]},
            "full_throttle": {"thrust_to_weight_band": tw[i]},
            "endurance_min_band": minutes[i],
            "profile": {"total_energy_wh_band": energy[i]},
            "feasible_share": float(np.mean(m["feasible"])),
            "assumed_share": share,
            "assumed": {"battery": system.battery.assumed, "esc": system.esc.assumed, "motor": system.motor.assumed,
                        "propeller": system.propeller.assumed},
        })
    return out


def for_system(session: Session, *, team_id: int, mission: Mission, battery_id: int, esc_id: int, motor_id: int,
               propeller_id: int, packs_in_parallel: int) -> dict[str, Any]:
    """Bands, assumptions and feasible share of one power system for a mission, through the ranking engine (the
    shortlist compare shows them beside its full-physics numbers); empty when the system has no operating point."""
    from server.selection.explain import explain as explain_candidate

    only = {"batteries": [battery_id], "escs": [esc_id], "motors": [motor_id], "propellers": [propeller_id]}
    snap = snapshot(session, team_id=team_id, mission=mission, only=only)
    library, spec = engine_inputs(snap)
    if not 1 <= packs_in_parallel <= spec.max_packs_in_parallel or any(not rows for rows in snap["parts"].values()):
        return {}
    verdict = explain_candidate(library, spec, pack=0, packs_in_parallel=packs_in_parallel, esc=0, motor=0, prop=0)
    if verdict.row is None:
        return {}
    (b,) = rows_bands(snap, [verdict.row])
    return {"bands": {"level": b["level"], "cruise_electrical_power_w": b["cruise"]["electrical_power_w_band"],
                      "cruise_specific_thrust_g_per_w": b["cruise"]["specific_thrust_g_per_w_band"],
                      "full_throttle_thrust_to_weight": b["full_throttle"]["thrust_to_weight_band"],
                      "endurance_min": b["endurance_min_band"]},
            "assumed": b["assumed"], "assumed_share": b["assumed_share"], "feasible_share": b["feasible_share"]}


def objective_band(metrics: dict[str, Any], objective: str) -> list[float] | None:
    """The band of ``objective`` in a row's metrics (None for objectives without one)."""
    if objective not in BAND_METRICS:
        return None
    section, name = BAND_METRICS[objective]
    holder = metrics if section is None else metrics.get(section, {})
    band = holder.get(f"{name}_band")
    return None if band is None else list(band)


def _objective_value(metrics: dict[str, Any], objective: str) -> float | None:
    if objective == "mass":
        return metrics.get("all_up_mass_g")
    if objective == "cost":
        return metrics.get("cost")
    section, name = BAND_METRICS[objective]
    holder = metrics if section is None else metrics.get(section, {})
    return holder.get(name)


def indistinguishable(best: dict[str, Any], other: dict[str, Any], objective: str) -> bool | None:
    """Whether ``other``'s objective band overlaps ``best``'s (None when either has no band)."""
    if objective not in BAND_METRICS:
        a, b = _objective_value(best, objective), _objective_value(other, objective)
        return None if a is None or b is None else bool(a == b)
    x, y = objective_band(best, objective), objective_band(other, objective)
    if x is None or y is None:
        return None
    return bool(x[0] <= y[1] and y[0] <= x[1])


def with_bands(snap: dict[str, Any], objective: str, rows: list[CandidateRow],
               limit: int = MAX_ROWS) -> list[dict[str, Any]]:
    """Every row's ``as_dict()`` with its bands merged in (the first ``limit`` rows) and, when the first row is
    rank 1, ``indistinguishable_from_best``. Snapshots without uncertainties give rows without bands."""
    out = [r.as_dict() for r in rows]  # dataclasses.asdict already returns a deep copy
    if not has_uncertainty(snap):
        return out
    for b, metrics in zip(rows_bands(snap, rows[:limit]), out, strict=False):
        merge(metrics, b)
        metrics["bands"] = {"level": metrics.pop("level")}
    return out


def merge(row: dict[str, Any], b: dict[str, Any]) -> None:
    """Merge one :func:`rows_bands` entry into a row's ``as_dict()`` (sections into sections)."""
    b = dict(b)
    for section in ("cruise", "full_throttle", "profile"):
        values = b.pop(section)
        if row.get(section) is not None:
            row[section].update(values)
    row.update(b)


def mark_indistinguishable(rows: list[dict[str, Any]], objective: str) -> None:
    """Set ``indistinguishable_from_best`` on ranked rows (rank 1 is the best; rows without rank get None)."""
    best = next((r for r in rows if r.get("rank") == 1), None)
    for r in rows:
        if best is None or r.get("rank") is None:
            r["indistinguishable_from_best"] = None
        elif r is best:
            r["indistinguishable_from_best"] = True
        else:
            r["indistinguishable_from_best"] = indistinguishable(best, r, objective)
