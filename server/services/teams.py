"""Teams, users, memberships and API keys."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import UTC, datetime
from typing import Literal

from sqlalchemy import func, select
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from server import key_cache
from server.config import Settings
from server.errors import Conflict, FieldError, Forbidden, InvalidInput, NotFound
from server.models import ApiKey, Membership, Team, User
from server.models.teams import KEY_SCOPES, ROLES
from server.security import api_key_hash, api_key_prefix, hash_password, new_api_key, verify_password
from server.services import sessions


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
    existing: Literal["refuse", "add"] = "refuse",
) -> User:
    """Create a user as a member of ``team`` with ``role``.

    An e-mail that already has an account is refused (``existing="refuse"``, what owners in the browser get): an
    owner never sets or learns the password of someone else's account. The server's operator (the CLI) may add
    an existing account to another team (``existing="add"``); its password is left unchanged.
    """
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
    if user is not None and existing == "refuse":
        raise Conflict(
            f"{email} already has a liftmatch account; it cannot be added here with a new password. The server's "
            "operator can add that account to this team (liftmatch create-user … keeps its password)",
            [FieldError("email", "already has an account")],
        )
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


def find_user(session: Session, *, email: str) -> User | None:
    return session.scalar(select(User).where(User.email == email.strip().lower()))


def authenticate(session: Session, *, settings: Settings, email: str, password: str) -> Membership | None:
    """The user's first membership when the password is right, else None (same cost either way)."""
    user = session.scalar(select(User).where(User.email == email.strip().lower()))
    ok = verify_password(settings, user.password_hash if user else None, password)
    if not ok or user is None or not user.active:
        return None
    return session.scalar(select(Membership).where(Membership.user_id == user.id).order_by(Membership.id))


def _check_password(password: str) -> None:
    if len(password) < 8:
        raise InvalidInput("Invalid password", [FieldError("password", "must be at least 8 characters")])


def change_password(session: Session, *, settings: Settings, user_id: int, current: str, new: str,
                    keep_token: str | None = None) -> None:
    """A user changes their own password (knowing the current one); every other session of theirs ends."""
    user = session.get(User, user_id)
    if user is None or not verify_password(settings, user.password_hash, current):
        raise InvalidInput("Password not changed", [FieldError("current_password", "is not your current password")])
    _check_password(new)
    user.password_hash = hash_password(settings, new)
    sessions.end_all(session, user_id=user_id, keep_token=keep_token)


def set_password(session: Session, *, settings: Settings, email: str, password: str) -> User:
    """The operator resets a password (CLI); every session of that user ends."""
    user = find_user(session, email=email)
    if user is None:
        raise NotFound(f"No account for {email}")
    _check_password(password)
    user.password_hash = hash_password(settings, password)
    sessions.end_all(session, user_id=user.id)
    return user


def set_active(session: Session, *, email: str, active: bool) -> User:
    """The operator deactivates (or reactivates) an account (CLI); deactivation ends its sessions at once."""
    user = find_user(session, email=email)
    if user is None:
        raise NotFound(f"No account for {email}")
    user.active = active
    if not active:
        sessions.end_all(session, user_id=user.id)
    return user


def remove_member(session: Session, *, team_id: int, user_id: int) -> None:
    """An owner removes someone from the team (never the last owner); their sessions in this team end."""
    row = membership(session, user_id=user_id, team_id=team_id)
    if row is None:
        raise NotFound("No such member")
    if row.role == "owner":
        owners = session.scalar(select(func.count()).select_from(Membership).where(
            Membership.team_id == team_id, Membership.role == "owner")) or 0
        if owners <= 1:
            raise Conflict("The team's last owner cannot be removed; make someone else an owner first")
    session.delete(row)
    sessions.end_all(session, user_id=user_id, team_id=team_id)
    for key in session.scalars(select(ApiKey).where(ApiKey.team_id == team_id, ApiKey.created_by_id == user_id,
                                                    ApiKey.revoked_at.is_(None))):
        key.revoked_at = datetime.now(UTC)  # their keys go with them
        key_cache.revoking(session)
    session.flush()


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


def check_may_create_key(*, role: str, via: str, scope: str) -> None:
    """Only people create keys; only owners create write keys."""
    if via == "key":
        raise Forbidden("API keys cannot create further keys; log in to the team page")
    if scope == "write" and role != "owner":
        raise Forbidden("Only the team's owners create write keys; you may create read keys")


def check_may_revoke_key(row: ApiKey, *, role: str, via: str, user_id: int | None, api_key_id: int | None) -> None:
    """Owners revoke any key of their team; others only the keys they created; a key only itself."""
    if via == "key":
        if row.id != api_key_id:
            raise Forbidden("An API key may revoke only itself; owners revoke other keys on the team page")
        return
    if role != "owner" and (user_id is None or row.created_by_id != user_id):
        raise Forbidden("Only the team's owners revoke other people's keys")


def list_api_keys(session: Session, *, team_id: int) -> list[ApiKey]:
    return list(session.scalars(select(ApiKey).where(ApiKey.team_id == team_id).order_by(ApiKey.id)))


def revoke_api_key(session: Session, *, team_id: int, key_id: int, role: str = "owner", via: str = "session",
                   user_id: int | None = None, api_key_id: int | None = None) -> ApiKey:
    row = session.scalar(select(ApiKey).where(ApiKey.id == key_id, ApiKey.team_id == team_id))
    if row is None:
        raise NotFound("No such API key")
    check_may_revoke_key(row, role=role, via=via, user_id=user_id, api_key_id=api_key_id)
    if row.revoked_at is None:
        row.revoked_at = datetime.now(UTC)
        key_cache.revoking(session)
    return row


@dataclass(frozen=True)
class KeyOwner:
    """What a request needs of a live API key: its id and scope, and its team's id and name."""

    key_id: int
    scope: str
    team_id: int
    team_name: str


def resolve_api_key(session: Session, key: str) -> KeyOwner | None:
    """The live key and its team (a read: the caller records the use off the request, see server.usage).

    Every API request runs this, so it selects four columns rather than loading two ORM objects (a third of the
    time on SQLite, measured in benchmarks/api_load.py's server).
    """
    k, t = ApiKey.__table__, Team.__table__
    found = session.execute(select(k.c.id, k.c.scope, t.c.id, t.c.name).join(t, t.c.id == k.c.team_id)
                            .where(k.c.key_hash == api_key_hash(key), k.c.revoked_at.is_(None))).first()
    if found is None:
        return None
    return KeyOwner(int(found[0]), str(found[1]), int(found[2]), str(found[3]))
