"""Response models of the library file (export and import of a team's whole library)."""

from __future__ import annotations

from typing import Any

from pydantic import Field

from server.schemas.evaluation import Result


class LibraryFile(Result):
    """A team's whole library: parts per kind, airframes, missions, bench runs with samples, calibrations.

    Ids are replaced by references local to the file (``ref``), so a file imports into any team.
    """

    format: str = Field(description="Always liftmatch-library")
    version: int
    exported_at: str | None = None
    team: str | None = None
    parts: dict[str, list[dict[str, Any]]] = Field(description="batteries, escs, motors, propellers")
    airframes: list[dict[str, Any]] = Field(default_factory=list)
    missions: list[dict[str, Any]] = Field(default_factory=list)
    bench_runs: list[dict[str, Any]] = Field(default_factory=list)
    calibrations: list[dict[str, Any]] = Field(default_factory=list)


class LibraryImported(Result):
    """How many of each were created from the file."""

    batteries: int | None = None
    escs: int | None = None
    motors: int | None = None
    propellers: int | None = None
    airframes: int | None = None
    missions: int | None = None
    bench_runs: int | None = None
    calibrations: int | None = None
