"""Endurance: BAT-7 (constant power) and BAT-8 (constant-thrust hover), stop reasons, Peukert,
checked against scipy.integrate.quad and a scalar solve_ivp reference in time."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad, solve_ivp

from server.physics import battery as bat
from server.physics import endurance
from server.physics.battery import PackParams
from server.physics.endurance import StopReason
from server.physics.esc import EscParams
from server.physics.motor import MotorParams
from server.physics.propeller import PropellerTable
from tests.physics import scalar_reference as ref

PACK_4S = PackParams(cells_series=4, capacity_ah=5.0, cell_resistance_ohm=0.006)  # BAT-7
PACK_3S = PackParams(cells_series=3, capacity_ah=5.0, cell_resistance_ohm=0.010)  # BAT-8


def _power_rate(soc: float, power: float, pack: PackParams) -> float:
    v_oc = 4 * float(bat.open_circuit_voltage_per_cell_v(soc))
    r = 0.024
    return 3600 * 5.0 / ((v_oc - np.sqrt(v_oc**2 - 4 * r * power)) / (2 * r))


def test_constant_power_bat_7() -> None:
    # BAT-7 [CALC] solve_ivp(rtol=1e-10): t = 729.08 s (0.5 %); quad 729.077 s (1e-4)
    result = endurance.constant_power(300.0, pack=PACK_4S)
    assert result.stop_reason == StopReason.USABLE_CAPACITY
    assert result.time_s == pytest.approx(729.08, rel=5e-3)
    by_quad = quad(_power_rate, 0.2, 1.0, args=(300.0, PACK_4S), points=np.arange(0.25, 1.0, 0.05), limit=200)[0]
    assert by_quad == pytest.approx(729.077, rel=1e-5)
    assert result.time_s == pytest.approx(by_quad, rel=1e-4)
    assert result.start_current_a == pytest.approx(18.3375, rel=1e-5)
    assert result.start_voltage_v == pytest.approx(16.3599, rel=1e-5)
    assert result.end_voltage_v / 4 > 3.3  # no under-load cut-off reached


def test_constant_power_cutoff_and_power_limit() -> None:
    # A heavier load reaches the 3.3 V/cell cut-off before 20 % SOC; an absurd load exceeds V_oc^2/(4R)
    heavy = endurance.constant_power([1400.0, 4000.0], pack=PACK_4S)
    assert heavy.stop_reason.tolist() == [StopReason.CUTOFF_VOLTAGE, StopReason.POWER_LIMIT]
    assert heavy.final_state_of_charge[0] > 0.2
    assert heavy.end_voltage_v[0] / 4 == pytest.approx(3.3, abs=0.03)  # stopped at the cut-off (last node)
    assert heavy.time_s[1] == 0.0
    # the cut-off SOC is where V_oc(s) - R I(s) = 13.2 V, solved independently
    v_oc = lambda s: 4 * float(bat.open_circuit_voltage_per_cell_v(s))  # noqa: E731
    from scipy.optimize import brentq

    def margin(s: float) -> float:
        i = 2 * 1400.0 / (v_oc(s) + np.sqrt(v_oc(s) ** 2 - 4 * 0.024 * 1400.0))
        return v_oc(s) - 0.024 * i - 13.2

    assert heavy.final_state_of_charge[0] == pytest.approx(brentq(margin, 0.2, 1.0), abs=2e-3)


def _hover_system() -> dict[str, object]:
    # BAT-8: the OP-4 quad, R_esc = 0, P_extra ignored (L -> inf, no switching terms)
    return {"motor": MotorParams(920.0, 0.10, 0.5, inductance_h=np.inf), "esc": EscParams.lossless_switching(0.0),
            "propeller": PropellerTable.constant(0.254, 0.1564, 0.0763), "rotor_count": 4}


def test_constant_thrust_hover_bat_8() -> None:
    # BAT-8 [CALC] solve_ivp + OP closed form: 0.5 % on t, 1e-4 on start/end states
    result = endurance.constant_thrust(4.90332, pack=PACK_3S, **_hover_system())  # type: ignore[arg-type]
    assert result.stop_reason == StopReason.USABLE_CAPACITY
    assert result.time_s == pytest.approx(667.82, rel=5e-3)
    assert result.start is not None and result.end is not None
    assert result.start.duty == pytest.approx(0.50789, rel=1e-4)
    assert result.start.pack_current_a == pytest.approx(19.9427, rel=1e-4)
    assert result.start.bus_voltage_v == pytest.approx(12.0017, rel=1e-4)
    assert result.end.duty == pytest.approx(0.58017, rel=1e-4)
    assert result.end.pack_current_a == pytest.approx(22.7806, rel=1e-4)
    assert result.end.bus_voltage_v == pytest.approx(10.5066, rel=1e-4)


def _ivp_reference(thrust: float, pack_soc_end: float, cutoff_v: float, system: ref.ScalarSystem,
                   peukert: float = 1.0) -> float:
    """Time integration in t with solve_ivp and terminal events, scalar brentq operating point each call."""
    def state(soc: float) -> dict[str, float] | None:
        s = ref.ScalarSystem(**{**system.__dict__, "open_circuit_voltage_v":
                                3 * float(bat.open_circuit_voltage_per_cell_v(soc))})
        return ref.for_thrust(s, thrust)

    def rhs(_t: float, y: np.ndarray) -> list[float]:
        point = state(y[0])
        current = 4 * point["bus_current"] if point else 1e3
        return [-current * (current / 5.0) ** (peukert - 1) / (3600 * 5.0)]

    def soc_event(_t: float, y: np.ndarray) -> float:
        return y[0] - pack_soc_end

    def cutoff_event(_t: float, y: np.ndarray) -> float:
        point = state(y[0])
        return point["bus_voltage"] / 3 - cutoff_v if point else -1.0

    soc_event.terminal = cutoff_event.terminal = True  # type: ignore[attr-defined]
    sol = solve_ivp(rhs, (0.0, 1e5), [1.0], events=[soc_event, cutoff_event], rtol=1e-8, atol=1e-10, max_step=20.0)
    return float(sol.t[-1])


@pytest.mark.slow
def test_cutoff_and_peukert_against_solve_ivp() -> None:
    # scipy solve_ivp in time with terminal events (docs/model-reference.md#endurance-sources) vs our SOC march;
    # 0.5 % like BAT-8
    system = _hover_system()
    scalar = ref.ScalarSystem(920.0, 0.10, 0.5, (0.0,), (0.1564,), (0.0763,), 0.254, 12.6, 0.030, 4.0,
                              inductance_h=np.inf, on_path_resistance_ohm=0.0, transition_time_s=0.0, dead_time_s=0.0,
                              body_diode_drop_v=0.0, input_esr_ohm=0.0)
    pack = PackParams(3, 5.0, 0.010, peukert_exponent=1.05, cutoff_voltage_per_cell_v=3.45)
    ours = endurance.constant_thrust(7.0, pack=pack, **system)  # type: ignore[arg-type]
    assert ours.stop_reason == StopReason.CUTOFF_VOLTAGE
    reference = _ivp_reference(7.0, 0.2, 3.45, scalar, peukert=1.05)
    assert ours.time_s == pytest.approx(reference, rel=5e-3)
    # Peukert really acts: without it the flight is measurably longer
    plain = endurance.constant_thrust(7.0, pack=PackParams(3, 5.0, 0.010, cutoff_voltage_per_cell_v=3.45),
                                      **system)  # type: ignore[arg-type]
    assert plain.time_s > ours.time_s * 1.05


def test_thrust_becomes_unreachable_as_the_pack_sags() -> None:
    # full-throttle thrust of the BAT-8 quad is about 10.5 N on a full 3S pack; 9.5 N is lost as it sags
    pack = PackParams(3, 5.0, 0.010, cutoff_voltage_per_cell_v=0.0)
    result = endurance.constant_thrust([4.90332, 9.5, 12.0], pack=pack, **_hover_system())  # type: ignore[arg-type]
    assert result.stop_reason.tolist() == [StopReason.USABLE_CAPACITY, StopReason.THRUST_UNREACHABLE,
                                           StopReason.THRUST_UNREACHABLE]
    assert 0.0 < result.time_s[1] < result.time_s[0]
    assert result.time_s[2] == 0.0  # never reachable
    assert result.end is not None and result.end.duty[1] == pytest.approx(1.0, abs=0.01)
    assert 0.2 < result.final_state_of_charge[1] < 1.0


def test_vectorised_over_candidates_equals_one_by_one() -> None:
    thrusts = np.array([3.0, 4.9, 6.0])
    batch = endurance.constant_thrust(thrusts, pack=PACK_3S, motor=MotorParams(920.0, 0.10, 0.5),
                                      esc=EscParams(), propeller=PropellerTable.constant(0.254, 0.1564, 0.0763),
                                      rotor_count=4)
    for k, thrust in enumerate(thrusts):
        one = endurance.constant_thrust(thrust, pack=PACK_3S, motor=MotorParams(920.0, 0.10, 0.5), esc=EscParams(),
                                        propeller=PropellerTable.constant(0.254, 0.1564, 0.0763), rotor_count=4)
        assert batch.time_s[k] == pytest.approx(float(one.time_s), rel=1e-12)
    assert np.all(np.diff(batch.time_s) < 0)  # more thrust, shorter flight


def test_invalid_input_is_reported() -> None:
    result = endurance.constant_power([300.0, np.nan], pack=PACK_4S)
    assert result.stop_reason.tolist() == [StopReason.USABLE_CAPACITY, StopReason.INVALID_INPUT]
    assert result.time_s[1] == 0.0
