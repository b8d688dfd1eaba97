"""Teams, users and API keys from the command line."""

from __future__ import annotations

import argparse
import getpass
import sys

from server.cli._common import AddCommand, CliError, session_factory
from server.config import Settings
from server.db import transaction


def cmd_create_team(args: argparse.Namespace, settings: Settings) -> int:
    from server.services import teams

    with transaction(session_factory(settings)) as session:
        team = teams.create_team(session, name=args.name)
        print(team.id)
    return 0


def _read_password(args: argparse.Namespace) -> str:
    if args.password_stdin:
        return sys.stdin.readline().rstrip("\n")
    if not sys.stdin.isatty():
        raise CliError("no terminal to prompt for a password; use --password-stdin")
    first = getpass.getpass("Password: ")
    if first != getpass.getpass("Repeat password: "):
        raise CliError("the passwords differ")
    return first


def cmd_create_user(args: argparse.Namespace, settings: Settings) -> int:
    from server.services import teams

    password = _read_password(args)
    with transaction(session_factory(settings)) as session:
        team = teams.get_team_by_name(session, name=args.team)
        existed = teams.find_user(session, email=args.email) is not None
        user = teams.create_user(
            session,
            settings=settings,
            email=args.email,
            password=password,
            team=team,
            role=args.role,
            display_name=args.name or "",
            existing="add",
        )
        if existed:
            print(f"{args.email} already had an account: added to {args.team}; its password was not changed",
                  file=sys.stderr)
        print(user.id)
    return 0


def cmd_create_api_key(args: argparse.Namespace, settings: Settings) -> int:
    from server.services import teams

    with transaction(session_factory(settings)) as session:
        team = teams.get_team_by_name(session, name=args.team)
        _, key = teams.create_api_key(session, team_id=team.id, scope=args.scope, name=args.name or "")
    print(key)  # alone on stdout: scripts capture it
    return 0


def cmd_set_password(args: argparse.Namespace, settings: Settings) -> int:
    from server.services import teams

    password = _read_password(args)
    with transaction(session_factory(settings)) as session:
        teams.set_password(session, settings=settings, email=args.email, password=password)
    print(f"password of {args.email} changed; its sessions were ended", file=sys.stderr)
    return 0


def cmd_set_active(args: argparse.Namespace, settings: Settings) -> int:
    from server.services import teams

    active = args.command == "activate-user"
    with transaction(session_factory(settings)) as session:
        teams.set_active(session, email=args.email, active=active)
    print(f"{args.email} {'activated' if active else 'deactivated; its sessions were ended'}", file=sys.stderr)
    return 0


def register(add: AddCommand) -> None:
    """Add this module's commands to the parser."""
    p = add("create-team", cmd_create_team, "create a team; prints its id")
    p.add_argument("name")
    p = add("create-user", cmd_create_user, "create a user in a team; prints the user id")
    p.add_argument("email")
    p.add_argument("--team", required=True)
    p.add_argument("--role", required=True, choices=["owner", "engineer", "viewer"])
    p.add_argument("--name", help="display name")
    p.add_argument("--password-stdin", action="store_true", help="read the password from the first stdin line")
    p = add("create-api-key", cmd_create_api_key, "create an API key; prints the key alone on stdout")
    p.add_argument("--team", required=True)
    p.add_argument("--scope", required=True, choices=["read", "write"])
    p.add_argument("--name", help="what the key is for")
    p = add("set-password", cmd_set_password, "reset a user's password (ends that user's sessions)")
    p.add_argument("email")
    p.add_argument("--password-stdin", action="store_true", help="read the password from the first stdin line")
    for name, text in (("deactivate-user", "deactivate an account (its sessions end at once)"),
                       ("activate-user", "activate an account again")):
        p = add(name, cmd_set_active, text)
        p.add_argument("email")
