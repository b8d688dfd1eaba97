"""The compare view of a shortlist: every entry evaluated now, rows with the best value marked, cautions.

Shared by the compare page, its print layout and ``GET /shortlists/{id}/compare.json``.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy.orm import Session, joinedload

from server.models import Mission, Shortlist, User
from server.physics import ENGINE_VERSION
from server.services import candidate
from server.services import parts as parts_service
from server.services.cautions import near_limit
from server.services.scopes import with_scopes
from server.services.shortlists import CHANGE_KEYS, candidate_ids, get, lookup

# Rows of the compare table: (group, key path in the metrics, label, unit, better: "low" | "high" | None).
COMPARE_ROWS: list[tuple[str, str, str, str, str | None]] = [
    ("Parts and masses", "all_up_mass_g", "All-up mass", "g", "low"),
    ("Parts and masses", "pack_nominal_voltage_v", "Pack nominal voltage", "V", None),
    ("Cruise point", "cruise.duty", "PWM duty", "", None),
    ("Cruise point", "cruise.rpm", "Speed", "rpm", None),
    ("Cruise point", "cruise.electrical_power_w", "Electrical power (craft)", "W", "low"),
    ("Cruise point", "cruise.bus_current_a", "Pack current", "A", "low"),
    ("Cruise point", "cruise.specific_thrust_g_per_w", "Specific thrust", "g/W", "high"),
    ("Cruise point", "cruise.drive_efficiency", "Drive efficiency", "", "high"),
    ("Cruise point", "cruise.losses_w.motor_copper", "Loss: motor copper (per rotor)", "W", "low"),
    ("Cruise point", "cruise.losses_w.motor_no_load", "Loss: motor no-load (per rotor)", "W", "low"),
    ("Cruise point", "cruise.losses_w.esc_conduction", "Loss: ESC conduction (per rotor)", "W", "low"),
    ("Cruise point", "cruise.losses_w.pwm_ripple", "Loss: PWM ripple (per rotor)", "W", "low"),
    ("Cruise point", "cruise.losses_w.switching", "Loss: switching (per rotor)", "W", "low"),
    ("Cruise point", "cruise.losses_w.dead_time", "Loss: dead time (per rotor)", "W", "low"),
    ("Cruise point", "cruise.losses_w.input_capacitor", "Loss: input capacitor (per rotor)", "W", "low"),
    ("Cruise point", "cruise.losses_w.calibrated_pwm", "Loss: calibrated PWM (per rotor)", "W", "low"),
    ("Cruise point", "cruise.pack_loss_w", "Pack internal loss", "W", "low"),
    ("Full throttle", "full_throttle.thrust_n", "Thrust per rotor (end of usable capacity)", "N", "high"),
    ("Full throttle", "full_throttle.thrust_to_weight", "Thrust-to-weight", "", "high"),
    ("Full throttle", "full_throttle.motor_current_a", "Peak motor current (full pack)", "A", "low"),
    ("Full throttle", "full_throttle.bus_current_a", "Peak pack current (full pack)", "A", "low"),
    ("Full throttle", "margins.motor_current_ratio", "Motor current ÷ its rating", "", "low"),
    ("Full throttle", "margins.esc_rating_ratio", "ESC rating ÷ motor current", "", "high"),
    ("Full throttle", "margins.pack_current_ratio", "Pack current ÷ allowed", "", "low"),
    ("Heat and cold", "heat.cruise_winding_c", "Winding temperature at the cruise point", "°C", "low"),
    ("Heat and cold", "heat.burst_winding_c", "Winding temperature after the full-throttle burst", "°C", "low"),
    ("Heat and cold", "heat.max_winding_temperature_c", "Highest allowed winding temperature", "°C", None),
    ("Heat and cold", "cold_day.thrust_to_weight", "Thrust-to-weight on the cold day", "", "high"),
    ("Heat and cold", "cold_day.endurance_min", "Endurance on the cold day (screening)", "min", "high"),
    ("Endurance", "endurance_min", "Endurance", "min", "high"),
    ("Endurance", "endurance_stop_reason", "Stops at", "", None),
    ("Cost", "cost", "Parts cost per airframe", "", "low"),
]
FLIGHT_ROWS: list[tuple[str, str, str, str, str | None]] = [
    ("Flight state", "flight.tilt_deg", "Rotor tilt from vertical", "°", None),
    ("Flight state", "flight.thrust_per_rotor_n", "Thrust per rotor (weight and drag)", "N", None),
    ("Flight state", "flight.induced_velocity_m_s", "Induced velocity (Glauert)", "m/s", None),
    ("Flight state", "flight.hover_induced_velocity_m_s", "Hover induced velocity v_h", "m/s", None),
    ("Flight state", "flight.edgewise_advance_ratio", "Edgewise advance ratio μ", "", None),
    ("Flight state", "flight.hover_electrical_power_w", "Electrical power in hover (craft)", "W", "low"),
    ("Flight state", "flight.power_vs_hover", "Power ÷ hover", "", "low"),
]
"""Rows of a multirotor flight state (forward flight, climb, coaxial), shown when an entry has one; full throttle
stays static."""
PART_KINDS = candidate.PART_KINDS


def part_summary(session: Session, team_id: int, kind: str, part_id: int, part: Any = None) -> dict[str, Any]:
    """What the compare view and the bill of materials say about a part (``part``: the row, when already loaded)."""
    if part is None:
        part = parts_service.get_part(session, team_id=team_id, kind=kind, part_id=part_id)
    return {
        "id": part.id,
        "name": part.name,
        "maker": part.maker,
        "part_number": part.part_number,
        "mass_g": part.mass_g,
        "unit_cost": part.unit_cost,
        "currency": part.currency,
        "archived": part.archived,
    }


FLYING = ("ok", "over_current")  # cruise statuses of a candidate that holds its hover/cruise point


def _best(values: list[Any], better: str | None, flying: list[bool]) -> list[int]:
    """Indices of the best value of a row among the candidates that can hold the mission's point."""
    numeric = [v for v, ok in zip(values, flying, strict=True) if ok and isinstance(v, int | float)]
    if not better or len(numeric) < 2 or len(set(numeric)) == 1:
        return []
    target = min(numeric) if better == "low" else max(numeric)
    return [i for i, (v, ok) in enumerate(zip(values, flying, strict=True)) if ok and v == target]


def compare(session: Session, *, team_id: int, shortlist_id: int) -> dict[str, Any]:
    """Fresh numbers for every entry (current engine and calibrations), rows with the best value marked."""
    shortlist: Shortlist = get(session, team_id=team_id, shortlist_id=shortlist_id)
    mission = session.get(Mission, shortlist.mission_id, options=[joinedload(Mission.airframe)])  # one query
    assert mission is not None
    entries: list[dict[str, Any]] = []
    loaded = candidate.preload(session, team_id=team_id, candidates=[candidate_ids(e) for e in shortlist.entries])
    for entry in shortlist.entries:
        metrics = with_scopes(candidate.evaluate(
            session, team_id=team_id, mission=mission, ids=candidate_ids(entry), with_curves=True, preloaded=loaded
        ))
        added_by = session.get(User, entry.added_by_id) if entry.added_by_id else None
        entries.append(
            {
                "entry_id": entry.id,
                "position": entry.position,
                "note": entry.note,
                "added_by": added_by.email if added_by else None,
                "added_at": entry.added_at,
                "from_ranking": entry.ranking_id,
                "calibrated": {
                    kind: sorted(k for k, v in sources.items() if v == "calibrated")
                    for kind, sources in metrics["sources"].items()
                },
                "parts": {
                    kind: part_summary(session, team_id, kind, getattr(entry, f"{attr}_id"),
                                       loaded.parts.get(kind, {}).get(getattr(entry, f"{attr}_id")))
                    for kind, attr in PART_KINDS
                },
                "packs_in_parallel": entry.packs_in_parallel,
                "metrics": metrics,
                "cautions": [c.as_dict() for c in near_limit(metrics["margins"], mission.esc_current_margin)],
                "snapshot_engine_version": entry.engine_version,
                "changed_since_snapshot": any(lookup(entry.metrics, k) != lookup(metrics, k) for k in CHANGE_KEYS),
            }
        )
    rows = []
    flying = [e["metrics"]["cruise"]["status"] in FLYING for e in entries]
    has_flight = any(e["metrics"].get("flight") for e in entries)
    at = next(i for i, r in enumerate(COMPARE_ROWS) if r[0] == "Full throttle")
    table = COMPARE_ROWS[:at] + FLIGHT_ROWS + COMPARE_ROWS[at:] if has_flight else COMPARE_ROWS
    asked = {"heat": mission.temperature_effects, "cold_day": mission.cold_day_temperature_c is not None}
    for group, key, label, unit, better in table:
        if not asked.get(key.split(".")[0], True):  # heat and cold rows only for missions that ask for them
            continue
        values = [lookup(e["metrics"], key) for e in entries]
        rows.append({"group": group, "key": key, "label": label, "unit": unit, "better": better,
                     "values": values, "best": _best(values, better, flying)})
    return {
        "shortlist": {"id": shortlist.id, "name": shortlist.name},
        "mission": {
            "id": mission.id,
            "name": mission.name,
            "kind": mission.kind,
            "rotor_count": mission.airframe.rotor_count,
            "min_thrust_to_weight": mission.min_thrust_to_weight,
            "cruise_state_of_charge": mission.cruise_state_of_charge,
            "esc_current_margin": mission.esc_current_margin,
            "temperature_effects": mission.temperature_effects,
            "burst_s": mission.burst_s,
            "cold_day_temperature_c": mission.cold_day_temperature_c,
        },
        "required_thrust_per_rotor_n": [e["metrics"]["thrust_required_n"] for e in entries],
        "engine_version": ENGINE_VERSION,
        "entries": entries,
        "rows": rows,
    }
