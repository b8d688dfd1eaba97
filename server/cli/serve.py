"""Serve the app, run the demo, migrate the database, load the demo scenario."""

from __future__ import annotations

import argparse
import sys

from server.cli._common import AddCommand, CliError, session_factory
from server.config import Settings
from server.db import transaction


def cmd_migrate(args: argparse.Namespace, settings: Settings) -> int:
    from server import migrate

    migrate.upgrade(settings.database_url, args.revision)
    print(f"database at revision {args.revision}", file=sys.stderr)
    return 0


def cmd_load_demo(args: argparse.Namespace, settings: Settings) -> int:
    from server.services import seed

    if not settings.demo and not args.with_demo_logins:
        raise CliError(
            "refusing to load the demo outside demo mode: it creates users whose passwords are published in the "
            "README; run with LIFTMATCH_DEMO=1, or pass --with-demo-logins if that is really what you want"
        )

    with transaction(session_factory(settings)) as session:
        summary = seed.load_demo(session, settings=settings)
    print(summary, file=sys.stderr)
    return 0


def _serve(settings: Settings, host: str, port: int, reload: bool = False) -> int:
    import uvicorn

    uvicorn.run(
        "server.main:create_app", factory=True, host=host, port=port, reload=reload, log_level="info", workers=1
    )
    return 0


def _require_secret(settings: Settings) -> None:
    try:
        settings.check_secret()
    except ValueError as exc:
        raise CliError(str(exc)) from None


def cmd_serve(args: argparse.Namespace, settings: Settings) -> int:
    _require_secret(settings)
    print(f"liftmatch serving on http://{args.host}:{args.port}/", file=sys.stderr)
    return _serve(settings, args.host, args.port, args.reload)


def cmd_demo(args: argparse.Namespace, settings: Settings) -> int:
    from server import migrate
    from server.services import seed

    _require_secret(settings)
    migrate.upgrade(settings.database_url)
    with transaction(session_factory(settings)) as session:
        summary = seed.load_demo(session, settings=settings, if_missing=True)
    print(summary, file=sys.stderr)
    print(
        f"\n  liftmatch demo: http://{args.host}:{args.port}/\n"
        f"  log in as {seed.DEMO_LOGIN[0]} / {seed.DEMO_LOGIN[1]}  (invented demo data)\n",
        file=sys.stderr,
    )
    return _serve(settings, args.host, args.port)


def register(add: AddCommand) -> None:
    """Add this module's commands to the parser."""
    for name, handler, text in (
        ("serve", cmd_serve, "serve the web app and API"),
        ("demo", cmd_demo, "migrate, load the invented demo scenario and serve"),
    ):
        p = add(name, handler, text)
        p.add_argument("--host", default="127.0.0.1")
        p.add_argument("--port", type=int, default=8000)
        if name == "serve":
            p.add_argument("--reload", action="store_true", help="restart on code changes (development)")
    p = add("migrate", cmd_migrate, "bring the database schema up to date")
    p.add_argument("--revision", default="head")
    p = add("load-demo", cmd_load_demo, "load the invented demo scenario (Northfold Survey)")
    p.add_argument("--with-demo-logins", action="store_true",
                   help="load it even outside demo mode (its users' passwords are published)")
