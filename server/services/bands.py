"""Prediction bands of one power system: its uncertain parameters drawn, the same physics evaluated per draw.

Every model parameter carries a standard uncertainty and a source (:mod:`.power_system`): stated on a part or
in a request (datasheet spread), calibrated (the fit's standard errors and covariance), or a prior. :func:`draws`
samples them all (:mod:`server.physics.uncertainty`); the services evaluate the samples as one more batch axis and
report the 10th-90th percentiles. Drawing again with only the priors varied shows how much of a band rests on
assumptions.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from server.physics import priors, uncertainty
from server.physics._types import FloatArray, as_float_array
from server.physics.esc import EscParams
from server.physics.motor import MotorParams
from server.physics.propeller import PropellerTable
from server.services.power_system import (
    ESC_LOSS_FIELDS,
    INCH_M,
    MOTOR_FIELDS,
    PowerSystem,
    Resolved,
    table_rows,
)

VARIED_SOURCES = ("part", "request", "calibrated", "prior")
"""Sources whose values are uncertain: every one but ``default`` (settings such as the chemistry)."""


@dataclass(frozen=True)
class Draws:
    """Sampled physics parameters of one power system: every array has a leading sample axis (shape (S, 1))."""

    motor: MotorParams
    esc: EscParams
    static: PropellerTable
    forward: PropellerTable | None
    cell_resistance_ohm: FloatArray
    capacity_ah: FloatArray
    discrepancy: FloatArray
    """Multiplicative model-discrepancy factor on electrical power (and currents). [-]"""

    @property
    def samples(self) -> int:
        return int(self.discrepancy.shape[0])


CONVENTIONS = frozenset({*priors.ESC_PRIORS, *priors.MOTOR_PRIORS})
"""Priors held at their centres in bands: the ESC's physical loss terms and the motor inductance are the reference
the calibrated terms are fitted against (k_pwm takes up what they miss, a motor's R' includes the ESC path), so
the partial-throttle uncertainty is carried by k_pwm and its prior instead of being counted twice."""


def _part_draws(resolved: Resolved, names: list[str], samples: int, rng: np.random.Generator,
                vary: tuple[str, ...], positive: frozenset[str]) -> dict[str, FloatArray]:
    values = {n: float(resolved.values[n]) for n in names if isinstance(resolved.values.get(n), int | float)}
    sd = {n: resolved.sd.get(n, 0.0) for n in values if resolved.sources.get(n) in vary
          and not (resolved.sources.get(n) == "prior" and n in CONVENTIONS)}
    cov = None
    if resolved.covariance and "calibrated" in vary:
        cov = (tuple(resolved.covariance["names"]), np.asarray(resolved.covariance["matrix"], dtype=np.float64))
    return uncertainty.draw(uncertainty.Uncertain(values, sd, cov, positive), samples, rng)


def _table_draws(resolved: Resolved, key: str, rows: tuple[list[float], list[float], list[float]], samples: int,
                 rng: np.random.Generator, vary: tuple[str, ...]) -> tuple[FloatArray, FloatArray]:
    """CT and CP knots of a table per sample, shape (S, K): a calibrated table's knots drawn jointly from its fit's
    covariance; a stated one scaled by one factor for all CT and one for all CP (datasheet uncertainty)."""
    _, ct, cp = rows
    source = resolved.sources.get(key) or resolved.sources.get("ct")
    k = len(ct)
    names = [f"ct[{j}]" for j in range(k)] + [f"cp[{j}]" for j in range(k)]
    cov = resolved.covariance if key == "static_table" and source == "calibrated" else None
    if cov is not None and "calibrated" in vary and set(names) <= set(cov["names"]):
        values = dict(zip(names, [*ct, *cp], strict=True))
        drawn = uncertainty.draw(uncertainty.Uncertain(
            values, {}, (tuple(cov["names"]), np.asarray(cov["matrix"], dtype=np.float64)), frozenset(names)),
            samples, rng)
        return (np.stack([drawn[f"ct[{j}]"] for j in range(k)], axis=-1),
                np.stack([drawn[f"cp[{j}]"] for j in range(k)], axis=-1))
    varied = source in vary and source != "calibrated"
    rel = {"ct_scale": priors.STATED_RELATIVE_SD["ct"] if varied else 0.0,
           "cp_scale": priors.STATED_RELATIVE_SD["cp"] if varied else 0.0}
    scale = uncertainty.draw(uncertainty.Uncertain({"ct_scale": 1.0, "cp_scale": 1.0}, rel,
                                                   positive=frozenset(rel)), samples, rng)
    return (scale["ct_scale"][:, None] * np.asarray(ct)[None, :], scale["cp_scale"][:, None] * np.asarray(cp)[None, :])


@dataclass(frozen=True)
class DrawnValues:
    """Sampled values of one power system's uncertain parameters, in the parts' own fields and units.

    ``parts`` maps a part kind (``batteries``, ``escs``, ``motors``) to field -> array of shape (S,); ``tables``
    maps ``static_table``/``forward_table`` to (axis values, CT (S, K), CP (S, K)) in the table's row order, or
    None for a table the propeller does not have.
    """

    parts: dict[str, dict[str, FloatArray]]
    tables: dict[str, tuple[list[float], FloatArray, FloatArray] | None]
    discrepancy: FloatArray
    """Multiplicative model-discrepancy factor on electrical power (and currents), shape (S,). [-]"""

    @property
    def samples(self) -> int:
        return int(self.discrepancy.shape[0])


def drawn_values(system: PowerSystem, samples: int = uncertainty.DEFAULT_SAMPLES, *,
                 vary: tuple[str, ...] = VARIED_SOURCES, seed: int = uncertainty.SEED) -> DrawnValues:
    """``samples`` draws of every uncertain parameter of ``system`` (only those whose source is in ``vary``).

    Draws with the same seed and fewer varied sources share their random numbers, so comparing ``vary`` settings
    shows what each kind of value contributes.
    """
    rng = uncertainty.generator(seed)
    # the heat model's values are not drawn (taken as they are; docs/model-reference.md#heat)
    m = _part_draws(system.motor, [f for f in MOTOR_FIELDS if f not in priors.THERMAL_PRIORS], samples, rng, vary,
                    frozenset({"kv_rpm_per_v", "winding_resistance_ohm", "no_load_current_a", "inductance_uh"}))
    e = _part_draws(system.esc, ESC_LOSS_FIELDS, samples, rng, vary, frozenset(priors.ESC_PRIORS))
    b = _part_draws(system.battery, ["cell_resistance_mohm", "capacity_mah"], samples, rng, vary,
                    frozenset({"cell_resistance_mohm", "capacity_mah"}))
    tables: dict[str, tuple[list[float], FloatArray, FloatArray] | None] = {}
    for key in ("static_table", "forward_table"):
        rows = table_rows(system.propeller.values, key)
        if rows is None:
            tables[key] = None
            continue
        ct, cp = _table_draws(system.propeller, key, rows, samples, rng, vary)
        tables[key] = (list(rows[0]), ct, cp)
    # The electrical-power residuals of the calibrations (a propeller's is a thrust residual: not this quantity).
    residuals = [r.residual_rms for r in (system.esc, system.motor) if r.residual_rms]
    discrepancy_sd = max(residuals) if residuals else priors.MODEL_DISCREPANCY_RELATIVE
    if not any(s in vary for s in ("part", "request", "calibrated")):
        discrepancy_sd = 0.0  # only priors vary: the share of the band that rests on assumptions
    return DrawnValues(parts={"motors": m, "escs": e, "batteries": b}, tables=tables,
                       discrepancy=uncertainty.discrepancy(samples, discrepancy_sd, rng))


def draws(system: PowerSystem, samples: int = uncertainty.DEFAULT_SAMPLES, *,
          vary: tuple[str, ...] = VARIED_SOURCES, seed: int = uncertainty.SEED) -> Draws:
    """The draws of :func:`drawn_values` as the physics engine's parameter objects (leading sample axis)."""
    drawn = drawn_values(system, samples, vary=vary, seed=seed)
    col = (samples, 1)
    m, e, b = drawn.parts["motors"], drawn.parts["escs"], drawn.parts["batteries"]
    system.motor.require(["kv_rpm_per_v", "winding_resistance_ohm", "no_load_current_a"], "motor")
    motor = MotorParams(kv_rpm_per_v=m["kv_rpm_per_v"].reshape(col),
                        resistance_ohm=m["winding_resistance_ohm"].reshape(col),
                        no_load_current_a=m["no_load_current_a"].reshape(col),
                        inductance_h=m["inductance_uh"].reshape(col) * 1e-6,
                        max_current_a=as_float_array(system.motor.values.get("max_current_a") or np.inf))
    esc = EscParams(on_path_resistance_ohm=e["r_on_path_ohm"].reshape(col),
                    switching_frequency_hz=e["pwm_frequency_khz"].reshape(col) * 1e3,
                    transition_time_s=e["switching_time_ns"].reshape(col) * 1e-9,
                    dead_time_s=e["dead_time_ns"].reshape(col) * 1e-9, body_diode_drop_v=e["diode_drop_v"].reshape(col),
                    input_esr_ohm=e["input_esr_ohm"].reshape(col), pwm_loss_coefficient=e["k_pwm"].reshape(col),
                    max_current_a=as_float_array(system.esc.values.get("continuous_current_a") or np.inf))
    system.propeller.require(["diameter_in"], "propeller")
    diameter = float(system.propeller.values["diameter_in"]) * INCH_M
    tables: list[PropellerTable | None] = []
    for key, axis in (("static_table", "rpm"), ("forward_table", "advance_ratio")):
        drawn_table = drawn.tables[key]
        if drawn_table is None:
            tables.append(None)
            continue
        knots, ct, cp = drawn_table
        order = np.argsort(knots, kind="stable")
        axis_values = np.asarray(knots, dtype=np.float64)[order][None, None, :]
        tables.append(PropellerTable(as_float_array(diameter), axis_values, ct[:, order][:, None, :],
                                     cp[:, order][:, None, :], axis))  # type: ignore[arg-type]
    static = tables[0]
    if static is None:
        static, _ = system.tables()  # raises the missing-data error
    return Draws(motor=motor, esc=esc, static=static, forward=tables[1],
                 cell_resistance_ohm=(b.get("cell_resistance_mohm", np.full(samples, np.nan)) / 1000).reshape(col),
                 capacity_ah=(b.get("capacity_mah", np.full(samples, np.nan)) / 1000).reshape(col),
                 discrepancy=drawn.discrepancy.reshape(col))
