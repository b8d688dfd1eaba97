"""create_app(): the FastAPI application (routers, templates, static files, error handling)."""

from __future__ import annotations

from collections.abc import AsyncIterator
from contextlib import asynccontextmanager

from anyio import to_thread
from fastapi import FastAPI, Request
from fastapi.responses import HTMLResponse
from fastapi.staticfiles import StaticFiles
from starlette.middleware.sessions import SessionMiddleware
from starlette.types import ASGIApp

from server import __version__, http_errors, key_cache
from server.api import api_router
from server.config import Settings, get_settings
from server.db import make_engine, make_sessionmaker
from server.jobs.runners import runner_for
from server.limits import MAX_BODY_BYTES
from server.middleware import SecurityHeaders
from server.pages import page_router
from server.pages._render import make_templates
from server.resources import web_dir
from server.services.page_cache import PageCache
from server.usage import KeyUsage


class App(FastAPI):
    """FastAPI with :class:`SecurityHeaders` around its whole middleware stack (outside even the error handler)."""

    https = False

    def build_middleware_stack(self) -> ASGIApp:
        return SecurityHeaders(super().build_middleware_stack(), https=self.https)


def create_app(settings: Settings | None = None) -> FastAPI:
    settings = settings or get_settings()
    settings.check_secret()

    @asynccontextmanager
    async def lifespan(app: FastAPI) -> AsyncIterator[None]:
        # Every request handler that touches the database runs in this many threads; the pool holds a connection
        # for each of them and for each job worker, so no request waits for a connection (or times out).
        to_thread.current_default_thread_limiter().total_tokens = settings.request_threads
        key_cache.KEYS.ttl_s = settings.api_key_cache_s
        key_cache.KEYS.forget_all()
        engine = make_engine(settings.database_url, pool_size=settings.request_threads + settings.job_concurrency + 2)
        app.state.engine = engine
        app.state.sessionmaker = make_sessionmaker(engine)
        app.state.key_usage = KeyUsage(app.state.sessionmaker)
        app.state.key_usage.start()
        # Jobs run outside the request (numpy releases the GIL while it computes).
        app.state.runner = runner_for(settings, app.state.sessionmaker)
        app.state.runner.start()
        yield
        app.state.runner.stop()
        app.state.key_usage.stop()
        engine.dispose()

    app = App(
        title="liftmatch",
        version=__version__,
        summary="Rank drone power systems (pack × ESC × motor × propeller) from your own parts and bench runs.",
        lifespan=lifespan,
        openapi_url="/api/v1/openapi.json",
        docs_url=None,  # served below from vendored files (no CDN)
        redoc_url=None,
        responses={400: {"description": "Malformed request body"},
                   413: {"description": "Request body larger than the route's limit (rejected before parsing)"}},
        max_body_size=MAX_BODY_BYTES,
    )
    app.state.settings = settings
    app.state.parts_pages = PageCache()  # the parts list's pages (server/api/parts.py)
    web = web_dir()
    app.state.templates = make_templates(web / "templates")
    app.add_middleware(
        SessionMiddleware,
        secret_key=settings.secret_key,
        session_cookie="liftmatch_session",
        max_age=settings.session_max_age_s,
        same_site="lax",
        https_only=settings.cookie_secure,
    )
    app.https = settings.cookie_secure
    app.mount("/static", StaticFiles(directory=web / "static"), name="static")
    app.include_router(api_router)
    app.include_router(page_router)
    http_errors.install(app)

    @app.get("/api/v1/docs", include_in_schema=False, response_class=HTMLResponse)
    def api_docs(request: Request) -> HTMLResponse:
        templates = app.state.templates
        response: HTMLResponse = templates.TemplateResponse(request, "pages/api_docs.html",
                                                            {"openapi_url": app.openapi_url})
        return response

    @app.get("/healthz", include_in_schema=False)
    def healthz() -> dict[str, str]:
        return {"status": "ok", "version": __version__}

    return app
