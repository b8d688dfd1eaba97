"""Battery pack: BAT-1..6 (cell voltages, energy rule, C-rating, Peukert, OCV tables)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad

from server.physics import battery as bat
from server.physics._types import Status
from server.physics.battery import PackParams


def test_pack_voltages_bat_1() -> None:
    # BAT-1 [MEM]/[CP] per-cell values + [CALC]; exact
    volts = bat.pack_voltage_v(4, np.array([4.20, 3.7, 3.5, 3.0]))
    np.testing.assert_allclose(volts, [16.8, 14.8, 14.0, 12.0], rtol=1e-15)
    assert PackParams(4, 5.0, 0.006).open_circuit_voltage_v(1.0) == pytest.approx(16.8, rel=1e-15)


def test_energy_rule_bat_2() -> None:
    # BAT-2 [CP] + [CALC]: 4S 5000 mAh at 300 W; tol 1e-6
    energy = bat.nominal_energy_wh(4, 5.0)
    assert energy == pytest.approx(74.00, rel=1e-6)
    assert energy * 0.8 == pytest.approx(59.20, rel=1e-6)
    assert bat.simple_endurance_s(energy, 300.0) / 60 == pytest.approx(11.840, rel=1e-6)


def test_c_rating_bat_3() -> None:
    # BAT-3 [CP]; exact
    assert bat.max_continuous_current_a(5.0, 25.0) == 125.0


def test_peukert_bat_4() -> None:
    # BAT-4 [PUB] Peukert 1897 + [CALC]; tol 1e-4
    assert bat.peukert_runtime_s(5.0, 20.0, 1.05) / 3600 == pytest.approx(0.23326, rel=1e-4)
    assert bat.peukert_runtime_s(5.0, 20.0, 1.05) / 60 == pytest.approx(13.9955, rel=1e-4)
    assert bat.peukert_runtime_s(5.0, 20.0, 1.0) / 60 == pytest.approx(15.000, rel=1e-12)
    # coulomb counting with the effective current reproduces Peukert's run time exactly
    i_eff = bat.peukert_effective_current_a(20.0, 5.0, 1.05)
    assert 3600 * 5.0 / i_eff == pytest.approx(bat.peukert_runtime_s(5.0, 20.0, 1.05), rel=1e-12)


def test_hobby_ocv_table_bat_5() -> None:
    # BAT-5 [MEM] table + [CALC] numpy.interp, scipy.integrate.quad; tol 1e-5
    np.testing.assert_allclose(bat.open_circuit_voltage_per_cell_v([0.50, 0.33, 0.20]), [3.8400, 3.7820, 3.7300],
                               rtol=1e-5)
    mean = bat.mean_open_circuit_voltage_per_cell_v(0.2, 1.0)
    assert mean == pytest.approx(3.91594, rel=1e-5)
    by_quad = quad(bat.open_circuit_voltage_per_cell_v, 0.2, 1.0, points=np.arange(0.25, 1.0, 0.05), limit=100)[0]
    assert mean == pytest.approx(by_quad / 0.8, rel=1e-9)


def test_scaled_table_for_lihv_is_marked_memory() -> None:
    # our own choice [MEM]: LiHV = hobby table scaled to 4.35 V full charge
    assert bat.open_circuit_voltage_per_cell_v(1.0, bat.LIHV_FULL_V_PER_CELL) == pytest.approx(4.35)
    assert bat.open_circuit_voltage_per_cell_v(0.5, 4.35) == pytest.approx(3.84 * 4.35 / 4.20)


def test_chen_rincon_mora_bat_6() -> None:
    # BAT-6 [PUB] Chen & Rincón-Mora 2006 + [CALC]; tol 1e-5
    np.testing.assert_allclose(bat.chen_rincon_mora_ocv_v([1.0, 0.5, 0.2, 0.0]), [4.10290, 3.80336, 3.72503, 2.65400],
                               rtol=1e-5)
    np.testing.assert_allclose(bat.chen_rincon_mora_series_resistance_ohm([1.0, 0.0]), [0.07446, 0.23066], rtol=1e-4)


def test_pack_resistance_and_constant_power_start_bat_7() -> None:
    # BAT-7 start [CALC]: 4S, r = 6 mΩ/cell -> 0.024 Ω; 300 W from full: I = 18.3375 A, V = 16.3599 V
    pack = PackParams(4, 5.0, 0.006)
    assert pack.resistance_ohm == pytest.approx(0.024, rel=1e-12)
    current, status = bat.current_for_power_a(pack.open_circuit_voltage_v(1.0), pack.resistance_ohm, 300.0)
    assert status == Status.OK
    assert current == pytest.approx(18.3375, rel=1e-5)
    assert bat.terminal_voltage_v(16.8, current, 0.024) == pytest.approx(16.3599, rel=1e-5)


def test_power_limit_and_stiff_supply() -> None:
    # V_oc^2 < 4 R P has no real root: the pack cannot deliver P (docs/model-reference.md#battery-pack "power limit")
    current, status = bat.current_for_power_a([16.8, 16.8, np.nan], [0.024, 1.0, 0.02], [300.0, 100.0, 1.0])
    assert status.tolist() == [Status.OK, Status.POWER_LIMIT, Status.NON_FINITE]
    assert np.isnan(current[1:]).all()
    stiff, _ = bat.current_for_power_a(12.0, 0.0, 120.0)
    assert stiff == pytest.approx(10.0, rel=1e-15)


def test_series_parallel_and_wiring() -> None:
    pack = PackParams(cells_series=[3, 6], capacity_ah=10.0, cell_resistance_ohm=0.004, cells_parallel=2,
                      wiring_resistance_ohm=0.002)
    np.testing.assert_allclose(pack.resistance_ohm, [3 * 0.004 / 2 + 0.002, 6 * 0.004 / 2 + 0.002])


def test_mass_estimate() -> None:
    # docs/model-reference.md#battery-pack-check-cases [CALC]: 74 Wh at 150 Wh/kg = 0.493 kg; at 200 Wh/kg = 0.370 kg
    np.testing.assert_allclose(bat.pack_mass_kg(74.0, [150.0, 200.0]), [0.493, 0.370], atol=5e-4)


def test_nan_soc_gives_nan() -> None:
    assert np.isnan(bat.open_circuit_voltage_per_cell_v(np.nan))


def test_ocv_table_is_the_printed_table_verbatim() -> None:
    # hobby LiPo table [MEM] of docs/model-reference.md#battery-pack-equations, here from high SOC to low SOC
    printed = [4.20, 4.15, 4.11, 4.08, 4.02, 3.98, 3.95, 3.91, 3.87, 3.85, 3.84, 3.82, 3.80, 3.79, 3.77, 3.75, 3.73,
               3.71, 3.69, 3.61, 3.27]
    np.testing.assert_array_equal(bat.LIPO_OCV_V_PER_CELL[::-1], printed)
    np.testing.assert_allclose(bat.open_circuit_voltage_per_cell_v(np.arange(20, -1, -1) / 20), printed, rtol=1e-15)
