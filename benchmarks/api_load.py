"""API readers under concurrency against the trivial endpoint, in the same run and the same server.

Usage: python benchmarks/api_load.py [--clients 50] [--seconds 30] [--path /api/v1/parts/motors?page_size=100]
       [--database-url postgresql+psycopg://...]
Starts its own server (one uvicorn process, demo data) on a free loopback port; prints one line per endpoint and
ends with `api_load: N clients, readers R req/s (p99 P ms, E errors) = X % of the trivial endpoint (T req/s)`.
"""

from __future__ import annotations

import argparse

from _live import api_key, load, served


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--clients", type=int, default=50)
    parser.add_argument("--seconds", type=float, default=30)
    parser.add_argument("--path", default="/api/v1/parts/motors?page_size=100")
    parser.add_argument("--database-url", default=None, help="PostgreSQL URL (an empty database; default SQLite)")
    args = parser.parse_args()
    with served(args.database_url) as (base, _pid, url):
        headers = {"Authorization": f"Bearer {api_key(url)}"}
        load(base, "/healthz", clients=4, seconds=2)  # warm up
        trivial = load(base, "/healthz", clients=args.clients, seconds=args.seconds)
        print(trivial.line())
        readers = load(base, args.path, clients=args.clients, seconds=args.seconds, headers=headers)
        print(readers.line())
    print(f"api_load: {args.clients} clients, readers {readers.rate:.0f} req/s (p99 {readers.quantile(0.99):.0f} ms, "
          f"{readers.errors} errors) = {100 * readers.rate / trivial.rate:.0f} % of the trivial endpoint "
          f"({trivial.rate:.0f} req/s, p99 {trivial.quantile(0.99):.0f} ms)")


if __name__ == "__main__":
    main()
