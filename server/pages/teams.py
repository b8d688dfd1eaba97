"""The team: log in and out (signed session cookie; CSRF on both forms), members and API keys (a new key is
shown once)."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Form, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response

from server.deps import Caller, FormCsrf, IdPath, PageCaller, PageWriter, SessionDep, SettingsDep, check_csrf
from server.errors import DomainError, FieldError, InvalidInput
from server.models import Team
from server.pages._render import render
from server.security import new_csrf_token
from server.services import sessions, teams

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
    account, client = email.strip().lower(), request.client.host if request.client else "unknown"
    throttled = sessions.check(session, settings, account=account, client=client)
    if throttled is not None:
        return render(request, "pages/login.html", {
            "next": _safe_next(next), "email": email,
            "error": f"Too many failed log-ins from {throttled.reason}; try again in {throttled.retry_after_s} s.",
        }, status_code=429, headers={"Retry-After": str(throttled.retry_after_s)})
    membership = teams.authenticate(session, settings=settings, email=email, password=password)
    if membership is None:
        sessions.record_failure(session, settings, account=account, client=client)
        session.commit()
        return render(
            request,
            "pages/login.html",
            {"next": _safe_next(next), "error": "Wrong e-mail or password.", "email": email},
            status_code=401,
        )
    sessions.clear_failures(session, account=account)
    token = sessions.start(session, user_id=membership.user_id, team_id=membership.team_id,
                           max_age_s=settings.session_max_age_s)
    session.commit()
    request.session.clear()
    request.session.update(sid=token, csrf=new_csrf_token())
    return RedirectResponse(_safe_next(next), status_code=303)


@router.post("/logout")
def logout(request: Request, session: SessionDep, form_token: FormCsrf) -> Response:
    check_csrf(request, form_token)
    token = request.session.get("sid")
    if isinstance(token, str):
        sessions.end(session, token)  # the cookie dies server-side: a copy replayed later is refused
        session.commit()
    request.session.clear()
    return RedirectResponse("/login", status_code=303)


@router.post("/team/password", response_class=HTMLResponse)
def change_password(
    request: Request, caller: PageCaller, session: SessionDep, settings: SettingsDep,
    current_password: Annotated[str, Form(max_length=1024)] = "",
    new_password: Annotated[str, Form(max_length=1024)] = "",
    repeat_password: Annotated[str, Form(max_length=1024)] = "",
) -> Response:
    """Change your own password; your other sessions (other browsers, stolen cookies) end."""
    assert caller.user_id is not None
    try:
        if new_password != repeat_password:
            raise InvalidInput("Password not changed", [FieldError("repeat_password", "differs from the new one")])
        teams.change_password(session, settings=settings, user_id=caller.user_id, current=current_password,
                              new=new_password, keep_token=request.session.get("sid"))
        session.commit()
    except DomainError as exc:
        session.rollback()
        return _page(request, session, caller, password_error=str(exc))
    return _page(request, session, caller, password_message="Password changed; your other sessions were ended.")


@router.post("/team/members/{user_id}/remove", response_class=HTMLResponse)
def remove_member(request: Request, caller: PageWriter, session: SessionDep, user_id: IdPath) -> Response:
    """Owners remove a member: their sessions in this team and the keys they created end at once."""
    if caller.role != "owner":
        return _page(request, session, caller, member_error="Only the team's owners remove members.")
    try:
        teams.remove_member(session, team_id=caller.team_id, user_id=user_id)
        session.commit()
    except DomainError as exc:
        session.rollback()
        return _page(request, session, caller, member_error=str(exc))
    return RedirectResponse("/team", status_code=303)


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
        teams.check_may_create_key(role=caller.role, via=caller.via, scope=scope)
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
    try:
        teams.revoke_api_key(session, team_id=caller.team_id, key_id=key_id, role=caller.role, via=caller.via,
                             user_id=caller.user_id)
        session.commit()
    except DomainError as exc:
        session.rollback()
        return _page(request, session, caller, error=str(exc))
    if request.headers.get("hx-request") == "true":
        return _page(request, session, caller)
    return RedirectResponse("/team", status_code=303)
