"""Files the package ships beside its code: page templates, static files, migrations and the demo scenario.

A built wheel carries them inside the package (``server/_shipped/web``, ``…/migrations``, ``…/seed_data``; the
``force-include`` table of pyproject.toml puts them there), where :mod:`importlib.resources` finds them wherever the
package is installed and whatever the working directory. A source checkout (the editable install of the README and
DEVELOPERS.md) has no ``_shipped`` folder: there they are the repository's own top-level folders, so an edit is live
without a rebuild. This module is the one place that knows either layout.
"""

from __future__ import annotations

from importlib.resources import files
from pathlib import Path

SHIPPED = "_shipped"
"""The folder inside the package that holds the shipped files in a wheel."""

_SOURCE_ROOT = Path(__file__).resolve().parents[1]


def resource_dir(name: str) -> Path:
    """The directory of the shipped files ``name`` (``web``, ``migrations`` or ``seed_data``) as a real path.

    An installed wheel is unpacked on disk, so the package's resources are ordinary files; Jinja, Starlette's
    static files and Alembic all need a directory path, not a stream.
    """
    packaged = files("server").joinpath(SHIPPED, name)
    if packaged.is_dir():
        return Path(str(packaged))
    source = _SOURCE_ROOT / name
    if source.is_dir():
        return source
    raise FileNotFoundError(f"liftmatch's {name!r} files are missing: neither {packaged} (installed wheel) nor "
                            f"{source} (source checkout) exists; reinstall the package")


def web_dir() -> Path:
    """Page templates (``templates/``) and static files (``static/``)."""
    return resource_dir("web")


def migrations_dir() -> Path:
    """Alembic's script location (``env.py`` and ``versions/``)."""
    return resource_dir("migrations")


def demo_file() -> Path:
    """The invented demo scenario; its synthetic bench-run files sit beside it (``sweeps/``)."""
    return resource_dir("seed_data") / "northfold.json"
