"""Team page: members and API keys (a new key is shown once)."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Form, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response

from server.deps import Caller, IdPath, PageCaller, PageWriter, SessionDep, SettingsDep
from server.errors import DomainError
from server.models import Team
from server.pages._render import render
from server.services import accounts

router = APIRouter()


def _page(request: Request, session: Any, caller: Caller, **extra: Any) -> HTMLResponse:
    ctx: dict[str, Any] = {
        "caller": caller,
        "nav": "team",
        "members": accounts.list_members(session, team_id=caller.team_id),
        "keys": accounts.list_api_keys(session, team_id=caller.team_id),
        "new_key": None,
        "error": "",
    }
    ctx.update(extra)
    return render(request, "pages/team.html", ctx, block="keys")


@router.get("/team", response_class=HTMLResponse)
def team_page(request: Request, caller: PageCaller, session: SessionDep) -> HTMLResponse:
    return _page(request, session, caller)


@router.post("/team/members", response_class=HTMLResponse)
def add_member(
    request: Request, caller: PageWriter, session: SessionDep, settings: SettingsDep,
    email: Annotated[str, Form(max_length=254)] = "", role: Annotated[str, Form(max_length=16)] = "viewer",
    password: Annotated[str, Form(max_length=1024)] = "", display_name: Annotated[str, Form(max_length=120)] = "",
) -> Response:
    """Owners add a member with a first password (they change it by asking an owner; no e-mail is sent)."""
    if caller.role != "owner":
        return _page(request, session, caller, member_error="Only the team's owners can add members.")
    try:
        team = session.get(Team, caller.team_id)
        assert team is not None
        accounts.create_user(session, settings=settings, email=email, password=password, team=team, role=role,
                             display_name=display_name.strip())
        session.commit()
    except DomainError as exc:
        session.rollback()
        return _page(request, session, caller, member_error=str(exc))
    return RedirectResponse("/team", status_code=303)


@router.post("/team/api-keys", response_class=HTMLResponse)
def create_key(
    request: Request,
    caller: PageWriter,
    session: SessionDep,
    name: Annotated[str, Form(max_length=120)] = "",
    scope: Annotated[str, Form(max_length=8)] = "read",
) -> HTMLResponse:
    try:
        row, key = accounts.create_api_key(
            session, team_id=caller.team_id, scope=scope, name=name.strip(), created_by_id=caller.user_id
        )
        session.commit()
    except DomainError as exc:
        session.rollback()
        return _page(request, session, caller, error=str(exc))
    return _page(request, session, caller, new_key=key)


@router.post("/team/api-keys/{key_id}/revoke", response_class=HTMLResponse)
def revoke_key(request: Request, caller: PageWriter, session: SessionDep, key_id: IdPath) -> Response:
    accounts.revoke_api_key(session, team_id=caller.team_id, key_id=key_id)
    session.commit()
    if request.headers.get("hx-request") == "true":
        return _page(request, session, caller)
    return RedirectResponse("/team", status_code=303)
