"""Run the issue-16 benchmarks in one go and print one table: figure, value, baseline, ratio, target, met?

Usage: python benchmarks/all.py [--only predict,refit,...] [--quick]
Each benchmark runs as its own process (``sys.executable benchmarks/<name>.py`` with the arguments in the table below,
modest sizes: about 3-5 minutes in all on the 2-core machine), its figures are read from what it prints, and every
figure is shown beside the baseline measured in the same run (the trivial endpoint, the plain prediction, one run's
fit, the scalar path) so the numbers mean something on a busy machine. ``--quick`` shortens the API load and skips the
ranking at 10^7. The table is Markdown, ready for the README; the load average before and after is printed with it.
Nothing here is a test: the figures depend on the machine.
"""

from __future__ import annotations

import argparse
import os
import re
import subprocess
import sys
import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

HERE = Path(__file__).resolve().parent


@dataclass(frozen=True)
class Figure:
    """One row of the table, read from a benchmark's output by ``parse`` (value, baseline, ratio, met)."""

    name: str
    script: str
    args: tuple[str, ...]
    target: str
    parse: Callable[[str], tuple[str, str, str, bool]]
    quick_args: tuple[str, ...] | None = None


def _number(pattern: str, text: str) -> float:
    match = re.search(pattern, text)
    if match is None:
        raise ValueError(f"no match for {pattern!r}")
    return float(match.group(1))


def _predict(out: str) -> tuple[str, str, str, bool]:
    value = _number(r"with endurance: ([\d.]+) ms median", out)
    plain = _number(r"plain: ([\d.]+) ms median", out)
    return f"{value:.1f} ms", f"plain predict {plain:.1f} ms", f"{value / plain:.2f}×", value <= 100.0


def _compare(out: str) -> tuple[str, str, str, bool]:
    warm = _number(r"warm median ([\d.]+) ms", out)
    trivial = _number(r"trivial endpoint's ([\d.]+) ms", out)
    return f"{warm:.1f} ms", f"trivial endpoint {trivial:.1f} ms", f"{warm / trivial:.1f}×", warm <= 30.0


def _compare_page(out: str) -> tuple[str, str, str, bool]:
    page = _number(r"page warm median ([\d.]+) ms", out)
    trivial = _number(r"trivial endpoint's ([\d.]+) ms", out)
    return f"{page:.1f} ms", f"trivial endpoint {trivial:.1f} ms", f"{page / trivial:.1f}×", page <= 30.0


def _refit(out: str) -> tuple[str, str, str, bool]:
    pool = _number(r"pool \(.*\): ([\d.]+) s median", out)
    one = _number(r"one run \(.*\): ([\d.]+) s median", out)
    return f"{pool:.2f} s", f"one run's fit {one:.3f} s", f"{pool / one:.1f}×", pool <= 2.0


def _uploads(out: str) -> tuple[str, str, str, bool]:
    response = _number(r"response in ([\d.]+) s", out)
    health = _number(r"health check during both: median ([\d.]+) ms", out)
    refit = _number(r"refit job \w+ ([\d.]+) s later", out)
    return (f"{response:.2f} s (refit job {refit:.1f} s)", f"trivial endpoint {health:.1f} ms meanwhile",
            f"{response * 1000 / health:.0f}×", response <= 1.0)


def _api(out: str) -> tuple[str, str, str, bool]:
    readers = _number(r"readers ([\d.]+) req/s", out)
    errors = _number(r"readers [\d.]+ req/s \(p99 [\d.]+ ms, (\d+) errors\)", out)
    trivial = _number(r"of the trivial endpoint \(([\d.]+) req/s", out)
    share = readers / trivial
    return (f"{readers:.0f} req/s, {errors:.0f} errors", f"trivial endpoint {trivial:.0f} req/s", f"{share:.0%}",
            share >= 0.5 and errors == 0)


def _ranking(minimum: float) -> Callable[[str], tuple[str, str, str, bool]]:
    def parse(out: str) -> tuple[str, str, str, bool]:
        rate = _number(r"\(([\d.]+) combinations/s\)", out)
        scalar = _number(r"scalar brentq path: ([\d.]+) candidates/s", out)
        return f"{rate / 1e6:.2f} M/s", f"scalar path {scalar:.0f} /s", f"{rate / scalar:.0f}×", rate >= minimum
    return parse


FIGURES = [
    Figure("predict with endurance (server median, in process)", "predict.py", ("--n", "30"), "≤ 100 ms", _predict),
    Figure("compare.json, 3 entries (server median, warm)", "compare.py", ("--n", "15"), "≤ 30 ms", _compare),
    Figure("compare page, 3 entries (server median, warm)", "compare.py", ("--n", "15"), "≤ 30 ms", _compare_page),
    Figure("refit, 50 runs × 200 samples", "refit.py", ("--runs", "50", "--samples", "200", "--repeat", "3"),
           "≤ 2 s", _refit),
    Figure("bench upload, 10 000 rows (response)", "uploads.py", ("--rows", "10000", "--body-mb", "1"), "≤ 1 s",
           _uploads),
    Figure("API reads, 50 clients", "api_load.py", ("--clients", "50", "--seconds", "15"),
           "≥ 50 % of trivial, 0 errors", _api, quick_args=("--clients", "50", "--seconds", "5")),
    Figure("ranking 10^7, 2 processes", "ranking.py",
           ("--combinations", "10000000", "--processes", "2", "--scalar-sample", "100"), "≥ 10 M/s", _ranking(10e6)),
    Figure("ranking 10^7, 1 process", "ranking.py",
           ("--combinations", "10000000", "--processes", "1", "--scalar-sample", "100"), "≥ 5 M/s", _ranking(5e6)),
]
KEYS = {"predict.py": "predict", "compare.py": "compare", "refit.py": "refit", "uploads.py": "uploads",
        "api_load.py": "api", "ranking.py": "ranking"}


def _load() -> str:
    return " ".join(f"{x:.2f}" for x in os.getloadavg())


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--only", default="", help="comma-separated: predict, compare, refit, uploads, api, ranking")
    parser.add_argument("--quick", action="store_true", help="shorter API load, no ranking at 10^7")
    parser.add_argument("--pause", type=float, default=5.0,
                        help="seconds between benchmarks, so that one's server shutting down does not load the next")
    args = parser.parse_args()
    only = {s.strip() for s in args.only.split(",") if s.strip()}
    rows = []
    runs: dict[str, subprocess.CompletedProcess[str]] = {}
    started = time.perf_counter()
    load_before = _load()
    for figure in FIGURES:
        key = KEYS[figure.script]
        if (only and key not in only) or (args.quick and key == "ranking"):
            continue
        argv = figure.quick_args if args.quick and figure.quick_args else figure.args
        command = f"python benchmarks/{figure.script} {' '.join(argv)}"
        if command not in runs:  # figures read from the same command share one run of it
            if runs:
                time.sleep(args.pause)
            print(f"$ {command}", flush=True)
            t = time.perf_counter()
            runs[command] = subprocess.run([sys.executable, str(HERE / figure.script), *argv], capture_output=True,
                                           text=True, cwd=HERE.parent, check=False)
            out = runs[command].stdout
            print(f"  ({time.perf_counter() - t:.0f} s) {out.strip().splitlines()[-1] if out else ''}", flush=True)
        done = runs[command]
        try:
            if done.returncode != 0:
                raise ValueError(done.stderr.strip().splitlines()[-1] if done.stderr.strip() else "failed")
            value, baseline, ratio, met = figure.parse(done.stdout)
            rows.append((figure.name, value, baseline, ratio, figure.target, "yes" if met else "**no**", command))
        except ValueError as exc:
            rows.append((figure.name, f"error: {exc}", "", "", figure.target, "**no**", command))
    print()
    print(f"issue-16 benchmarks, {time.strftime('%Y-%m-%d %H:%M %Z')}, load average before {load_before}, after "
          f"{_load()}, {time.perf_counter() - started:.0f} s in all (`python benchmarks/all.py`)")
    print()
    print("| figure | value | baseline (same run) | ratio | target | met? | command |")
    print("|---|---|---|---|---|---|---|")
    for row in rows:
        print("| " + " | ".join(row[:-1]) + f" | `{row[-1]}` |")


if __name__ == "__main__":
    main()
