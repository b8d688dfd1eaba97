"""Bench-run CSV import (DESIGN.md "Bench-run CSV"): units, ordering and every rejection names row and column."""

from __future__ import annotations

import numpy as np
import pytest

from server.bench_runs.csv_format import MAX_BYTES, MAX_ROWS, BenchCsvError, parse_bench_csv
from server.errors import InvalidInput

HEADER = "throttle,bus_voltage_v,bus_current_a,rpm,thrust_n"
GOOD = HEADER + "\n0.5,11.0,4.0,12000,1.9\n0.2,11.1,1.0,6000,0.5\n1.0,10.8,10.0,18000,4.1\n"


def issues_of(text: str | bytes) -> list[tuple[int | None, str | None, str]]:
    with pytest.raises(BenchCsvError) as info:
        parse_bench_csv(text)
    return [(i.row, i.column, i.message) for i in info.value.issues]


def test_good_file_is_sorted_by_throttle_and_keeps_file_lines() -> None:
    s = parse_bench_csv(GOOD)
    np.testing.assert_array_equal(s.throttle, [0.2, 0.5, 1.0])
    np.testing.assert_array_equal(s.rpm, [6000, 12000, 18000])
    np.testing.assert_array_equal(s.line, [3, 2, 4])
    assert s.torque_nm is None and s.temperature_c is None and len(s) == 3


def test_optional_columns_bom_crlf_and_header_case() -> None:
    text = ("\ufeffThrottle,BUS_VOLTAGE_V,bus_current_a,rpm,thrust_n,torque_nm,temperature_c\r\n"
            "1,7.2,8,15000,2.8,0.05,31\r\n")
    s = parse_bench_csv(text.encode())
    assert s.torque_nm is not None and s.torque_nm[0] == 0.05
    assert s.temperature_c is not None and s.temperature_c[0] == 31.0


@pytest.mark.parametrize(("column", "value", "expected_n"), [
    ("thrust_g", "500", 500 * 9.80665e-3),
    ("thrust_kgf", "0.5", 0.5 * 9.80665),
    ("thrust_n", "4.903325", 4.903325),
])
def test_thrust_units_are_converted_to_newton(column: str, value: str, expected_n: float) -> None:
    # g0 = 9.80665 m/s^2 (ISO 80000-3 standard gravity)
    s = parse_bench_csv(f"throttle,bus_voltage_v,bus_current_a,rpm,{column}\n0.5,11,4,12000,{value}\n")
    assert s.thrust_n[0] == pytest.approx(expected_n, rel=1e-12)


def test_torque_in_newton_millimetre_is_converted() -> None:
    s = parse_bench_csv(HEADER + ",torque_nmm\n0.5,11,4,12000,1.9,45.5\n")
    assert s.torque_nm is not None
    assert s.torque_nm[0] == pytest.approx(0.0455, rel=1e-12)


@pytest.mark.parametrize(("body", "row", "column", "fragment"), [
    ("0.5,11,abc,12000,1.9", 2, "bus_current_a", "not a number"),
    ("0.5,11,4,nan,1.9", 2, "rpm", "not a finite number"),
    ("0.5,11,4,12000,inf", 2, "thrust_n", "not a finite number"),
    ("0.5,11,-0.1,12000,1.9", 2, "bus_current_a", "negative current"),
    ("0.5,11,4,-5,1.9", 2, "rpm", "negative rpm"),
    ("0.5,-11,4,12000,1.9", 2, "bus_voltage_v", "negative voltage"),
    ("1.2,11,4,12000,1.9", 2, "throttle", "outside 0..1"),
    ("-0.1,11,4,12000,1.9", 2, "throttle", "outside 0..1"),
    ("0.5,11,,12000,1.9", 2, "bus_current_a", "empty value"),
    ("0.5,11,4,12000", 2, None, "expected 5 values, found 4"),
])
def test_bad_value_names_line_and_column(body: str, row: int, column: str | None, fragment: str) -> None:
    issues = issues_of(HEADER + "\n" + body + "\n")
    assert len(issues) == 1
    assert issues[0][0] == row and issues[0][1] == column and fragment in issues[0][2]


def test_every_bad_value_is_listed_with_its_own_line() -> None:
    issues = issues_of(HEADER + "\n0.5,11,4,12000,1.9\n0.6,x,4,12000,1.9\n\n0.7,11,4,12000,-2\n")
    assert [(r, c) for r, c, _ in issues] == [(3, "bus_voltage_v"), (5, "thrust_n")]


@pytest.mark.parametrize(("header", "column", "fragment"), [
    ("throttle,bus_voltage_v,bus_current_a,rpm", "thrust_n", "required column is missing"),
    ("throttle,bus_voltage_v,bus_current_a,rpm,thrust_n,rpm", "rpm", "duplicate column"),
    ("throttle,bus_voltage_v,bus_current_a,rpm,thrust_n,thrust_g", "thrust_g", "same quantity"),
    ("throttle,bus_voltage_v,bus_current_a,rpm,thrust_n,torque_nm,torque_nmm", "torque_nmm", "same quantity"),
    ("throttle,bus_voltage_v,bus_current_a,rpm,thrust_n,power_w", "power_w", "unknown column"),
])
def test_bad_header_names_line_one_and_the_column(header: str, column: str, fragment: str) -> None:
    issues = issues_of(header + "\n" + ",".join(["0.5"] * len(header.split(","))) + "\n")
    assert any(r == 1 and c == column and fragment in m for r, c, m in issues), issues


@pytest.mark.parametrize(("data", "fragment"), [
    ("", "empty"),
    ("\n\n", "empty"),
    (HEADER + "\n", "no data rows"),
])
def test_empty_file_or_header_only(data: str, fragment: str) -> None:
    issues = issues_of(data)
    assert issues[0][0] is None and fragment in issues[0][2]


def test_too_many_rows() -> None:
    text = HEADER + "\n" + "0.5,11,4,12000,1.9\n" * (MAX_ROWS + 1)
    issues = issues_of(text)
    assert issues[0][0] is None and "10000" in issues[0][2]


def test_exactly_the_row_limit_is_accepted() -> None:
    assert len(parse_bench_csv(HEADER + "\n" + "0.5,11,4,12000,1.9\n" * MAX_ROWS)) == MAX_ROWS


def test_too_large_file() -> None:
    issues = issues_of(HEADER + "\n" + "0.5" + " " * MAX_BYTES + ",11,4,12000,1.9\n")
    assert "2 MB" in issues[0][2]


def test_non_utf8_names_the_line() -> None:
    issues = issues_of((HEADER + "\n0.5,11,4,12000,1.9\n0.6,11,4,1\xe92000,1.9\n").encode("latin-1"))
    assert issues[0][0] == 3 and "UTF-8" in issues[0][2]


def test_error_maps_onto_the_projects_invalid_input() -> None:
    with pytest.raises(BenchCsvError) as info:
        parse_bench_csv(HEADER + "\n0.5,11,x,12000,1.9\n")
    problem = info.value.as_invalid_input()
    assert isinstance(problem, InvalidInput) and problem.status == 422
    assert [e.as_dict() for e in problem.errors] == [
        {"field": "bus_current_a", "message": "not a number: 'x'", "row": 2}]
    whole_file = issues_of("")[0]
    assert whole_file[1] is None  # maps to field "file"
