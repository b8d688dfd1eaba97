"""Shortlists: add candidates (by parts or from a ranking), notes, order, re-evaluation, compare, BOM."""

from __future__ import annotations

import io
from typing import Any

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from server.csv_cells import csv_writer
from server.errors import Conflict, FieldError, InvalidInput, NotFound
from server.models import Mission, Ranking, RankingResult, Shortlist, ShortlistEntry, User
from server.models._common import utcnow
from server.physics import ENGINE_VERSION
from server.schemas.shortlists import MAX_ENTRIES, EntryCreate
from server.services import candidate
from server.services import missions as missions_service
from server.services import parts as parts_service

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
    ("Endurance", "endurance_min", "Endurance", "min", "high"),
    ("Endurance", "endurance_stop_reason", "Stops at", "", None),
    ("Cost", "cost", "Parts cost per airframe", "", "low"),
]
CHANGE_KEYS = ["cruise.electrical_power_w", "full_throttle.thrust_to_weight", "endurance_min", "all_up_mass_g"]


def lookup(metrics: dict[str, Any], path: str) -> Any:
    value: Any = metrics
    for key in path.split("."):
        if not isinstance(value, dict):
            return None
        value = value.get(key)
    return value


def get(session: Session, *, team_id: int, shortlist_id: int) -> Shortlist:
    row = session.scalar(select(Shortlist).where(Shortlist.id == shortlist_id, Shortlist.team_id == team_id))
    if row is None:
        raise NotFound(f"No shortlist with id {shortlist_id}")
    return row


def list_all(session: Session, *, team_id: int) -> list[Shortlist]:
    stmt = select(Shortlist).where(Shortlist.team_id == team_id).order_by(Shortlist.updated_at.desc(), Shortlist.id)
    return list(session.scalars(stmt))


def create(session: Session, *, team_id: int, user_id: int | None, name: str, mission_id: int) -> Shortlist:
    try:
        missions_service.get_mission(session, team_id=team_id, mission_id=mission_id)
    except NotFound:
        raise InvalidInput("Unknown mission", [FieldError("mission_id", f"no mission with id {mission_id}")]) from None
    row = Shortlist(team_id=team_id, name=name, mission_id=mission_id, created_by_id=user_id)
    session.add(row)
    session.flush()
    return row


def rename(session: Session, *, team_id: int, shortlist_id: int, name: str) -> Shortlist:
    row = get(session, team_id=team_id, shortlist_id=shortlist_id)
    row.name = name
    session.flush()
    return row


def delete(session: Session, *, team_id: int, shortlist_id: int) -> None:
    session.delete(get(session, team_id=team_id, shortlist_id=shortlist_id))
    session.flush()


def _ranking_row(session: Session, *, team_id: int, ranking_id: int, rank: int, mission_id: int) -> RankingResult:
    ranking = session.scalar(select(Ranking).where(Ranking.id == ranking_id, Ranking.team_id == team_id))
    if ranking is None:
        raise InvalidInput("Unknown ranking", [FieldError("ranking_id", f"no ranking with id {ranking_id}")])
    if ranking.mission_id != mission_id:
        raise InvalidInput("Other mission", [FieldError("ranking_id", "that ranking is for another mission")])
    row = session.scalar(
        select(RankingResult).where(RankingResult.ranking_id == ranking_id, RankingResult.rank == rank)
    )
    if row is None:
        raise InvalidInput("Unknown rank", [FieldError("rank", f"ranking {ranking_id} has no rank {rank}")])
    return row


def add_entry(
    session: Session, *, team_id: int, user_id: int | None, shortlist_id: int, data: EntryCreate
) -> ShortlistEntry:
    """Add a candidate and snapshot its metrics with the current engine and calibrations."""
    shortlist = get(session, team_id=team_id, shortlist_id=shortlist_id)
    count = (
        session.scalar(
            select(func.count()).select_from(ShortlistEntry).where(ShortlistEntry.shortlist_id == shortlist.id)
        )
        or 0
    )
    if count >= MAX_ENTRIES:
        raise Conflict(f"A shortlist holds at most {MAX_ENTRIES} candidates; remove one first")
    if data.ranking_id is not None and data.rank is not None:
        source = _ranking_row(
            session, team_id=team_id, ranking_id=data.ranking_id, rank=data.rank, mission_id=shortlist.mission_id
        )
        ids = candidate.CandidateIds(
            source.battery_id, source.esc_id, source.motor_id, source.propeller_id, source.packs_in_parallel
        )
    else:
        battery_id, esc_id, motor_id, propeller_id = data.battery_id, data.esc_id, data.motor_id, data.propeller_id
        # EntryCreate's validator: without ranking_id and rank all four part ids are given.
        assert battery_id is not None and esc_id is not None and motor_id is not None and propeller_id is not None
        ids = candidate.CandidateIds(battery_id, esc_id, motor_id, propeller_id, data.packs_in_parallel)
        for kind, part_id, field in (
            ("batteries", ids.battery_id, "battery_id"),
            ("escs", ids.esc_id, "esc_id"),
            ("motors", ids.motor_id, "motor_id"),
            ("propellers", ids.propeller_id, "propeller_id"),
        ):
            try:
                parts_service.get_part(session, team_id=team_id, kind=kind, part_id=part_id)
            except NotFound as exc:
                raise InvalidInput("Unknown part", [FieldError(field, exc.detail)]) from None
    mission = session.get(Mission, shortlist.mission_id)
    assert mission is not None
    metrics = candidate.evaluate(session, team_id=team_id, mission=mission, ids=ids)
    entry = ShortlistEntry(
        shortlist_id=shortlist.id,
        position=count,
        battery_id=ids.battery_id,
        esc_id=ids.esc_id,
        motor_id=ids.motor_id,
        propeller_id=ids.propeller_id,
        packs_in_parallel=ids.packs_in_parallel,
        ranking_id=data.ranking_id,
        note=data.note,
        metrics=metrics,
        engine_version=ENGINE_VERSION,
        added_by_id=user_id,
    )
    session.add(entry)
    shortlist.updated_at = utcnow()
    session.flush()
    return entry


def _entry(session: Session, shortlist: Shortlist, entry_id: int) -> ShortlistEntry:
    entry = session.scalar(
        select(ShortlistEntry).where(ShortlistEntry.id == entry_id, ShortlistEntry.shortlist_id == shortlist.id)
    )
    if entry is None:
        raise NotFound(f"No entry {entry_id} in this shortlist")
    return entry


def update_entry(session: Session, *, team_id: int, shortlist_id: int, entry_id: int, note: str) -> ShortlistEntry:
    entry = _entry(session, get(session, team_id=team_id, shortlist_id=shortlist_id), entry_id)
    entry.note = note
    session.flush()
    return entry


def remove_entry(session: Session, *, team_id: int, shortlist_id: int, entry_id: int) -> None:
    shortlist = get(session, team_id=team_id, shortlist_id=shortlist_id)
    session.delete(_entry(session, shortlist, entry_id))
    session.flush()
    for position, entry in enumerate(sorted(shortlist.entries, key=lambda e: e.position)):
        entry.position = position
    session.flush()


def reorder(session: Session, *, team_id: int, shortlist_id: int, entry_ids: list[int]) -> Shortlist:
    shortlist = get(session, team_id=team_id, shortlist_id=shortlist_id)
    current = {e.id: e for e in shortlist.entries}
    if sorted(entry_ids) != sorted(current):
        raise InvalidInput("Bad order", [FieldError("entry_ids", "must list every entry of the shortlist once")])
    for position, entry_id in enumerate(entry_ids):
        current[entry_id].position = position
    session.flush()
    session.refresh(shortlist)
    return shortlist


def _mission(session: Session, shortlist: Shortlist) -> Mission:
    mission = session.get(Mission, shortlist.mission_id)
    assert mission is not None
    return mission


def _ids(entry: ShortlistEntry) -> candidate.CandidateIds:
    return candidate.CandidateIds(
        entry.battery_id, entry.esc_id, entry.motor_id, entry.propeller_id, entry.packs_in_parallel
    )


def re_evaluate(session: Session, *, team_id: int, shortlist_id: int) -> list[dict[str, Any]]:
    """Recompute every entry with the current engine and calibrations; returns what changed."""
    shortlist = get(session, team_id=team_id, shortlist_id=shortlist_id)
    mission = _mission(session, shortlist)
    changes = []
    for entry in shortlist.entries:
        fresh = candidate.evaluate(session, team_id=team_id, mission=mission, ids=_ids(entry))
        diffs = {}
        for key in CHANGE_KEYS:
            old, new = lookup(entry.metrics, key), lookup(fresh, key)
            if old != new and not (
                isinstance(old, float) and isinstance(new, float) and abs(old - new) <= 1e-9 * abs(old)
            ):
                diffs[key] = {"before": old, "after": new}
        changes.append(
            {
                "entry_id": entry.id,
                "engine_version_before": entry.engine_version,
                "engine_version_after": ENGINE_VERSION,
                "changed": diffs,
            }
        )
        entry.metrics, entry.engine_version = fresh, ENGINE_VERSION
    session.flush()
    return changes


def _part_summary(session: Session, team_id: int, kind: str, part_id: int) -> dict[str, Any]:
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


def compare(session: Session, *, team_id: int, shortlist_id: int) -> dict[str, Any]:
    """Fresh numbers for every entry (current engine and calibrations), rows with the best value marked."""
    shortlist = get(session, team_id=team_id, shortlist_id=shortlist_id)
    mission = _mission(session, shortlist)
    entries: list[dict[str, Any]] = []
    for entry in shortlist.entries:
        metrics = candidate.evaluate(session, team_id=team_id, mission=mission, ids=_ids(entry), with_curves=True)
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
                    kind: _part_summary(session, team_id, kind, getattr(entry, f"{attr}_id"))
                    for kind, attr in (
                        ("batteries", "battery"),
                        ("escs", "esc"),
                        ("motors", "motor"),
                        ("propellers", "propeller"),
                    )
                },
                "packs_in_parallel": entry.packs_in_parallel,
                "metrics": metrics,
                "snapshot_engine_version": entry.engine_version,
                "changed_since_snapshot": any(lookup(entry.metrics, k) != lookup(metrics, k) for k in CHANGE_KEYS),
            }
        )
    rows = []
    for group, key, label, unit, better in COMPARE_ROWS:
        values = [lookup(e["metrics"], key) for e in entries]
        numeric = [v for v in values if isinstance(v, int | float)]
        best = None
        if better and len(numeric) >= 2 and len(set(numeric)) > 1:
            target = min(numeric) if better == "low" else max(numeric)
            best = [i for i, v in enumerate(values) if v == target]
        rows.append(
            {
                "group": group,
                "key": key,
                "label": label,
                "unit": unit,
                "better": better,
                "values": values,
                "best": best or [],
            }
        )
    return {
        "shortlist": {"id": shortlist.id, "name": shortlist.name},
        "mission": {
            "id": mission.id,
            "name": mission.name,
            "kind": mission.kind,
            "rotor_count": mission.airframe.rotor_count,
            "min_thrust_to_weight": mission.min_thrust_to_weight,
            "cruise_state_of_charge": mission.cruise_state_of_charge,
        },
        "required_thrust_per_rotor_n": [e["metrics"]["thrust_required_n"] for e in entries],
        "engine_version": ENGINE_VERSION,
        "entries": entries,
        "rows": rows,
    }


def bom_csv(session: Session, *, team_id: int, shortlist_id: int, airframes: int) -> str:
    """Bill of materials: per entry and part, quantities per airframe and for ``airframes`` airframes, costs."""
    shortlist = get(session, team_id=team_id, shortlist_id=shortlist_id)
    rotors = _mission(session, shortlist).airframe.rotor_count
    out = io.StringIO()
    writer = csv_writer(out)
    writer.writerow(
        [
            "entry",
            "kind",
            "name",
            "maker",
            "part_number",
            "quantity_per_airframe",
            "airframes",
            "quantity",
            "unit_cost",
            "currency",
            "total_cost",
        ]
    )
    for entry in shortlist.entries:
        for kind, attr, per_airframe in (
            ("batteries", "battery", entry.packs_in_parallel),
            ("escs", "esc", rotors),
            ("motors", "motor", rotors),
            ("propellers", "propeller", rotors),
        ):
            part = _part_summary(session, team_id, kind, getattr(entry, f"{attr}_id"))
            quantity = per_airframe * airframes
            total = None if part["unit_cost"] is None else round(part["unit_cost"] * quantity, 2)
            writer.writerow(
                [
                    entry.position + 1,
                    kind,
                    part["name"],
                    part["maker"],
                    part["part_number"],
                    per_airframe,
                    airframes,
                    quantity,
                    "" if part["unit_cost"] is None else part["unit_cost"],
                    part["currency"],
                    "" if total is None else total,
                ]
            )
    return out.getvalue()


def read(session: Session, shortlist: Shortlist) -> dict[str, Any]:
    def who(user_id: int | None) -> str | None:
        user = session.get(User, user_id) if user_id else None
        return user.email if user else None

    mission = session.get(Mission, shortlist.mission_id)
    return {
        "id": shortlist.id,
        "name": shortlist.name,
        "mission_id": shortlist.mission_id,
        "mission_name": mission.name if mission else "",
        "created_by": who(shortlist.created_by_id),
        "created_at": shortlist.created_at,
        "updated_at": shortlist.updated_at,
        "entries": [
            {
                **{
                    c: getattr(e, c)
                    for c in (
                        "id",
                        "position",
                        "battery_id",
                        "esc_id",
                        "motor_id",
                        "propeller_id",
                        "packs_in_parallel",
                        "ranking_id",
                        "note",
                        "metrics",
                        "engine_version",
                        "added_at",
                    )
                },
                "added_by": who(e.added_by_id),
            }
            for e in shortlist.entries
        ],
    }
