"""Wheel build hook: the files the app reads at run time ship inside the package, under ``server/_shipped/``.

Only a built (standard) wheel gets them: an editable install reads the checkout's own folders
(``server/resources.py``), so it must not carry copies that would go stale in site-packages.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from hatchling.builders.hooks.plugin.interface import BuildHookInterface

SHIPPED = {
    "web/templates": "server/_shipped/web/templates",
    "web/static": "server/_shipped/web/static",
    "migrations": "server/_shipped/migrations",
    "seed_data/northfold.json": "server/_shipped/seed_data/northfold.json",
    "seed_data/sweeps": "server/_shipped/seed_data/sweeps",
}


class ShippedFiles(BuildHookInterface):
    PLUGIN_NAME = "custom"

    def initialize(self, version: str, build_data: dict[str, Any]) -> None:
        if version != "standard":
            return
        root = Path(self.root)
        for source, target in SHIPPED.items():
            path = root / source
            if path.is_file():
                build_data["force_include"][str(path)] = target
                continue
            for file in sorted(path.rglob("*")):
                if file.is_file() and "__pycache__" not in file.parts:
                    build_data["force_include"][str(file)] = f"{target}/{file.relative_to(path).as_posix()}"
