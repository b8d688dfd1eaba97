"""Under load on a real server: many readers, a long upload beside another team's writes, oversized bodies.

Bounded: a few seconds of load each, loopback only. The benchmarks (benchmarks/api_load.py, benchmarks/uploads.py)
run the same scenarios for longer and print the figures.
"""

from __future__ import annotations

import json
import random
import threading
import time
from collections.abc import Iterator

import httpx2 as httpx

from benchmarks._live import load
from tests.api.test_bench_runs import csv_of
from tests.factories import part_payload
from tests.reliability.conftest import Live, LiveServer

READERS = 50


def _library(server: LiveServer, key: str) -> dict[str, int]:
    with httpx.Client(base_url=server.base, headers={"Authorization": f"Bearer {key}"}, timeout=30) as c:
        ids = {kind: c.post(f"/api/v1/parts/{kind}", json=part_payload(kind)).json()["id"]
               for kind in ("escs", "motors", "propellers")}
        for i in range(40):
            assert c.post("/api/v1/parts/motors", json=part_payload("motors", name=f"M{i}")).status_code == 201
    return ids


def _stream(total: int, chunk: int = 1 << 20) -> Iterator[bytes]:
    sent = 0
    while sent < total:
        yield b"x" * min(chunk, total - sent)
        sent += chunk


def test_oversized_unauthenticated_bodies_cost_no_memory(live: Live) -> None:
    server = live.server
    before = server.rss_kib()
    size = 100 * 1024 * 1024
    with httpx.Client(base_url=server.base, timeout=60) as c:
        announced = c.post("/api/v1/parts/motors", content=_stream(size),
                           headers={"content-type": "application/json", "content-length": str(size)})
        assert announced.status_code == 413 and announced.json()["status"] == 413
        chunked = c.post("/api/v1/import", content=_stream(size), headers={"content-type": "application/json"})
        assert chunked.status_code in (401, 413)
        part = b'--x\r\nContent-Disposition: form-data; name="file"; filename="big.csv"\r\n\r\n'
        upload = c.post("/api/v1/bench-runs", content=iter([part, *_stream(size)]),
                        headers={"content-type": "multipart/form-data; boundary=x"})
        assert upload.status_code == 413
    grown_mib = (server.rss_kib() - before) / 1024
    assert grown_mib < 40, grown_mib  # one 71 MB body used to cost 1.1 GB (this test runs first: nothing else runs)


def test_50_concurrent_readers_get_no_errors(live: Live) -> None:
    alpha = live.alpha
    _library(live.server, alpha["key"])
    result = load(live.server.base, "/api/v1/parts/motors?page_size=100", clients=READERS, seconds=4,
                  headers={"Authorization": f"Bearer {alpha['key']}"})
    assert result.errors == 0 and set(result.statuses) == {200}, result.line()
    assert result.rate > 20, result.line()
    assert "Traceback" not in live.server.log.read_text()


def _big_sweep(rows: int = 10_000) -> str:
    """A valid 10 000-row sweep: the reference sweep's rows repeated with a little noise."""
    lines = csv_of("m_a_p_1_v7p4").strip().splitlines()
    header, body = lines[0], [list(map(float, line.split(","))) for line in lines[1:]]
    rng = random.Random(7)
    out = [header]
    for i in range(rows):
        t, v, a, rpm, thrust = body[i % len(body)]
        out.append(f"{t:.4f},{v * (1 + rng.uniform(-0.002, 0.002)):.4f},{a * (1 + rng.uniform(-0.01, 0.01)):.4f},"
                   f"{rpm * (1 + rng.uniform(-0.005, 0.005)):.1f},{thrust * (1 + rng.uniform(-0.01, 0.01)):.4f}")
    return "\n".join(out) + "\n"


def test_a_long_upload_blocks_no_one(dedicated: Live) -> None:
    """A 10 000-row upload in one team while another team writes (its own server: the refit it starts is long)."""
    server, alpha, beta = dedicated.server, dedicated.alpha, dedicated.beta
    ids = _library(server, alpha["key"])
    beta_motor = _library(server, beta["key"])["motors"]
    sweep = _big_sweep()
    stop = threading.Event()
    statuses: list[int] = []
    health_ms: list[float] = []

    def other_team_writes() -> None:
        with httpx.Client(base_url=server.base, headers={"Authorization": f"Bearer {beta['key']}"}, timeout=30) as c:
            i = 0
            while not stop.is_set():
                version = c.get(f"/api/v1/parts/motors/{beta_motor}").json()["version"]
                statuses.append(c.patch(f"/api/v1/parts/motors/{beta_motor}", json={"notes": f"edit {i}"},
                                        headers={"If-Match": f'"{version}"'}).status_code)
                statuses.append(c.post("/api/v1/parts/motors", json=part_payload("motors", name=f"B{i}")).status_code)
                started = time.perf_counter()
                statuses.append(c.get("/healthz").status_code)
                health_ms.append((time.perf_counter() - started) * 1000)
                i += 1

    writer = threading.Thread(target=other_team_writes)
    writer.start()
    try:
        time.sleep(0.3)
        meta = {"motor_id": ids["motors"], "propeller_id": ids["propellers"], "esc_id": ids["escs"],
                "supply_voltage_v": 7.4}
        with httpx.Client(base_url=server.base, headers={"Authorization": f"Bearer {alpha['key']}"}, timeout=60) as c:
            started = time.perf_counter()
            uploaded = c.post("/api/v1/bench-runs", data={"metadata": json.dumps(meta)},
                              files={"file": ("big.csv", sweep, "text/csv")})
            upload_s = time.perf_counter() - started
            assert uploaded.status_code == 201, uploaded.text
            assert uploaded.json()["sample_count"] == 10_000
            # The refit runs now, as a job: keep writing beside it for a while.
            time.sleep(3)
            refit = c.get(uploaded.json()["calibration"]["url"]).json()
            assert refit["status"] in ("queued", "running", "done"), refit
    finally:
        stop.set()
        writer.join(timeout=60)
    assert statuses and all(s < 500 for s in statuses), sorted(set(statuses))
    assert statuses.count(200) + statuses.count(201) == len(statuses), sorted(set(statuses))
    assert upload_s < 15, upload_s  # was 71–83 s with the calibration inside the request
    assert max(health_ms) < 2000, max(health_ms)  # was 5 s stalls
