"""Flight profiles: the segment march against hand calculations and the constant-thrust discharge."""

from __future__ import annotations

import numpy as np
import pytest

from server.physics import drive, endurance, profile
from server.physics.battery import PackParams, open_circuit_voltage_per_cell_v
from server.physics.endurance import StopReason
from server.physics.profile import LegState, ProfileStop
from tests.physics.test_endurance import PACK_3S, _hover_system

HOVER_THRUST_N = 4.90332  # BAT-8 (docs/model-reference.md): the OP-4 quad, 2 kg, per-rotor hover thrust


def _constant_current(current_a: float) -> profile.LegState:
    return LegState(np.asarray(current_a), np.asarray(12.0), np.asarray(True))


def test_coulomb_counting_by_hand() -> None:
    # Hand calculation (coulomb counting, Plett 2015 §2): 10 A for 300 s from a 5 Ah pack takes
    # 10 * 300 / (3600 * 5) = 0.1666... of the charge; then 20 A for 180 s takes 0.2.
    pack = PackParams(cells_series=3, capacity_ah=5.0, cell_resistance_ohm=0.0)
    currents = (10.0, 20.0)
    result = profile.fly([300.0, 180.0], lambda i, soc: _constant_current(currents[i]), pack=pack, shape=())
    assert result.completed
    assert result.soc_at_boundary[1] == pytest.approx(1.0 - 1.0 / 6.0, abs=1e-12)
    assert result.soc_at_boundary[2] == pytest.approx(1.0 - 1.0 / 6.0 - 0.2, abs=1e-12)
    # energy = V I t: 12 V x 10 A x 300 s = 10 Wh; 12 x 20 x 180 = 12 Wh
    assert result.energy_wh == pytest.approx([10.0, 12.0], rel=1e-12)
    assert result.total_energy_wh == pytest.approx(22.0, rel=1e-12)
    assert result.completed_share == 1.0


def _hover_state(pack: PackParams, thrust_n: float = HOVER_THRUST_N):
    system = _hover_system()

    def state_at(_i: int, soc: np.ndarray) -> LegState:
        voc = pack.cells_series * open_circuit_voltage_per_cell_v(soc)
        op = drive.for_thrust(thrust_n, open_circuit_voltage_v=voc, pack_resistance_ohm=pack.resistance_ohm,
                              **system)  # type: ignore[arg-type]
        return LegState(op.pack_current_a, op.bus_voltage_v, np.isfinite(op.pack_current_a))
    return state_at


def test_one_hover_segment_is_the_hover_endurance() -> None:
    # The constant-thrust discharge (BAT-8, 667.8 s, checked against solve_ivp in test_endurance) is the same
    # flight: a hover segment a little shorter completes, a little longer stops on usable capacity at its time.
    reference = endurance.constant_thrust(HOVER_THRUST_N, pack=PACK_3S, **_hover_system())  # type: ignore[arg-type]
    assert reference.stop_reason == StopReason.USABLE_CAPACITY
    t_end = float(reference.time_s)
    state_at = _hover_state(PACK_3S)
    short = profile.fly([0.99 * t_end], state_at, pack=PACK_3S, shape=())
    assert short.completed
    assert short.soc_at_boundary[1] == pytest.approx(0.2 + 0.01 * 0.8, abs=2e-3)
    long = profile.fly([1.02 * t_end], state_at, pack=PACK_3S, shape=())
    assert not long.completed and long.stop_reason == ProfileStop.USABLE_CAPACITY and long.stop_segment == 0
    assert long.time_s == pytest.approx(t_end, rel=profile.MAX_SUBSTEP_S / t_end)  # stops within one sub-step
    assert long.completed_share < 1.0


def test_sub_steps_converge() -> None:
    # Halving the segment into 1 s steps changes the energy by < 0.1 % (the MAX_SUBSTEP_S claim).
    state_at = _hover_state(PACK_3S)
    coarse = profile.fly([500.0], state_at, pack=PACK_3S, shape=())
    fine_steps = [1.0] * 500
    fine = profile.fly(fine_steps, lambda i, soc: state_at(0, soc), pack=PACK_3S, shape=())
    assert coarse.total_energy_wh == pytest.approx(fine.total_energy_wh, rel=1e-3)
    assert coarse.soc_at_boundary[-1] == pytest.approx(fine.soc_at_boundary[-1], abs=1e-4)


def test_profile_energy_is_the_sum_of_its_segments_and_splitting_changes_nothing() -> None:
    state_at = _hover_state(PACK_3S)
    whole = profile.fly([240.0], state_at, pack=PACK_3S, shape=())
    split = profile.fly([120.0, 120.0], lambda i, soc: state_at(0, soc), pack=PACK_3S, shape=())
    assert split.total_energy_wh == pytest.approx(float(np.sum(split.energy_wh)), rel=1e-15)
    assert split.total_energy_wh == pytest.approx(whole.total_energy_wh, rel=1e-3)
    assert split.soc_at_boundary[2] == pytest.approx(whole.soc_at_boundary[1], abs=1e-5)


def test_cutoff_and_unreachable_stop_the_flight() -> None:
    # A high cut-off stops the hover by voltage; an impossible thrust stops it at the first point.
    pack = PackParams(cells_series=3, capacity_ah=5.0, cell_resistance_ohm=0.010, cutoff_voltage_per_cell_v=3.7)
    cut = profile.fly([200.0, 400.0], _hover_state(pack), pack=pack, shape=())
    assert not cut.completed and cut.stop_reason == ProfileStop.CUTOFF_VOLTAGE
    heavy = profile.fly([60.0], _hover_state(PACK_3S, thrust_n=500.0), pack=PACK_3S, shape=())
    assert heavy.stop_reason == ProfileStop.THRUST_UNREACHABLE and heavy.time_s == 0.0
    assert np.isnan(heavy.soc_at_boundary[1])


def test_batch_equals_one_by_one() -> None:
    packs = [PackParams(cells_series=3, capacity_ah=c, cell_resistance_ohm=0.010) for c in (2.0, 5.0, 8.0)]
    batch_pack = PackParams(cells_series=3, capacity_ah=np.array([2.0, 5.0, 8.0]), cell_resistance_ohm=0.010)
    together = profile.fly([300.0, 300.0], _hover_state(batch_pack), pack=batch_pack, shape=(3,))
    for j, pack in enumerate(packs):
        alone = profile.fly([300.0, 300.0], _hover_state(pack), pack=pack, shape=())
        assert bool(together.completed[j]) == bool(alone.completed)
        np.testing.assert_allclose(together.soc_at_boundary[j], alone.soc_at_boundary, rtol=1e-12)
    assert list(together.completed) == [False, True, True]


def test_bad_durations_are_refused() -> None:
    with pytest.raises(ValueError, match="positive"):
        profile.fly([0.0], _hover_state(PACK_3S), pack=PACK_3S, shape=())
