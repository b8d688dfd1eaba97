"""Hypothesis properties of the operating-point engine over random but plausible power systems.

Parameter ranges follow the typical-value tables of docs/model-reference.md#motor and #esc ([MEM]-typical values).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from server.physics import drive
from server.physics import propeller as prop
from server.physics._types import Status
from server.physics.esc import EscParams
from server.physics.motor import MotorParams
from server.physics.propeller import PropellerTable
from tests.physics import scalar_reference as ref
from tests.physics.conftest import REFERENCE_DIR, read_csv, read_csv_text

SETTINGS = settings(max_examples=40, deadline=None)
PROPS = {row["prop_id"]: row for row in read_csv_text(REFERENCE_DIR / "propellers.csv")}
STATIC_IDS = sorted(p for p, row in PROPS.items() if row["static_file"])


@st.composite
def systems(draw: st.DrawFn) -> dict[str, object]:
    """A motor/ESC/UIUC-static-prop/pack combination that can hover its prop at a moderate load."""
    prop_id = draw(st.sampled_from(STATIC_IDS))
    data = read_csv(REFERENCE_DIR / PROPS[prop_id]["static_file"])
    table = PropellerTable(float(PROPS[prop_id]["diameter_m"]), data["rpm"], data["ct"], data["cp"])
    cells = draw(st.integers(2, 6))
    return {
        "motor": MotorParams(kv_rpm_per_v=draw(st.floats(300.0, 2500.0)), resistance_ohm=draw(st.floats(0.02, 0.25)),
                             no_load_current_a=draw(st.floats(0.2, 1.5)), inductance_h=draw(st.floats(5e-6, 300e-6))),
        "esc": EscParams(on_path_resistance_ohm=draw(st.floats(0.002, 0.02)),
                         switching_frequency_hz=draw(st.floats(8e3, 48e3)),
                         transition_time_s=draw(st.floats(50e-9, 300e-9)), dead_time_s=draw(st.floats(0.1e-6, 1e-6)),
                         body_diode_drop_v=draw(st.floats(0.7, 1.0)), input_esr_ohm=draw(st.floats(0.005, 0.05)),
                         pwm_loss_coefficient=draw(st.floats(0.0, 0.2))),
        "propeller": table,
        "open_circuit_voltage_v": cells * draw(st.floats(3.6, 4.2)),
        "pack_resistance_ohm": cells * draw(st.floats(0.0, 0.015)),
        "rotor_count": draw(st.sampled_from([1, 4, 6, 8])),
    }


@SETTINGS
@given(system=systems(), duty=st.floats(0.2, 1.0))
def test_energy_balance_closes(system: dict[str, object], duty: float) -> None:
    # docs/model-reference.md#reference-model-v1 item 5:
    # V_oc I = R I^2 + N (P_shaft + I^2 R + I0 E + I^2 R_on + P_extra) to 0.1 %
    op = drive.at_duty(duty, **system)  # type: ignore[arg-type]
    if op.status != Status.OK:
        return
    losses = (op.motor_copper_loss_w + op.motor_no_load_loss_w + op.esc_conduction_loss_w + op.extra_loss_w)
    used = op.pack_loss_w + op.rotor_count * (op.shaft_power_w + losses)
    assert used == pytest.approx(op.open_circuit_voltage_v * op.pack_current_a, rel=1e-3)
    # and the bus really is the pack terminal voltage
    assert op.bus_voltage_v == pytest.approx(op.open_circuit_voltage_v - system["pack_resistance_ohm"]  # type: ignore[operator]
                                             * op.pack_current_a, rel=1e-9)


@SETTINGS
@given(system=systems(), fraction=st.floats(0.05, 0.95))
def test_no_hover_point_beats_the_momentum_ideal(system: dict[str, object], fraction: float) -> None:
    # docs/model-reference.md#reference-model-v1 item 8 / Leishman 2006: P_shaft >= T^1.5 / sqrt(2 rho A)
    full = drive.full_throttle(**system)  # type: ignore[arg-type]
    if full.status != Status.OK:
        return
    hover = drive.for_thrust(fraction * full.thrust_n, **system)  # type: ignore[arg-type]
    assert hover.status == Status.OK
    table = system["propeller"]
    assert isinstance(table, PropellerTable)
    ideal = prop.ideal_hover_power_w(hover.thrust_n, 1.225, table.diameter_m)
    assert hover.shaft_power_w > ideal


@SETTINGS
@given(system=systems(), duties=st.lists(st.floats(0.15, 1.0), min_size=2, max_size=6, unique=True))
def test_thrust_rises_with_duty(system: dict[str, object], duties: list[float]) -> None:
    # Holds while the pack sags less than half its voltage: with the pack folded in, the motor sees d V_oc behind
    # R' + N d^2 R_b, and beyond V_bus = V_oc / 2 (maximum power transfer) more duty gives *less* thrust.
    # Hypothesis found such an overloaded case (8 x 1695 Kv on 10 in props, 0.059 Ω pack); see the next test.
    d = np.sort(np.array(duties))
    op = drive.at_duty(d, **system)  # type: ignore[arg-type]
    ok = (op.status == Status.OK) & (op.bus_voltage_v > 0.55 * op.open_circuit_voltage_v)
    assert np.all(np.diff(op.thrust_n[ok]) > 0.0)
    assert np.all(np.diff(op.rpm[ok]) > 0.0)


@SETTINGS
@given(system=systems(), ratio=st.floats(1.15, 2.5))
def test_higher_voltage_at_partial_duty_costs_more_bus_power(system: dict[str, object], ratio: float) -> None:
    # ESC-1/ESC-2 (Mohan 2003 / Erickson 2001): same rpm and thrust, stiff buses at V and ratio x V:
    # P_bus(high V, d < 1) - P_bus(low V, d = 1) = P_extra > 0, and the drive efficiency is higher at d = 1
    stiff = {**system, "pack_resistance_ohm": 0.0}
    low = drive.full_throttle(**stiff)  # type: ignore[arg-type]
    stiff["open_circuit_voltage_v"] = ratio * float(system["open_circuit_voltage_v"])  # type: ignore[arg-type]
    high = drive.at_rpm(low.rpm, **stiff)  # type: ignore[arg-type]
    if low.status != Status.OK:
        return
    assert high.status == Status.OK and high.duty < 1.0
    assert high.thrust_n == pytest.approx(low.thrust_n, rel=1e-9)
    assert high.electrical_power_w > low.electrical_power_w
    assert high.electrical_power_w - low.electrical_power_w == pytest.approx(high.extra_loss_w, rel=1e-6)
    assert low.drive_efficiency > high.drive_efficiency


def _scalar_of(system: dict[str, object]) -> ref.ScalarSystem:
    motor, esc, table = system["motor"], system["esc"], system["propeller"]
    assert isinstance(motor, MotorParams) and isinstance(esc, EscParams) and isinstance(table, PropellerTable)
    return ref.ScalarSystem(
        float(motor.kv_rpm_per_v), float(motor.resistance_ohm), float(motor.no_load_current_a),
        tuple(table.axis_values), tuple(table.thrust_coefficient), tuple(table.power_coefficient),
        float(table.diameter_m), float(system["open_circuit_voltage_v"]),  # type: ignore[arg-type]
        float(system["pack_resistance_ohm"]), float(system["rotor_count"]),  # type: ignore[arg-type]
        inductance_h=float(motor.inductance_h), on_path_resistance_ohm=float(esc.on_path_resistance_ohm),
        switching_frequency_hz=float(esc.switching_frequency_hz), transition_time_s=float(esc.transition_time_s),
        dead_time_s=float(esc.dead_time_s), body_diode_drop_v=float(esc.body_diode_drop_v),
        input_esr_ohm=float(esc.input_esr_ohm), pwm_loss_coefficient=float(esc.pwm_loss_coefficient))


@SETTINGS
@given(system=systems(), duty=st.floats(0.25, 1.0), fraction=st.floats(0.1, 0.9))
def test_vectorised_equals_scalar_brentq(system: dict[str, object], duty: float, fraction: float) -> None:
    # pvlib-style solver cross-check: find_root (Chandrupatla) == scipy.optimize.brentq to 1e-6 rel
    scalar = _scalar_of(system)
    op = drive.at_duty(duty, **system)  # type: ignore[arg-type]
    if op.status == Status.OK:
        expected = ref.at_duty(scalar, duty)
        assert op.omega_rad_s == pytest.approx(expected["omega"], rel=1e-6)
        assert op.bus_voltage_v == pytest.approx(expected["bus_voltage"], rel=1e-6)
        assert op.bus_current_a == pytest.approx(expected["bus_current"], rel=1e-6)
        thrust = fraction * float(op.thrust_n)
        by_thrust = drive.for_thrust(thrust, **system)  # type: ignore[arg-type]
        expected_t = ref.for_thrust(scalar, thrust)
        assert expected_t is not None and by_thrust.status == Status.OK
        assert by_thrust.duty == pytest.approx(expected_t["duty"], rel=1e-6)
        assert by_thrust.bus_current_a == pytest.approx(expected_t["bus_current"], rel=1e-6)


def test_thrust_falls_with_duty_beyond_maximum_power_transfer() -> None:
    # The hypothesis counterexample above, kept as a regression: V_bus < V_oc / 2 at d = 1, so d = 0.5 gives more
    # thrust than d = 1 (physics of a source with internal resistance; docs/model-reference.md#operating-point:
    # R' + N d^2 R_b).
    data = read_csv(REFERENCE_DIR / PROPS["sf_10x4.7_b2"]["static_file"])
    system = {"motor": MotorParams(1695.0, 0.0625, 1.0, inductance_h=279.5e-6),
              "esc": EscParams(on_path_resistance_ohm=0.015625, switching_frequency_hz=8000.0),
              "propeller": PropellerTable(0.254, data["rpm"], data["ct"], data["cp"]),
              "open_circuit_voltage_v": 20.0, "pack_resistance_ohm": 0.05859375, "rotor_count": 8}
    op = drive.at_duty([0.5, 1.0], **system)  # type: ignore[arg-type]
    assert np.all(op.status == Status.OK)
    assert op.bus_voltage_v[1] < 0.5 * 20.0
    assert op.thrust_n[1] < op.thrust_n[0]


FORWARD_FILES = sorted((REFERENCE_DIR / "forward").glob("*.csv"))


@SETTINGS
@given(file_index=st.integers(0, len(FORWARD_FILES) - 1), airspeed=st.floats(0.5, 60.0),
       duty=st.floats(0.15, 1.0), kv=st.floats(400.0, 2500.0), cells=st.integers(2, 6))
def test_forward_flight_never_reports_an_efficiency_above_the_momentum_limit_as_ok(
        file_index: int, airspeed: float, duty: float, kv: float, cells: int) -> None:
    """Beyond a forward table's last advance ratio the coefficients are held, so eta_p = J CT / CP keeps growing;
    no such point may come back as ``ok`` with an efficiency above the Froude limit (Leishman 2006, ch. 2) or 1.

    Tables: UIUC forward runs (Brandt & Selig 2011; Deters, Ananda & Selig 2014) from tests/data/reference."""
    path = FORWARD_FILES[file_index]
    data = read_csv(path)
    prop_id = path.name.rsplit("_", 1)[0]
    table = PropellerTable(float(PROPS[prop_id]["diameter_m"]), data["j"], data["ct"], data["cp"],
                           axis="advance_ratio")
    op = drive.at_duty(duty, motor=MotorParams(kv, 0.08, 0.5), esc=EscParams(), propeller=table,
                       open_circuit_voltage_v=3.8 * cells, pack_resistance_ohm=0.01 * cells, airspeed_m_s=airspeed)
    status = int(op.status)
    if status in (Status.OK, Status.OVER_CURRENT) and float(op.thrust_n) > 0:
        eta = float(op.thrust_n) * airspeed / float(op.shaft_power_w)
        froude = float(prop.froude_efficiency(op.thrust_n, airspeed, 1.225, table.diameter_m))
        assert eta <= froude * (1 + 1e-9) and eta < 1.0
        assert float(op.momentum_limit_ratio) <= 1.0
    if float(op.momentum_limit_ratio) > 1.0:
        assert status == Status.DATA_ERROR
