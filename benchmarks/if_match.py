"""Concurrent If-Match writers against a served copy: saves that "succeeded" versus how far the version advanced.

Usage: python benchmarks/if_match.py [--writers 8] [--rounds 30] [--database-url postgresql+psycopg://...]
Each round, every writer reads nothing new: all send the version read at the start of the round at the same moment.
Last line: `if_match: W writers x R rounds: S saves answered 200, version advanced by A, lost updates L, 412s F`.
"""

from __future__ import annotations

import argparse
import threading

import httpx2 as httpx
from _live import api_key, served


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--writers", type=int, default=8)
    parser.add_argument("--rounds", type=int, default=30)
    parser.add_argument("--database-url", default=None)
    args = parser.parse_args()
    with served(args.database_url) as (base, _pid, url):
        headers = {"Authorization": f"Bearer {api_key(url, scope='write')}"}
        with httpx.Client(base_url=base, headers=headers, timeout=60) as client:
            motor = client.get("/api/v1/parts/motors").json()["items"][0]
            path = f"/api/v1/parts/motors/{motor['id']}"
            start_version = client.get(path).json()["version"]
        statuses: list[int] = []
        lock = threading.Lock()
        for round_no in range(args.rounds):
            with httpx.Client(base_url=base, headers=headers, timeout=60) as client:
                version = client.get(path).json()["version"]
            barrier = threading.Barrier(args.writers)

            def write(i: int, version: int = version, barrier: threading.Barrier = barrier, r: int = round_no) -> None:
                with httpx.Client(base_url=base, headers=headers, timeout=60) as client:
                    barrier.wait()
                    status = client.patch(path, json={"notes": f"round {r} writer {i}"},
                                          headers={"If-Match": f'"{version}"'}).status_code
                with lock:
                    statuses.append(status)

            threads = [threading.Thread(target=write, args=(i,)) for i in range(args.writers)]
            for t in threads:
                t.start()
            for t in threads:
                t.join()
        with httpx.Client(base_url=base, headers=headers, timeout=60) as client:
            advanced = client.get(path).json()["version"] - start_version
    saves, refused = statuses.count(200), statuses.count(412)
    print(f"if_match: {args.writers} writers x {args.rounds} rounds: {saves} saves answered 200, version advanced by "
          f"{advanced}, lost updates {saves - advanced}, 412s {refused}, other {len(statuses) - saves - refused}")


if __name__ == "__main__":
    main()
