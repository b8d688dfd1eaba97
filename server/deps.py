"""Request dependencies as ``Annotated`` aliases: DB session, settings, the calling team, htmx flag."""

from __future__ import annotations

from collections.abc import AsyncIterator
from dataclasses import dataclass
from typing import Annotated, Literal

from fastapi import Depends, Path, Request
from sqlalchemy.orm import Session
from starlette.concurrency import run_in_threadpool

from server import key_cache
from server.config import Settings
from server.errors import Forbidden, Unauthorized
from server.security import csrf_matches
from server.services import sessions, teams

UNSAFE_METHODS = {"POST", "PUT", "PATCH", "DELETE"}
MAX_ID = 2**63 - 1


async def get_db(request: Request) -> AsyncIterator[Session]:
    """A session for the request. Creating one touches no database (no thread needed); closing one that ran
    queries ends its transaction, which is database work, so that part runs in the thread pool."""
    session: Session = request.app.state.sessionmaker()
    try:
        yield session
    finally:
        if session.in_transaction():
            await run_in_threadpool(session.close)
        else:
            session.close()


def get_settings_dep(request: Request) -> Settings:
    settings: Settings = request.app.state.settings
    return settings


SessionDep = Annotated[Session, Depends(get_db)]
SettingsDep = Annotated[Settings, Depends(get_settings_dep)]
IdPath = Annotated[int, Path(ge=1, le=MAX_ID, description="Row id")]


@dataclass(frozen=True)
class Caller:
    """Who is asking, for which team, and whether they may write. Every query is scoped by ``team_id``."""

    team_id: int
    team_name: str
    role: str
    via: Literal["session", "key"]
    user_id: int | None = None
    api_key_id: int | None = None

    @property
    def can_write(self) -> bool:
        return self.role in ("owner", "engineer", "key:write")


class LoginRequired(Unauthorized):
    """Raised for browser pages; rendered as a redirect to the login page."""


def _from_bearer(request: Request, session: Session) -> Caller | None:
    if not request.headers.get("authorization"):
        return None
    token = _bearer_token(request)
    if token is None:
        raise Unauthorized("Authorization header must be 'Bearer <api key>'")
    found = teams.resolve_api_key(session, token)
    if found is None:
        raise Unauthorized("Unknown or revoked API key")
    request.app.state.key_usage.note(found.key_id)  # written off the request path (server.usage)
    return Caller(found.team_id, found.team_name, f"key:{found.scope}", "key", api_key_id=found.key_id)


def _from_session(request: Request, session: Session) -> Caller | None:
    token = request.session.get("sid")
    if not isinstance(token, str) or not token:
        return None
    membership = sessions.resolve(session, token)
    if membership is None:  # logged out, expired, deactivated or removed: the cookie is dead
        request.session.pop("sid", None)
        return None
    return Caller(membership.team_id, membership.team.name, membership.role, "session", user_id=membership.user_id)


def check_csrf(request: Request, form_token: str | None = None) -> None:
    """Unsafe requests authenticated by cookie must echo the session's CSRF token (header or form field)."""
    if request.method not in UNSAFE_METHODS:
        return
    given = request.headers.get("x-csrf-token") or form_token
    if not csrf_matches(request.session.get("csrf"), given):
        raise Forbidden("Missing or wrong CSRF token; reload the page and try again")


async def _form_csrf(request: Request) -> str | None:
    # Only a browser session (which holds a CSRF token) needs the form's token: a request without one is not read
    # before authentication.
    if request.method not in UNSAFE_METHODS or request.headers.get("x-csrf-token"):
        return None
    if not request.session.get("csrf"):
        return None
    content_type = request.headers.get("content-type", "")
    if "form" not in content_type:
        return None
    form = await request.form()
    token = form.get("csrf_token")
    return token if isinstance(token, str) else None


FormCsrf = Annotated[str | None, Depends(_form_csrf)]


async def get_caller(request: Request, form_token: FormCsrf) -> Caller:
    """API callers: a bearer key, or a logged-in browser session (with CSRF on writes).

    A key resolved a moment ago is taken from :mod:`server.key_cache` without a database round trip (its use is
    still recorded); anything else is resolved on a worker thread with a short read-only session of its own (no
    database work on the event loop, and none in this async dependency).
    """
    token = _bearer_token(request)
    if token is not None:
        cached: Caller | None = key_cache.KEYS.get(token)
        if cached is not None:
            request.app.state.key_usage.note(cached.api_key_id)
            return cached
    caller = await run_in_threadpool(_resolve_caller_in_own_session, request, form_token)
    if token is not None and caller.via == "key":
        key_cache.KEYS.put(token, caller)
    return caller


def _resolve_caller_in_own_session(request: Request, form_token: str | None) -> Caller:
    with request.app.state.sessionmaker() as session:
        return _resolve_caller(request, session, form_token)


def _bearer_token(request: Request) -> str | None:
    """The key of a well-formed ``Authorization: Bearer <key>`` header (anything else: None)."""
    scheme, _, token = (request.headers.get("authorization") or "").partition(" ")
    return token.strip() if scheme.lower() == "bearer" and token.strip() else None


def _resolve_caller(request: Request, session: Session, form_token: str | None) -> Caller:
    caller = _from_bearer(request, session)
    if caller is None:
        caller = _from_session(request, session)
        if caller is None:
            raise Unauthorized("Send 'Authorization: Bearer <api key>' or log in")
        check_csrf(request, form_token)
    return caller


def get_page_caller(request: Request, session: SessionDep, form_token: FormCsrf) -> Caller:
    """Browser pages: a logged-in session; otherwise a redirect to the login page."""
    caller = _from_session(request, session)
    if caller is None:
        raise LoginRequired("Please log in")
    check_csrf(request, form_token)
    return caller


def _writer(caller: Caller) -> Caller:
    if not caller.can_write:
        raise Forbidden("This account or key may read but not change the team's data")
    return caller


async def get_writer(caller: Annotated[Caller, Depends(get_caller)]) -> Caller:  # no I/O: no worker thread
    return _writer(caller)


def get_page_writer(caller: Annotated[Caller, Depends(get_page_caller)]) -> Caller:
    return _writer(caller)


def is_htmx(request: Request) -> bool:
    return request.headers.get("hx-request") == "true"


CallerDep = Annotated[Caller, Depends(get_caller)]
WriterDep = Annotated[Caller, Depends(get_writer)]
PageCaller = Annotated[Caller, Depends(get_page_caller)]
PageWriter = Annotated[Caller, Depends(get_page_writer)]
HtmxRequest = Annotated[bool, Depends(is_htmx)]
