"""Map errors to responses in one place: problem+json under /api, friendly pages elsewhere."""

from __future__ import annotations

import logging
from collections.abc import Mapping
from typing import Any
from urllib.parse import quote

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse, RedirectResponse, Response
from fastapi.templating import Jinja2Templates
from starlette.exceptions import HTTPException as StarletteHTTPException

from server.deps import LoginRequired
from server.errors import DomainError, problem
from server.services._validation import request_errors

log = logging.getLogger("liftmatch")
PROBLEM = "application/problem+json"


def _is_api(request: Request) -> bool:
    return request.url.path.startswith("/api/")


def _page(request: Request, status: int, title: str, detail: str,
          headers: Mapping[str, str] | None = None) -> Response:
    templates: Jinja2Templates = request.app.state.templates
    return templates.TemplateResponse(
        request,
        "pages/error.html",
        {"status": status, "title": title, "detail": detail},
        status_code=status,
        headers=headers,
    )


def _validation_errors(exc: RequestValidationError) -> list[dict[str, Any]]:
    return request_errors(exc.errors())


def install(app: FastAPI) -> None:
    @app.exception_handler(DomainError)
    async def domain_error(request: Request, exc: DomainError) -> Response:
        if isinstance(exc, LoginRequired) and not _is_api(request):
            target = quote(request.url.path + (f"?{request.url.query}" if request.url.query else ""))
            if request.headers.get("hx-request") == "true":
                return Response(status_code=204, headers={"HX-Redirect": f"/login?next={target}"})
            return RedirectResponse(f"/login?next={target}", status_code=303)
        headers = {"WWW-Authenticate": "Bearer"} if exc.status == 401 else None
        if _is_api(request):
            body = problem(exc.status, exc.title, exc.detail, [e.as_dict() for e in exc.errors])
            return JSONResponse(body, status_code=exc.status, media_type=PROBLEM, headers=headers)
        return _page(request, exc.status, exc.title, str(exc))

    @app.exception_handler(RequestValidationError)
    async def validation_error(request: Request, exc: RequestValidationError) -> Response:
        errors = _validation_errors(exc)
        detail = "; ".join(f"{e['field']}: {e['message']}" for e in errors)
        if _is_api(request):
            body = problem(422, "Invalid input", detail, errors)
            return JSONResponse(body, status_code=422, media_type=PROBLEM)
        return _page(request, 422, "Invalid input", detail)

    @app.exception_handler(StarletteHTTPException)
    async def http_error(request: Request, exc: StarletteHTTPException) -> Response:
        title = {404: "Not found", 405: "Method not allowed", 413: "Content too large",
                 429: "Too many requests"}.get(exc.status_code, "Error")
        detail = str(exc.detail)
        if exc.status_code == 413:
            limit = request.scope.get("starlette.max_body_size")
            detail = (f"The request body is larger than this route accepts ({limit} bytes); nothing was read or "
                      "saved" if limit else "The request body is too large")
        if exc.status_code == 413 or _is_api(request):
            body = problem(exc.status_code, title, detail)
            return JSONResponse(body, status_code=exc.status_code, media_type=PROBLEM, headers=exc.headers)
        return _page(request, exc.status_code, title, detail, headers=exc.headers)

    @app.exception_handler(Exception)
    async def unexpected(request: Request, exc: Exception) -> Response:
        log.exception("unhandled error on %s %s", request.method, request.url.path)
        detail = "Something went wrong on our side; nothing was saved. The error is in the server log."
        if _is_api(request):
            return JSONResponse(problem(500, "Server error", detail), status_code=500, media_type=PROBLEM)
        return _page(request, 500, "Server error", detail)
