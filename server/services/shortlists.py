"""Shortlists (CRUD): create with a name that never collides, add candidates by parts or from a ranking row,
notes, order, re-evaluation. The compare view is ``shortlist_compare``; the bill of materials is ``bom``."""

from __future__ import annotations

import copy
from typing import Any

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from server.errors import Conflict, FieldError, InvalidInput, NotFound
from server.models import Mission, Ranking, RankingResult, Shortlist, ShortlistEntry, User
from server.models._common import utcnow
from server.physics import ENGINE_VERSION
from server.schemas.shortlists import MAX_ENTRIES, EntryCreate
from server.services import candidate
from server.services import missions as missions_service
from server.services import parts as parts_service
from server.services.scopes import with_scopes

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


def _name_taken(session: Session, team_id: int, name: str, *, except_id: int | None = None) -> bool:
    stmt = select(Shortlist.id).where(Shortlist.team_id == team_id, func.lower(Shortlist.name) == name.lower())
    if except_id is not None:
        stmt = stmt.where(Shortlist.id != except_id)
    return session.scalar(stmt.limit(1)) is not None


def _check_name(session: Session, team_id: int, name: str, *, except_id: int | None = None) -> None:
    if _name_taken(session, team_id, name, except_id=except_id):
        raise Conflict(f"A shortlist named “{name}” already exists",
                       [FieldError("name", f"“{name}” is already used by another shortlist; choose another name")])


def free_name(session: Session, *, team_id: int, base: str) -> str:
    """``base``, or ``base`` with the smallest free number appended ("… 2", "… 3"), at most 120 characters."""
    base = base.strip()[:120] or "Shortlist"
    if not _name_taken(session, team_id, base):
        return base
    number = 2
    while True:
        suffix = f" {number}"
        candidate_name = base[: 120 - len(suffix)] + suffix
        if not _name_taken(session, team_id, candidate_name):
            return candidate_name
        number += 1


def create(session: Session, *, team_id: int, user_id: int | None, name: str, mission_id: int) -> Shortlist:
    """A new shortlist; a name another shortlist of the team already has (any case) is a 409."""
    try:
        missions_service.get_mission(session, team_id=team_id, mission_id=mission_id)
    except NotFound:
        raise InvalidInput("Unknown mission", [FieldError("mission_id", f"no mission with id {mission_id}")]) from None
    _check_name(session, team_id, name)
    row = Shortlist(team_id=team_id, name=name, mission_id=mission_id, created_by_id=user_id)
    session.add(row)
    session.flush()
    return row


def rename(session: Session, *, team_id: int, shortlist_id: int, name: str) -> Shortlist:
    row = get(session, team_id=team_id, shortlist_id=shortlist_id)
    _check_name(session, team_id, name, except_id=row.id)
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


def add_from_ranking(
    session: Session,
    *,
    team_id: int,
    user_id: int | None,
    ranking_id: int,
    rank: int,
    shortlist_id: int | None = None,
    name: str | None = None,
    note: str = "",
) -> ShortlistEntry:
    """Add a ranked row to a shortlist of the ranking's mission; without ``shortlist_id`` to a new shortlist
    called ``name`` (a 409 if taken) or, without a name, "<mission> shortlist" with the next free number."""
    ranking = session.scalar(select(Ranking).where(Ranking.id == ranking_id, Ranking.team_id == team_id))
    if ranking is None:
        raise NotFound(f"No ranking with id {ranking_id}")
    if ranking.mission_id is None:
        raise Conflict("The ranking's mission was deleted; start a new ranking")
    if shortlist_id is None:
        chosen = name or free_name(session, team_id=team_id, base=f"{ranking.mission_name} shortlist")
        shortlist_id = create(session, team_id=team_id, user_id=user_id, name=chosen, mission_id=ranking.mission_id).id
    return add_entry(session, team_id=team_id, user_id=user_id, shortlist_id=shortlist_id,
                     data=EntryCreate(ranking_id=ranking_id, rank=rank, note=note))


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


def candidate_ids(entry: ShortlistEntry) -> candidate.CandidateIds:
    return candidate.CandidateIds(
        entry.battery_id, entry.esc_id, entry.motor_id, entry.propeller_id, entry.packs_in_parallel
    )


def re_evaluate(session: Session, *, team_id: int, shortlist_id: int) -> list[dict[str, Any]]:
    """Recompute every entry with the current engine and calibrations; returns what changed."""
    shortlist = get(session, team_id=team_id, shortlist_id=shortlist_id)
    mission = _mission(session, shortlist)
    changes = []
    for entry in shortlist.entries:
        fresh = candidate.evaluate(session, team_id=team_id, mission=mission, ids=candidate_ids(entry))
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
                        "engine_version",
                        "added_at",
                    )
                },
                "metrics": with_scopes(copy.deepcopy(e.metrics)),
                "added_by": who(e.added_by_id),
            }
            for e in shortlist.entries
        ],
    }
