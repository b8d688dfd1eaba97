"""Log in and out (signed session cookie; CSRF token checked on both forms)."""

from __future__ import annotations

from typing import Annotated

from fastapi import APIRouter, Form, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response

from server.deps import FormCsrf, SessionDep, SettingsDep, check_csrf
from server.pages._render import render
from server.security import new_csrf_token
from server.services import accounts

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
    membership = accounts.authenticate(session, settings=settings, email=email, password=password)
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
