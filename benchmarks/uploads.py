"""Bench uploads and oversized bodies against a served copy (one uvicorn process), figures for the reliability work.

Usage: python benchmarks/uploads.py [--rows 10000] [--body-mb 100] [--database-url postgresql+psycopg://...]
Prints the response time of a bench-run upload of N rows (stored; the refit runs afterwards as a job) beside the
health check's latency while it runs, how long the refit job took, and the server's memory before and after an
unauthenticated body of M MB (announced with Content-Length, and chunked without). Loopback only.
Last line: `uploads: N rows answered in S s (refit job R s); M MB unauthenticated body: +X MiB server memory`.
"""

from __future__ import annotations

import argparse
import json
import random
import statistics
import threading
import time
from pathlib import Path

import httpx2 as httpx
from _live import api_key, served


def sweep(rows: int) -> str:
    """A valid sweep of ``rows`` rows: a smooth synthetic curve with noise (invented numbers)."""
    rng = random.Random(1)
    out = ["throttle,bus_voltage_v,bus_current_a,rpm,thrust_n"]
    for i in range(rows):
        t = 0.1 + 0.9 * (i % 200) / 199
        out.append(f"{t:.4f},{11.1 - 0.6 * t + rng.gauss(0, 0.01):.4f},{0.4 + 18 * t ** 1.8 + rng.gauss(0, 0.05):.4f},"
                   f"{1800 + 9000 * t ** 0.6 + rng.gauss(0, 20):.1f},{0.05 + 9.5 * t ** 1.25 + rng.gauss(0, 0.03):.4f}")
    return "\n".join(out) + "\n"


def rss_mib(pid: int) -> float:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith("VmRSS:"):
            return int(line.split()[1]) / 1024
    return float("nan")


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--rows", type=int, default=10_000)
    parser.add_argument("--body-mb", type=int, default=100)
    parser.add_argument("--database-url", default=None)
    args = parser.parse_args()
    with served(args.database_url) as (base, pid, url):
        key = api_key(url, scope="write")
        client = httpx.Client(base_url=base, headers={"Authorization": f"Bearer {key}"}, timeout=600)
        parts = {k: client.get(f"/api/v1/parts/{k}").json()["items"][0]["id"] for k in ("motors", "propellers", "escs")}
        meta = {"motor_id": parts["motors"], "propeller_id": parts["propellers"], "esc_id": parts["escs"],
                "supply_voltage_v": 11.1}
        health: list[float] = []
        stop = threading.Event()

        def probe() -> None:
            with httpx.Client(base_url=base, timeout=60) as c:
                while not stop.is_set():
                    t = time.perf_counter()
                    c.get("/healthz")
                    health.append((time.perf_counter() - t) * 1000)
                    time.sleep(0.05)

        prober = threading.Thread(target=probe)
        prober.start()
        text = sweep(args.rows)
        started = time.perf_counter()
        response = client.post("/api/v1/bench-runs", data={"metadata": json.dumps(meta)},
                               files={"file": ("sweep.csv", text, "text/csv")})
        upload_s = time.perf_counter() - started
        assert response.status_code == 201, response.text
        status = response.json()["calibration"]
        while status["status"] in ("queued", "running"):
            time.sleep(0.2)
            status = client.get(status["url"]).json()
        refit_s = time.perf_counter() - started - upload_s
        stop.set()
        prober.join()
        print(f"upload of {args.rows} rows ({len(text) / 1e6:.2f} MB): response in {upload_s:.2f} s; refit job "
              f"{status['status']} {refit_s:.1f} s later; health check during both: median "
              f"{statistics.median(health):.1f} ms, max {max(health):.0f} ms ({len(health)} probes)")
        size = args.body_mb * 1024 * 1024

        def body() -> object:
            for _ in range(args.body_mb):
                yield b"x" * (1024 * 1024)

        before = rss_mib(pid)
        with httpx.Client(base_url=base, timeout=600) as anonymous:
            t = time.perf_counter()
            announced = anonymous.post("/api/v1/parts/motors", content=body(),
                                       headers={"content-type": "application/json", "content-length": str(size)})
            announced_s = time.perf_counter() - t
            t = time.perf_counter()
            chunked = anonymous.post("/api/v1/import", content=body(), headers={"content-type": "application/json"})
            chunked_s = time.perf_counter() - t
        grown = rss_mib(pid) - before
        print(f"{args.body_mb} MB unauthenticated JSON: announced -> {announced.status_code} in {announced_s:.2f} s, "
              f"chunked -> {chunked.status_code} in {chunked_s:.2f} s; server memory {before:.0f} -> "
              f"{before + grown:.0f} MiB")
    print(f"uploads: {args.rows} rows answered in {upload_s:.2f} s (refit job {refit_s:.1f} s); {args.body_mb} MB "
          f"unauthenticated body: {grown:+.1f} MiB server memory")


if __name__ == "__main__":
    main()
