"""Teams, users, memberships and API keys."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

from sqlalchemy import select
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from server.config import Settings
from server.errors import Conflict, FieldError, InvalidInput, NotFound
from server.models import ApiKey, Membership, Team, User
from server.models.teams import KEY_SCOPES, ROLES
from server.security import api_key_hash, api_key_prefix, hash_password, new_api_key, verify_password

LAST_USED_RESOLUTION = timedelta(seconds=60)


def _aware(moment: datetime | None) -> datetime | None:
    # SQLite hands back naive datetimes; they were stored as UTC.
    if moment is not None and moment.tzinfo is None:
        return moment.replace(tzinfo=UTC)
    return moment


def create_team(session: Session, *, name: str) -> Team:
    name = name.strip()
    if not name or len(name) > 120:
        raise InvalidInput("Invalid team name", [FieldError("name", "must be 1–120 characters")])
    if session.scalar(select(Team).where(Team.name == name)) is not None:
        raise Conflict(f"A team named {name!r} already exists", [FieldError("name", "already taken")])
    team = Team(name=name)
    session.add(team)
    session.flush()
    return team


def get_team_by_name(session: Session, *, name: str) -> Team:
    team = session.scalar(select(Team).where(Team.name == name))
    if team is None:
        raise NotFound(f"No team named {name!r}")
    return team


def create_user(
    session: Session,
    *,
    settings: Settings,
    email: str,
    password: str,
    team: Team,
    role: str,
    display_name: str = "",
) -> User:
    """Create a user (or add an existing one) as a member of ``team`` with ``role``."""
    email = email.strip().lower()
    errors: list[FieldError] = []
    if "@" not in email or len(email) > 254:
        errors.append(FieldError("email", "must be an e-mail address"))
    if role not in ROLES:
        errors.append(FieldError("role", f"must be one of {', '.join(ROLES)}"))
    if len(password) < 8:
        errors.append(FieldError("password", "must be at least 8 characters"))
    if errors:
        raise InvalidInput("Invalid user", errors)
    user = session.scalar(select(User).where(User.email == email))
    if user is None:
        user = User(email=email, display_name=display_name, password_hash=hash_password(settings, password))
        session.add(user)
        session.flush()
    if membership(session, user_id=user.id, team_id=team.id) is not None:
        raise Conflict(f"{email} is already a member of {team.name}")
    session.add(Membership(team_id=team.id, user_id=user.id, role=role))
    try:
        session.flush()
    except IntegrityError as exc:  # concurrent insert of the same membership
        raise Conflict(f"{email} is already a member of {team.name}") from exc
    return user


def authenticate(session: Session, *, settings: Settings, email: str, password: str) -> Membership | None:
    """The user's first membership when the password is right, else None (same cost either way)."""
    user = session.scalar(select(User).where(User.email == email.strip().lower()))
    ok = verify_password(settings, user.password_hash if user else None, password)
    if not ok or user is None or not user.active:
        return None
    return session.scalar(select(Membership).where(Membership.user_id == user.id).order_by(Membership.id))


def membership(session: Session, *, user_id: int, team_id: int) -> Membership | None:
    return session.scalar(select(Membership).where(Membership.user_id == user_id, Membership.team_id == team_id))


def list_members(session: Session, *, team_id: int) -> list[Membership]:
    stmt = select(Membership).where(Membership.team_id == team_id).order_by(Membership.id)
    return list(session.scalars(stmt))


def create_api_key(
    session: Session, *, team_id: int, scope: str, name: str = "", created_by_id: int | None = None
) -> tuple[ApiKey, str]:
    """A new key for the team; returns the row and the key itself (shown once, stored only as a hash)."""
    if scope not in KEY_SCOPES:
        raise InvalidInput("Invalid scope", [FieldError("scope", "must be read or write")])
    key = new_api_key()
    row = ApiKey(
        team_id=team_id,
        name=name,
        prefix=api_key_prefix(key),
        key_hash=api_key_hash(key),
        scope=scope,
        created_by_id=created_by_id,
    )
    session.add(row)
    session.flush()
    return row, key


def list_api_keys(session: Session, *, team_id: int) -> list[ApiKey]:
    return list(session.scalars(select(ApiKey).where(ApiKey.team_id == team_id).order_by(ApiKey.id)))


def revoke_api_key(session: Session, *, team_id: int, key_id: int) -> ApiKey:
    row = session.scalar(select(ApiKey).where(ApiKey.id == key_id, ApiKey.team_id == team_id))
    if row is None:
        raise NotFound("No such API key")
    if row.revoked_at is None:
        row.revoked_at = datetime.now(UTC)
    return row


def resolve_api_key(session: Session, key: str) -> tuple[ApiKey, Team] | None:
    """The live key row and its team, updating ``last_used_at`` at most once a minute."""
    row = session.scalar(select(ApiKey).where(ApiKey.key_hash == api_key_hash(key)))
    if row is None or row.revoked_at is not None:
        return None
    now = datetime.now(UTC)
    last = _aware(row.last_used_at)
    if last is None or now - last > LAST_USED_RESOLUTION:
        row.last_used_at = now
        session.commit()
    team = session.get(Team, row.team_id)
    if team is None:
        return None
    return row, team
