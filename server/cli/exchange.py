"""``liftmatch export`` and ``liftmatch import``: a team's whole library as JSON."""

from __future__ import annotations

import argparse
import sys

from server.cli._common import AddCommand, CliError, session_factory
from server.config import Settings
from server.db import transaction


def cmd_export(args: argparse.Namespace, settings: Settings) -> int:
    """Write the team's library (JSON) to a file or stdout."""
    import json

    from server.services import exchange, teams

    with session_factory(settings)() as session:
        team = teams.get_team_by_name(session, name=args.team)
        doc = exchange.export(session, team_id=team.id, team_name=team.name)
    text = json.dumps(doc, indent=1, default=str)
    if args.file == "-":
        sys.stdout.write(text + "\n")
    else:
        with open(args.file, "w", encoding="utf-8") as fh:
            fh.write(text + "\n")
    return 0


def cmd_import(args: argparse.Namespace, settings: Settings) -> int:
    """Add a library file to a team (all or nothing)."""
    import json

    from server.services import exchange, teams

    try:
        with open(args.file, encoding="utf-8") as fh:
            data = json.load(fh)
    except (OSError, json.JSONDecodeError) as exc:
        raise CliError(f"cannot read {args.file}: {exc}") from None
    with transaction(session_factory(settings)) as session:
        team = teams.get_team_by_name(session, name=args.team)
        counts = exchange.import_library(session, team_id=team.id, user_id=None, data=data)
    print(json.dumps(counts))
    return 0


def register(add: AddCommand) -> None:
    """Add this module's commands to the parser."""
    p = add("export", cmd_export, "write a team's whole library as JSON")
    p.add_argument("--team", required=True)
    p.add_argument("file", nargs="?", default="-", help="output file, or - for stdout (default)")
    p = add("import", cmd_import, "add a library JSON file to a team (all or nothing)")
    p.add_argument("file")
    p.add_argument("--team", required=True)
