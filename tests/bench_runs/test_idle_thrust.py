"""Negative thrust on import: a load cell's zero offset at idle is kept and flagged, a clearly negative reading is
rejected with its line and column, and a run negative throughout is named a reversed load cell (thrust_sign -1
flips it).

Reference data: the published 5-inch sweeps in tests/data/reference/bench-5in (StrawsonDesign/
motor_propeller_testing, P. Cao and J. Strawson, 2018, MIT licence; see PROVENANCE.md), written out unchanged in
our CSV format (the bench's empty rpm becomes 0).
"""

from __future__ import annotations

import numpy as np
import pytest

from server.bench_runs.csv_format import BenchCsvError, parse_bench_csv
from server.bench_runs.flags import (
    IDLE_THRUST_TOLERANCE_N,
    FlagReason,
    flag_samples,
    idle_thrust_tolerance_n,
    looks_reversed,
)
from tests.bench_runs.reference import ReferenceTest, load_tests

HEADER = "throttle,bus_voltage_v,bus_current_a,rpm,thrust_n"
REVERSED = {"m_m_p_7_v11p1", "m_m_p_7_v7p4", "m_m_p_8_v11p1", "m_m_p_8_v7p4"}
"""The published runs whose thrust reads negative throughout (motor m_m on propellers p_7 and p_8)."""


def csv_of(test: ReferenceTest) -> str:
    """A published sweep in our CSV format, every value as published."""
    rows = [HEADER] + [f"{test.throttle[i]},{test.bus_voltage_v[i]},{test.current_a[i]},"
                       f"{0.0 if np.isnan(test.rpm[i]) else test.rpm[i]},{test.thrust_n[i]}"
                       for i in range(len(test.throttle))]
    return "\n".join(rows) + "\n"


def issues_of(text: str, thrust_sign: int = 1) -> list[tuple[int | None, str | None, str]]:
    with pytest.raises(BenchCsvError) as info:
        parse_bench_csv(text, thrust_sign=thrust_sign)
    return [(i.row, i.column, i.message) for i in info.value.issues]


def test_the_tolerance_covers_every_published_idle_reading_with_room_to_spare() -> None:
    # The figures quoted beside IDLE_THRUST_TOLERANCE_N: each sweep's first step with the motor stopped (rpm empty
    # or <= 10) in the runs that make thrust; 38 of 131 idle readings are negative, the lowest -0.0201 N.
    idle = np.array([t.thrust_n[0] for t in load_tests().values()
                     if np.nanmax(t.thrust_n) > IDLE_THRUST_TOLERANCE_N and not t.rpm[0] > 10.0])
    negative = idle[idle < 0]
    assert idle.size == 131 and negative.size == 38
    assert negative.min() == pytest.approx(-0.0201, abs=1e-9)
    assert IDLE_THRUST_TOLERANCE_N >= 2.0 * -negative.min()
    peaks = [np.nanmax(t.thrust_n) for t in load_tests().values() if t.test_id not in REVERSED]
    assert max(peaks) < 5.0  # so every published run gets the 0.05 N floor, not the 1 % of its peak
    assert all(idle_thrust_tolerance_n(t.thrust_n) == IDLE_THRUST_TOLERANCE_N for t in load_tests().values())


def test_the_tolerance_grows_with_a_bigger_stand() -> None:
    assert idle_thrust_tolerance_n([0.0, 2.0, 4.0]) == 0.05
    assert idle_thrust_tolerance_n([-0.3, 20.0, 60.0]) == pytest.approx(0.6)
    assert idle_thrust_tolerance_n([np.nan, 1.0]) == 0.05
    rows = "\n".join(f"{t},16,{30 * t},{8000 * t},{60 * t * t}" for t in (0.25, 0.5, 0.75, 1.0))
    parse_bench_csv(f"{HEADER}\n0,16.8,0.05,0,-0.4\n{rows}\n")  # -0.4 N idle on a 60 N stand: accepted
    assert issues_of(f"{HEADER}\n0,16.8,0.05,0,-0.7\n{rows}\n")[0][:2] == (2, "thrust_n")


def test_the_published_idle_case_of_minus_0_0016_n_is_accepted_and_flagged() -> None:
    test = load_tests()["m_e_p_5_v7p4"]
    assert test.thrust_n[0] == -0.0016 and test.rpm[0] == 2.0  # the bench's own first row
    samples = parse_bench_csv(csv_of(test))
    assert samples.thrust_n[0] == -0.0016  # stored as measured
    flags = flag_samples(samples.throttle, samples.bus_voltage_v, samples.bus_current_a, samples.rpm,
                         samples.thrust_n)
    assert FlagReason.THRUST_OFFSET in flags.reasons[0] and not flags.usable[0]
    assert not flags.mask(FlagReason.THRUST_OFFSET)[1:].any() and flags.usable[2:].all()  # the sweep itself is fitted


def test_a_clearly_negative_reading_mid_run_is_rejected_with_line_and_column() -> None:
    text = csv_of(load_tests()["m_e_p_5_v7p4"])
    lines = text.splitlines()
    cells = lines[6].split(",")
    lines[6] = ",".join([*cells[:4], "-0.8"])  # throttle 0.5, 7000 rpm: a real reading is about +1.5 N
    issues = issues_of("\n".join(lines) + "\n")
    assert len(issues) == 1
    row, column, message = issues[0]
    assert (row, column) == (7, "thrust_n") and "negative thrust -0.8 N" in message and "0.05 N" in message
    grams = issues_of("throttle,bus_voltage_v,bus_current_a,rpm,thrust_g\n0,7.4,0.1,0,-1\n0.5,7.3,3,7000,-80\n"
                      "1,7.2,6,9000,300\n")
    assert grams == [(3, "thrust_g", grams[0][2])] and "-80 g" in grams[0][2] and "5.1 g" in grams[0][2]


def test_every_published_sweep_imports_as_published_except_the_reversed_ones() -> None:
    reversed_found = set()
    for test in load_tests().values():
        if looks_reversed(test.thrust_n):
            reversed_found.add(test.test_id)
            continue
        samples = parse_bench_csv(csv_of(test))
        order = np.argsort(test.throttle, kind="stable")
        np.testing.assert_array_equal(samples.thrust_n, test.thrust_n[order])
        np.testing.assert_array_equal(samples.bus_current_a, test.current_a[order])
        np.testing.assert_array_equal(samples.rpm, np.nan_to_num(test.rpm[order], nan=0.0))
    assert reversed_found == REVERSED


@pytest.mark.parametrize("test_id", sorted(REVERSED))
def test_a_reversed_load_cell_gets_its_own_message_and_thrust_sign_flips_it(test_id: str) -> None:
    test = load_tests()[test_id]
    issues = issues_of(csv_of(test))
    assert len(issues) == 1
    row, column, message = issues[0]
    assert row is None and column == "thrust_n"
    assert "load cell looks reversed" in message and "thrust_sign -1" in message
    flipped = parse_bench_csv(csv_of(test), thrust_sign=-1)
    order = np.argsort(test.throttle, kind="stable")
    np.testing.assert_array_equal(flipped.thrust_n, -test.thrust_n[order])
    assert flipped.thrust_n[-1] > 1.0  # full throttle now reads as thrust


def test_thrust_sign_on_a_file_that_was_right_way_round_says_so() -> None:
    issues = issues_of(csv_of(load_tests()["m_a_p_1_v7p4"]), thrust_sign=-1)
    assert len(issues) == 1 and "reads the right way round" in issues[0][2]
    with pytest.raises(ValueError, match="1 or -1"):
        parse_bench_csv(HEADER + "\n0.5,11,4,12000,1.9\n", thrust_sign=0)
