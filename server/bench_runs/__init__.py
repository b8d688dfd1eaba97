"""Bench runs: the pure core of importing a measured thrust-stand sweep.

- :mod:`.csv_format` parses and validates our bench-run CSV into SI arrays, or raises
  :class:`~.csv_format.BenchCsvError` listing every problem by file line and column;
- :mod:`.flags` marks samples that must not feed a calibration (collapsed supply, inconsistent rows);
- :mod:`.derived` computes per-sample quantities (air density, electrical power, CT, CP, efficiencies).

Model fitting lives in :mod:`server.physics.calibrate`. Nothing here does I/O, touches the database or
imports web code; the service layer wires it up.
"""

from .csv_format import BenchCsvError, BenchSamples, CsvIssue, parse_bench_csv
from .derived import DerivedSamples, derive_samples, run_air_density_kg_m3
from .flags import FlagReason, SampleFlags, flag_samples

__all__ = [
    "BenchCsvError",
    "BenchSamples",
    "CsvIssue",
    "DerivedSamples",
    "FlagReason",
    "SampleFlags",
    "derive_samples",
    "flag_samples",
    "parse_bench_csv",
    "run_air_density_kg_m3",
]
