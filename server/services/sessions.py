"""Browser log-in sessions held server-side (so they can end) and log-in throttling per account and per client."""

from __future__ import annotations

import hashlib
import secrets
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta

from sqlalchemy import delete, func, select, update
from sqlalchemy.orm import Session, joinedload

from server.config import Settings
from server.models import LoginFailure, LoginSession, Membership, User


def _hash(token: str) -> str:
    return hashlib.sha256(token.encode()).hexdigest()


def _now() -> datetime:
    return datetime.now(UTC)


def start(session: Session, *, user_id: int, team_id: int, max_age_s: int) -> str:
    """A new log-in; returns the token for the (signed) cookie. Only its hash is stored."""
    token = secrets.token_urlsafe(32)
    session.add(LoginSession(token_hash=_hash(token), user_id=user_id, team_id=team_id,
                             expires_at=_now() + timedelta(seconds=max_age_s)))
    session.flush()
    return token


def resolve(session: Session, token: str) -> Membership | None:
    """The membership a live session acts as: not logged out, not expired, user active, still a member."""
    row = session.execute(
        select(LoginSession, User.active).join(User, User.id == LoginSession.user_id)
        .where(LoginSession.token_hash == _hash(token), LoginSession.revoked_at.is_(None))
    ).first()
    if row is None:
        return None
    login, active = row
    expires = login.expires_at if login.expires_at.tzinfo else login.expires_at.replace(tzinfo=UTC)
    if not active or expires <= _now():
        return None
    return session.scalar(select(Membership).options(joinedload(Membership.team))  # every page shows the team's name
                          .where(Membership.user_id == login.user_id, Membership.team_id == login.team_id))


def end(session: Session, token: str) -> None:
    """Log out this session (a replayed cookie no longer works)."""
    session.execute(update(LoginSession).where(LoginSession.token_hash == _hash(token),
                                               LoginSession.revoked_at.is_(None)).values(revoked_at=_now()))


def end_all(session: Session, *, user_id: int, team_id: int | None = None, keep_token: str | None = None) -> None:
    """End every session of a user (of one team only when ``team_id``), except ``keep_token``'s."""
    stmt = update(LoginSession).where(LoginSession.user_id == user_id, LoginSession.revoked_at.is_(None))
    if team_id is not None:
        stmt = stmt.where(LoginSession.team_id == team_id)
    if keep_token is not None:
        stmt = stmt.where(LoginSession.token_hash != _hash(keep_token))
    session.execute(stmt.values(revoked_at=_now()))


# --- throttling ------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Throttled:
    """Too many recent failures: try again after ``retry_after_s`` seconds."""

    retry_after_s: int
    reason: str


def check(session: Session, settings: Settings, *, account: str, client: str) -> Throttled | None:
    """Whether a log-in attempt may proceed (checked before the password is, so a throttled guess costs nothing)."""
    since = _now() - timedelta(seconds=settings.login_window_s)
    for column, value, limit, reason in (
        (LoginFailure.account, account, settings.login_failures_per_account, "this account"),
        (LoginFailure.client, client, settings.login_failures_per_client, "this address"),
    ):
        count, oldest = session.execute(
            select(func.count(), func.min(LoginFailure.created_at)).where(column == value,
                                                                          LoginFailure.created_at > since)
        ).one()
        if count >= limit and oldest is not None:
            oldest = oldest if oldest.tzinfo else oldest.replace(tzinfo=UTC)
            wait = settings.login_window_s - (_now() - oldest).total_seconds()
            return Throttled(max(1, int(wait) + 1), reason)
    return None


def record_failure(session: Session, settings: Settings, *, account: str, client: str) -> None:
    session.add(LoginFailure(account=account[:254], client=client[:64]))
    old = _now() - timedelta(seconds=settings.login_window_s * 4)
    session.execute(delete(LoginFailure).where(LoginFailure.created_at < old))


def clear_failures(session: Session, *, account: str) -> None:
    """A successful log-in forgives the account's earlier typos (the client's count stays)."""
    session.execute(delete(LoginFailure).where(LoginFailure.account == account))
