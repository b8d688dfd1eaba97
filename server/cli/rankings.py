"""``liftmatch rank``: a ranking job run in this process, with a progress bar."""

from __future__ import annotations

import argparse
import sys

from server.cli._common import AddCommand, CliError, session_factory
from server.config import Settings
from server.db import transaction
from server.selection.result import OBJECTIVES


def cmd_rank(args: argparse.Namespace, settings: Settings) -> int:
    """Rank every power system of the mission's team for that mission, in this process."""
    import json

    from server.models import Mission
    from server.services import rankings

    factory = session_factory(settings)
    with transaction(factory) as session:
        mission = session.get(Mission, args.mission)
        if mission is None:
            raise CliError(f"no mission with id {args.mission}")
        row = rankings.start(
            session,
            team_id=mission.team_id,
            user_id=None,
            mission_id=mission.id,
            objective=args.objective,
            top_n=args.top,
        )
        ranking_id, team_id = row.id, mission.team_id
    bar = sys.stderr.isatty() and not args.json
    stop = _progress_bar(factory, ranking_id) if bar else None
    try:
        rankings.run(factory, ranking_id)
    finally:
        if stop:
            stop()
    with factory() as session:
        status = rankings.status(rankings.get(session, team_id=team_id, ranking_id=ranking_id))
        items, _ = rankings.results(session, team_id=team_id, ranking_id=ranking_id, page_size=args.top)
    if status["status"] != "done":
        raise CliError(f"ranking {ranking_id} {status['status']}: {status['error'] or ''}".strip())
    if args.json:
        json.dump({"ranking": status, "items": items}, sys.stdout, indent=2, default=str)
        sys.stdout.write("\n")
        return 0
    print(
        f"ranking {ranking_id}: {status['combinations']} combinations, {status['feasible']} feasible, "
        f"{status['elapsed_s']:.2f} s (engine {status['engine_version']})"
    )
    for reason, count in sorted(status["rejected"].items(), key=lambda kv: -kv[1]):
        print(f"  rejected {count:>8}  {reason.replace('_', ' ')}")
    print(
        f"{'rank':>4} {'pack':>5} {'ESC':>5} {'motor':>5} {'prop':>5} {'k':>2} {'mass g':>8} {'duty':>5} "
        f"{'cruise W':>9} {'g/W':>6} {'T/W':>5} {'min':>6}"
    )
    for r in items:
        print(
            f"{r['rank']:>4} {r['battery_id']:>5} {r['esc_id']:>5} {r['motor_id']:>5} {r['propeller_id']:>5} "
            f"{r['packs_in_parallel']:>2} {r['all_up_mass_g']:>8.0f} {r['cruise']['duty']:>5.2f} "
            f"{r['cruise']['electrical_power_w']:>9.1f} {r['cruise']['specific_thrust_g_per_w']:>6.2f} "
            f"{r['full_throttle']['thrust_to_weight']:>5.2f} {r['endurance_min']:>6.1f}"
        )
    return 0


def _progress_bar(factory, ranking_id: int):  # type: ignore[no-untyped-def]
    """Draw the job's stored progress on stderr from a background thread; returns a stop function."""
    import threading

    from server.models import Ranking

    done = threading.Event()

    def draw() -> None:
        while not done.wait(0.2):
            with factory() as session:
                row = session.get(Ranking, ranking_id)
                fraction = row.progress if row else 0.0
            filled = int(fraction * 30)
            sys.stderr.write(f"\r  [{'#' * filled}{'.' * (30 - filled)}] {fraction:4.0%}")
            sys.stderr.flush()
        sys.stderr.write("\r" + " " * 42 + "\r")

    thread = threading.Thread(target=draw, daemon=True)
    thread.start()

    def stop() -> None:
        done.set()
        thread.join()

    return stop


def register(add: AddCommand) -> None:
    """Add this module's commands to the parser."""
    p = add("rank", cmd_rank, "rank every power system of the team's library for a mission")
    p.add_argument("--mission", type=int, required=True, help="mission id")
    p.add_argument(
        "--objective", default="cruise_power", choices=OBJECTIVES
    )
    p.add_argument("--top", type=int, default=50, help="candidates to refine and list (1-500)")
    p.add_argument("--json", action="store_true", help="print the status and results as JSON")
