"""Shared fixtures: the check-case motor and propeller (docs/model-reference.md) and the reference data folder."""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import pytest

from server.physics.esc import EscParams
from server.physics.motor import MotorParams
from server.physics.propeller import PropellerTable

REFERENCE_DIR = Path(__file__).resolve().parents[1] / "data" / "reference" / "propellers"


@pytest.fixture
def motor_920kv() -> MotorParams:
    """MOT check-case motor: Kv 920, R 0.10 Ω, I0 0.5 A (illustrative, [MEM]-typical), L = 30 µH.

    See docs/model-reference.md#motor-check-cases.
    """
    return MotorParams(kv_rpm_per_v=920.0, resistance_ohm=0.10, no_load_current_a=0.5)


@pytest.fixture
def motor_920kv_no_ripple() -> MotorParams:
    """Same motor with L -> infinity: no PWM ripple (how the OP check cases leave out the ESC ripple)."""
    return MotorParams(kv_rpm_per_v=920.0, resistance_ohm=0.10, no_load_current_a=0.5, inductance_h=np.inf)


@pytest.fixture
def prop_10x7_5015() -> PropellerTable:
    """CT = 0.1564, CP = 0.0763, D = 0.254 m: UIUC sf_10x7_static_kt0827 at 5015 rpm (Brandt & Selig 2011)."""
    return PropellerTable.constant(0.254, 0.1564, 0.0763)


@pytest.fixture
def ideal_esc() -> EscParams:
    """R_esc = 0 and no partial-throttle terms (docs/model-reference.md#operating-point-check-cases)."""
    return EscParams.lossless_switching(0.0)


def read_csv(path: Path) -> dict[str, np.ndarray]:
    """Columns of a numeric CSV as float arrays (test-side I/O only; the engine does none)."""
    with path.open(newline="") as fh:
        rows = list(csv.DictReader(fh))
    return {key: np.array([float(r[key]) for r in rows]) for key in rows[0]}


def read_csv_text(path: Path) -> list[dict[str, str]]:
    """Rows of a CSV as strings (to know how many digits each value was rounded to)."""
    with path.open(newline="") as fh:
        return list(csv.DictReader(fh))
