"""The team: log in and out (signed session cookie; CSRF on both forms), members and API keys (a new key is
shown once)."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Form, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response

from server.deps import Caller, FormCsrf, IdPath, PageCaller, PageWriter, SessionDep, SettingsDep, check_csrf
from server.errors import DomainError
from server.models import Team
from server.pages._render import render
from server.security import new_csrf_token
from server.services import teams

router = APIRouter()


def _safe_next(target: str | None) -> str:
    # Only same-site paths: never redirect to another host after login.
    if target and target.startswith("/") and not target.startswith("//"):
        return target
    return "/"


@router.get("/login", response_class=HTMLResponse)
def login_form(request: Request, next: str | None = None) -> HTMLResponse:
    return render(request, "pages/login.html", {"next": _safe_next(next), "error": None, "email": ""})


@router.post("/login")
def login(
    request: Request,
    session: SessionDep,
    settings: SettingsDep,
    form_token: FormCsrf,
    email: Annotated[str, Form(max_length=254)] = "",
    password: Annotated[str, Form(max_length=1024)] = "",
    next: Annotated[str, Form(max_length=2000)] = "/",
) -> Response:
    check_csrf(request, form_token)
    membership = teams.authenticate(session, settings=settings, email=email, password=password)
    if membership is None:
        return render(
            request,
            "pages/login.html",
            {"next": _safe_next(next), "error": "Wrong e-mail or password.", "email": email},
            status_code=401,
        )
    request.session.clear()
    request.session.update(user_id=membership.user_id, team_id=membership.team_id, csrf=new_csrf_token())
    return RedirectResponse(_safe_next(next), status_code=303)


@router.post("/logout")
def logout(request: Request, form_token: FormCsrf) -> Response:
    check_csrf(request, form_token)
    request.session.clear()
    return RedirectResponse("/login", status_code=303)



def _page(request: Request, session: Any, caller: Caller, **extra: Any) -> HTMLResponse:
    ctx: dict[str, Any] = {
        "caller": caller,
        "nav": "team",
        "members": teams.list_members(session, team_id=caller.team_id),
        "keys": teams.list_api_keys(session, team_id=caller.team_id),
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
        teams.create_user(session, settings=settings, email=email, password=password, team=team, role=role,
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
        row, key = teams.create_api_key(
            session, team_id=caller.team_id, scope=scope, name=name.strip(), created_by_id=caller.user_id
        )
        session.commit()
    except DomainError as exc:
        session.rollback()
        return _page(request, session, caller, error=str(exc))
    return _page(request, session, caller, new_key=key)


@router.post("/team/api-keys/{key_id}/revoke", response_class=HTMLResponse)
def revoke_key(request: Request, caller: PageWriter, session: SessionDep, key_id: IdPath) -> Response:
    teams.revoke_api_key(session, team_id=caller.team_id, key_id=key_id)
    session.commit()
    if request.headers.get("hx-request") == "true":
        return _page(request, session, caller)
    return RedirectResponse("/team", status_code=303)
