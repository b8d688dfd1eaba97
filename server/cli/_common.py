"""What every ``liftmatch`` command module shares: the session factory, errors, the parser hook."""

from __future__ import annotations

import argparse
from collections.abc import Callable

from sqlalchemy.orm import Session, sessionmaker

from server.config import Settings
from server.db import make_engine, make_sessionmaker

Handler = Callable[[argparse.Namespace, Settings], int]
AddCommand = Callable[[str, Handler, str], argparse.ArgumentParser]
"""``add(name, handler, help)`` registers a sub-command and returns its parser."""


class CliError(Exception):
    """A failure to report in one line."""


def session_factory(settings: Settings) -> sessionmaker[Session]:
    """A session factory on the configured database."""
    return make_sessionmaker(make_engine(settings.database_url))
