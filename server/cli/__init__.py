"""The ``liftmatch`` command. Exit codes: 0 ok, 2 usage error, 1 failure (one line on stderr).

One module per aggregate registers its sub-commands (:func:`register`); this module assembles the parser
and runs a command with the configured settings.
"""

from __future__ import annotations

import argparse
import os
import sys
from collections.abc import Sequence

from pydantic import ValidationError

from server.cli import bench_runs, exchange, explain, fleet, predict, rankings, serve, teams, worker
from server.cli._common import CliError, Handler
from server.config import get_settings
from server.errors import DomainError

MODULES = (serve, teams, predict, rankings, explain, bench_runs, exchange, fleet, worker)


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="liftmatch", description=__doc__.split("\n")[0])
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    def add(name: str, handler: Handler, help_text: str) -> argparse.ArgumentParser:
        p = sub.add_parser(name, help=help_text, description=help_text)
        p.set_defaults(handler=handler)
        return p

    for module in MODULES:
        module.register(add)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)  # exits 2 on a usage error
    if args.command == "demo":
        os.environ.setdefault("LIFTMATCH_DEMO", "1")
    try:
        get_settings.cache_clear()
        settings = get_settings()
        return int(args.handler(args, settings))
    except ValidationError as exc:
        first = exc.errors()[0]
        where = ".".join(str(p) for p in first["loc"])
        print(f"liftmatch: configuration {where}: {first['msg'].removeprefix('Value error, ')}", file=sys.stderr)
        return 1
    except (DomainError, CliError) as exc:
        print(f"liftmatch: {exc}", file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        return 130
    except BrokenPipeError:  # the reader went away (e.g. `| head`): stop quietly, as Python's docs advise
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return 0
