"""Time compare.json of a three-candidate shortlist in process (demo data): the first (cold: nothing cached) call,
then the median of warm calls served by the evaluation cache, beside the trivial endpoint in the same run; then the
shortlist's compare page (HTML, the demo engineer logged in) the same way.

Usage: python benchmarks/compare.py [--n 15]
Ends with `compare: cold C ms, warm median W ms (R× the trivial endpoint's T ms), page warm median P ms`.
"""

from __future__ import annotations

import argparse
import re
import statistics
import time

from fastapi.testclient import TestClient
from sqlalchemy import select

from server.config import Settings
from server.db import transaction
from server.main import create_app
from server.models import PART_MODELS, Mission, Team
from server.services import candidate, seed, teams

SYSTEMS = [("NS-B4S-5200", esc, "NS-M3508-460", "NS-P13x4.4") for esc in ("NS-E20", "NS-E30", "NS-E45")]


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--n", type=int, default=15)
    args = parser.parse_args()
    with seed.throwaway_demo() as factory:
        app = create_app(Settings(database_url=str(factory.kw["bind"].url), demo=True))
        with TestClient(app) as client:
            with transaction(app.state.sessionmaker) as session:
                team = session.scalars(select(Team)).first()
                assert team is not None
                _, key = teams.create_api_key(session, team_id=team.id, scope="write")
                mission = session.scalars(select(Mission).where(Mission.name == "Q4 mapping survey")).one().id
                bodies = [{kind + "_id": session.scalars(select(PART_MODELS[plural].id).where(
                    PART_MODELS[plural].part_number == number)).one()
                    for kind, plural, number in zip(("battery", "esc", "motor", "propeller"),
                                                    ("batteries", "escs", "motors", "propellers"), system,
                                                    strict=True)} for system in SYSTEMS]
            headers = {"Authorization": f"Bearer {key}"}
            sid = client.post("/api/v1/shortlists", json={"name": "bench", "mission_id": mission},
                              headers=headers).json()["id"]
            for body in bodies:
                assert client.post(f"/api/v1/shortlists/{sid}/entries", json=body, headers=headers).status_code == 201
            # Adding an entry leaves its evaluation (curves included) in the cache; "cold" is the first compare after
            # a change, when nothing is cached: empty it.
            candidate._cache.clear()
            medians = {}
            for label, path in (("compare", f"/api/v1/shortlists/{sid}/compare.json"), ("trivial", "/healthz")):
                medians[label] = _timed(client, label, path, args.n, headers)
            form = client.get("/login").text
            token = re.search(r'name="csrf_token" value="([^"]+)"', form)
            assert token, "no log-in form"
            client.post("/login", data={"email": "engineer@northfold.example", "password": "northfold-demo",
                                        "csrf_token": token.group(1)})
            medians["page"] = _timed(client, "compare page", f"/shortlists/{sid}", args.n, {})
    cold, warm = medians["compare"]
    trivial = medians["trivial"][1]
    print(f"compare: cold {cold:.0f} ms, warm median {warm:.1f} ms ({warm / trivial:.1f}× the trivial endpoint's "
          f"{trivial:.1f} ms), page warm median {medians['page'][1]:.1f} ms")


def _timed(client: TestClient, label: str, path: str, n: int, headers: dict[str, str]) -> tuple[float, float]:
    """The first call's time and the median of ``n`` calls after it. [ms]"""
    times = []
    for _ in range(n + 1):
        start = time.perf_counter()
        response = client.get(path, headers=headers)
        times.append(1000 * (time.perf_counter() - start))
        assert response.status_code == 200 and "/login" not in str(response.url), (path, response.status_code)
    print(f"{label}: first {times[0]:.1f} ms, median of {n} after it {statistics.median(times[1:]):.1f} ms")
    return times[0], statistics.median(times[1:])


if __name__ == "__main__":
    main()
