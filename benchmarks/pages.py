"""Time the main pages and API calls of a running liftmatch server (demo data), median of N requests each.

Usage: python benchmarks/pages.py [--base http://127.0.0.1:8000] [--n 20]
Logs in as the demo engineer; run `liftmatch demo` (or serve a database with the demo loaded) first.
Loopback only; prints one line per URL and ends with `pages: M urls, median of medians X ms`.
"""

from __future__ import annotations

import argparse
import re
import statistics
import time

import httpx2 as httpx


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--base", default="http://127.0.0.1:8000")
    parser.add_argument("--n", type=int, default=20)
    args = parser.parse_args()
    if not re.match(r"^http://(127\.0\.0\.1|localhost)(:\d+)?$", args.base):
        raise SystemExit("benchmarks/pages.py only talks to a server on this machine (127.0.0.1 or localhost)")
    with httpx.Client(base_url=args.base, follow_redirects=True, timeout=60) as client:
        login = client.get("/login").text
        token = re.search(r'name="csrf_token" value="([^"]+)"', login)
        assert token, "no login form"
        client.post("/login", data={"email": "engineer@northfold.example", "password": "northfold-demo",
                                    "csrf_token": token.group(1)})
        csrf = re.search(r'"X-CSRF-Token": "([^"]+)"', client.get("/").text)
        assert csrf, "not logged in"
        client.headers["X-CSRF-Token"] = csrf.group(1)
        mission = client.get("/api/v1/missions").json()[0]["id"]
        ranking = client.post("/api/v1/rankings", json={"mission_id": mission, "top_n": 50}).json()["id"]
        while client.get(f"/api/v1/rankings/{ranking}").json()["status"] in ("queued", "running"):
            time.sleep(0.05)
        shortlist = client.post("/api/v1/shortlists", json={"name": "benchmark", "mission_id": mission}).json()
        for rank in (1, 2, 3):
            client.post(f"/api/v1/shortlists/{shortlist['id']}/entries", json={"ranking_id": ranking, "rank": rank})
        shortlists = [shortlist]
        urls = ["/", "/parts/motors", "/parts/propellers", "/missions", "/bench-runs", "/bench-runs/1",
                "/rankings", f"/rankings/{ranking}", "/api/v1/parts/motors?page_size=100",
                f"/api/v1/rankings/{ranking}/results", "/predict?submitted=1&battery_id=1&esc_id=2&motor_id=4"
                "&propeller_id=5&rotor_count=4&throttles=1,0.6&thrusts=5"]
        if shortlists:
            urls += [f"/shortlists/{shortlists[0]['id']}", f"/api/v1/shortlists/{shortlists[0]['id']}/compare.json"]
        medians = []
        for url in urls:
            times = []
            for _ in range(args.n):
                t = time.perf_counter()
                response = client.get(url)
                times.append((time.perf_counter() - t) * 1000)
                assert response.status_code == 200, (url, response.status_code)
            median = statistics.median(times)
            medians.append(median)
            print(f"{url:70s} median {median:7.1f} ms  p90 {sorted(times)[int(0.9 * len(times)) - 1]:7.1f} ms")
    print(f"pages: {len(urls)} urls, median of medians {statistics.median(medians):.1f} ms")


if __name__ == "__main__":
    main()
