"""Parse and validate a bench-run CSV (DESIGN.md "Bench-run CSV") into SI numpy arrays.

The header names carry their unit: ``throttle,bus_voltage_v,bus_current_a,rpm,thrust_n`` are required,
``torque_nm`` and ``temperature_c`` optional. ``thrust_g``, ``thrust_kgf`` and ``torque_nmm`` are accepted
and converted on import (g0 = 9.80665 m/s^2). Rows may come in any order; they are sorted by throttle
(stable), and each keeps the line number it had in the file so that flags and residuals can point back.

Validation is all or nothing: :func:`parse_bench_csv` either returns :class:`BenchSamples` or raises
:class:`BenchCsvError` carrying every problem found as ``(row, column, message)``, where ``row`` is the
1-based line number in the file (the header is normally line 1) and ``column`` the header name (``None`` for
problems of the whole file).
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass

import numpy as np

from server.bench_runs.flags import idle_thrust_tolerance_n, looks_reversed
from server.errors import FieldError, InvalidInput
from server.physics._types import STANDARD_GRAVITY_M_S2, FloatArray

MAX_BYTES = 2 * 1024 * 1024
"""Largest accepted file (2 MiB)."""
MAX_ROWS = 10_000
"""Largest accepted number of data rows."""
MAX_REPORTED_ISSUES = 200
"""Problems listed in one error; the rest are summarised in a last issue."""

REQUIRED_QUANTITIES = ("throttle", "bus_voltage_v", "bus_current_a", "rpm", "thrust_n")
OPTIONAL_QUANTITIES = ("torque_nm", "temperature_c")

# header name -> (quantity it measures, factor to SI)
COLUMN_UNITS: dict[str, tuple[str, float]] = {
    "throttle": ("throttle", 1.0),
    "bus_voltage_v": ("bus_voltage_v", 1.0),
    "bus_current_a": ("bus_current_a", 1.0),
    "rpm": ("rpm", 1.0),
    "thrust_n": ("thrust_n", 1.0),
    "thrust_g": ("thrust_n", STANDARD_GRAVITY_M_S2 * 1e-3),
    "thrust_kgf": ("thrust_n", STANDARD_GRAVITY_M_S2),
    "torque_nm": ("torque_nm", 1.0),
    "torque_nmm": ("torque_nm", 1e-3),
    "temperature_c": ("temperature_c", 1.0),
}

_NON_NEGATIVE = {"bus_voltage_v": "voltage", "bus_current_a": "current", "rpm": "rpm", "torque_nm": "torque"}
"""Quantities that may not be negative at all (thrust may, a little: see :func:`_thrust_issues`)."""
THRUST_SIGNS = (1, -1)
THRUST_UNITS = {"thrust_n": "N", "thrust_g": "g", "thrust_kgf": "kgf"}


@dataclass(frozen=True)
class CsvIssue:
    """One problem of an uploaded CSV: file line (1 = header; None = whole file), column, message."""

    row: int | None
    column: str | None
    message: str

    def as_field_error(self) -> FieldError:
        """The project's :class:`~server.errors.FieldError` (``field`` is the column, or ``"file"``)."""
        return FieldError(self.column or "file", self.message, self.row)


class BenchCsvError(ValueError):
    """A rejected bench-run CSV; ``issues`` lists every problem found."""

    def __init__(self, issues: list[CsvIssue]) -> None:
        self.issues = issues
        super().__init__("; ".join(
            (f"line {i.row}, " if i.row is not None else "") + (f"{i.column}: " if i.column else "") + i.message
            for i in issues[:10]) + (" …" if len(issues) > 10 else ""))

    def field_errors(self) -> list[FieldError]:
        """Every issue as a :class:`~server.errors.FieldError`."""
        return [i.as_field_error() for i in self.issues]

    def as_invalid_input(self) -> InvalidInput:
        """The 422 domain error the service raises for this upload."""
        n = len(self.issues)
        return InvalidInput(f"The bench-run CSV was rejected ({n} problem{'s' if n != 1 else ''}).",
                            self.field_errors())


@dataclass(frozen=True)
class BenchSamples:
    """A parsed sweep in SI units, sorted by throttle; arrays of equal length.

    Parameters
    ----------
    throttle : ndarray
        Commanded throttle 0..1. [-]
    bus_voltage_v, bus_current_a : ndarray
        ESC input voltage [V] and current [A].
    rpm : ndarray
        Shaft speed. [rpm]
    thrust_n : ndarray
        Thrust. [N]
    torque_nm : ndarray or None
        Shaft torque, when the stand measures it. [N m]
    temperature_c : ndarray or None
        A temperature channel (motor or air, as the team records it). [°C]
    line : ndarray of int
        Line of each sample in the uploaded file (header = 1).
    """

    throttle: FloatArray
    bus_voltage_v: FloatArray
    bus_current_a: FloatArray
    rpm: FloatArray
    thrust_n: FloatArray
    torque_nm: FloatArray | None
    temperature_c: FloatArray | None
    line: np.ndarray

    def __len__(self) -> int:
        return int(self.throttle.size)

    @property
    def has_torque(self) -> bool:
        return self.torque_nm is not None


def _decode(data: bytes | str) -> tuple[str | None, list[CsvIssue]]:
    if isinstance(data, str):
        raw = data.encode("utf-8", errors="surrogatepass")
    else:
        raw = bytes(data)
    if len(raw) > MAX_BYTES:
        return None, [CsvIssue(None, None, f"file is {len(raw)} bytes; the limit is {MAX_BYTES} bytes (2 MB)")]
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        return None, [CsvIssue(line, None, f"not valid UTF-8 text (byte {exc.start})")]
    return text, []


def _check_header(header: list[str], line: int,
                  ) -> tuple[dict[str, int], dict[int, tuple[str, str, float]], list[CsvIssue]]:
    """Map quantity -> column index; report unknown, duplicate and missing columns."""
    issues: list[CsvIssue] = []
    seen_names: dict[str, int] = {}
    quantity_column: dict[str, int] = {}
    columns: dict[int, tuple[str, str, float]] = {}
    for idx, cell in enumerate(header):
        name = cell.strip().lower()
        if not name:
            issues.append(CsvIssue(line, f"column {idx + 1}", "empty column name in the header"))
            continue
        if name in seen_names:
            issues.append(CsvIssue(line, name, "duplicate column in the header"))
            continue
        seen_names[name] = idx
        if name not in COLUMN_UNITS:
            known = ", ".join(COLUMN_UNITS)
            issues.append(CsvIssue(line, name, f"unknown column (accepted: {known})"))
            continue
        quantity, factor = COLUMN_UNITS[name]
        if quantity in quantity_column:
            other = header[quantity_column[quantity]].strip().lower()
            issues.append(CsvIssue(line, name, f"measures the same quantity as column {other!r}; keep one"))
            continue
        quantity_column[quantity] = idx
        columns[idx] = (name, quantity, factor)
    for quantity in REQUIRED_QUANTITIES:
        if quantity not in quantity_column:
            alternatives = [n for n, (q, _) in COLUMN_UNITS.items() if q == quantity and n != quantity]
            hint = f" (or {', '.join(alternatives)})" if alternatives else ""
            issues.append(CsvIssue(line, quantity, f"required column is missing{hint}"))
    return quantity_column, columns, issues


def _value_issue(name: str, quantity: str, text: str) -> tuple[float, str | None]:
    if not text:
        return math.nan, "empty value"
    try:
        value = float(text)
    except ValueError:
        return math.nan, f"not a number: {text[:40]!r}"
    if not math.isfinite(value):
        return math.nan, f"not a finite number: {text[:40]!r}"
    if quantity == "throttle" and not 0.0 <= value <= 1.0:
        return value, f"throttle {value:g} is outside 0..1"
    if quantity in _NON_NEGATIVE and value < 0.0:
        return value, f"negative {_NON_NEGATIVE[quantity]} {value:g}"
    return value, None


def _thrust_issues(thrust_n: FloatArray, lines: np.ndarray, column: str, factor: float,
                   thrust_sign: int) -> list[CsvIssue]:
    """Negative thrust: within the idle tolerance it is the load cell's zero offset (kept, flagged later); a run
    negative throughout looks reversed (one message naming the fix); any other negative reading is an error."""
    unit = THRUST_UNITS[column]
    if looks_reversed(thrust_n):
        k = int(np.nanargmin(thrust_n))
        lowest = f"down to {thrust_n[k] / factor:g} {unit} on line {lines[k]}"
        if thrust_sign == -1:
            return [CsvIssue(None, column, f"with thrust_sign -1 the thrust is negative throughout ({lowest}): this "
                                           "load cell reads the right way round; upload it with thrust_sign 1")]
        return [CsvIssue(None, column, f"thrust is negative throughout ({lowest}): the load cell looks reversed "
                                       "(mounted or wired the other way round). If it is, upload the file again with "
                                       "thrust_sign -1 (the form's 'Load cell reversed', or --thrust-sign -1) to flip "
                                       "the sign on import. A propeller mounted backwards makes far less thrust, and "
                                       "flipping the sign does not correct that")]
    tolerance = idle_thrust_tolerance_n(thrust_n)
    return [CsvIssue(int(lines[k]), column,
                     f"negative thrust {thrust_n[k] / factor:g} {unit}: more than the {tolerance / factor:.3g} {unit} "
                     "below zero a load cell's zero offset may read at idle")
            for k in np.flatnonzero(thrust_n < -tolerance)]


def parse_bench_csv(data: bytes | str, *, thrust_sign: int = 1) -> BenchSamples:
    """Parse and validate a bench-run CSV.

    Parameters
    ----------
    data : bytes or str
        The uploaded file (UTF-8, optional BOM; comma separated; first line is the header).
    thrust_sign : {1, -1}
        -1 flips the thrust column on import (a load cell mounted or wired the other way round).

    Returns
    -------
    BenchSamples
        The samples in SI units, sorted by throttle.

    Raises
    ------
    BenchCsvError
        With every problem found (row = file line, column = header name): non-UTF-8, more than 2 MB, empty
        file or header only, more than 10 000 rows, empty/unknown/duplicate column or two columns for one
        quantity, missing required column, wrong number of values, non-numeric/NaN/inf values, negative
        voltage/current/rpm/torque, throttle outside 0..1, thrust further below zero than the idle tolerance
        (:func:`server.bench_runs.flags.idle_thrust_tolerance_n`; a smaller negative reading is kept and flagged),
        or thrust negative throughout (one issue saying the load cell looks reversed).
    """
    if thrust_sign not in THRUST_SIGNS:
        raise ValueError(f"thrust_sign must be 1 or -1, not {thrust_sign!r}")
    text, issues = _decode(data)
    if text is None:
        raise BenchCsvError(issues)
    reader = csv.reader(io.StringIO(text, newline=""))
    try:
        rows = [(n, r) for n, r in enumerate(reader, start=1) if any(cell.strip() for cell in r)]
    except csv.Error as exc:  # a field longer than the csv module allows, or a broken quote
        raise BenchCsvError([CsvIssue(reader.line_num, None, f"unreadable CSV: {exc}")]) from None
    if not rows:
        raise BenchCsvError([CsvIssue(None, None, "the file is empty")])
    header_line, header = rows[0]
    body = rows[1:]
    quantity_column, columns, issues = _check_header(header, header_line)
    if not body:
        issues.append(CsvIssue(None, None, "the file has a header but no data rows"))
    if len(body) > MAX_ROWS:
        issues.append(CsvIssue(None, None, f"{len(body)} data rows; the limit is {MAX_ROWS}"))
    if issues:
        raise BenchCsvError(issues)

    values = {q: np.full(len(body), np.nan) for q in quantity_column}
    lines = np.array([n for n, _ in body], dtype=np.int64)
    for k, (line, cells) in enumerate(body):
        if len(cells) != len(header):
            issues.append(CsvIssue(line, None, f"expected {len(header)} values, found {len(cells)}"))
            continue
        for idx, (name, quantity, factor) in columns.items():
            value, problem = _value_issue(name, quantity, cells[idx].strip())
            if problem:
                issues.append(CsvIssue(line, name, problem))
            else:
                values[quantity][k] = value * factor * (thrust_sign if quantity == "thrust_n" else 1)
    thrust_idx = quantity_column["thrust_n"]
    thrust_name, _, thrust_factor = columns[thrust_idx]
    issues += _thrust_issues(values["thrust_n"], lines, thrust_name, thrust_factor, thrust_sign)
    if issues:
        if len(issues) > MAX_REPORTED_ISSUES:
            extra = len(issues) - MAX_REPORTED_ISSUES
            issues = issues[:MAX_REPORTED_ISSUES] + [CsvIssue(None, None, f"… and {extra} more problems")]
        raise BenchCsvError(issues)

    order = np.argsort(values["throttle"], kind="stable")

    def col(q: str) -> FloatArray | None:
        return values[q][order] if q in values else None

    return BenchSamples(
        throttle=values["throttle"][order], bus_voltage_v=values["bus_voltage_v"][order],
        bus_current_a=values["bus_current_a"][order], rpm=values["rpm"][order], thrust_n=values["thrust_n"][order],
        torque_nm=col("torque_nm"), temperature_c=col("temperature_c"), line=lines[order],
    )
