"""``liftmatch explain``: why one power system passes or fails each of a mission's limits (as the ranking sees it)."""

from __future__ import annotations

import argparse
import json
import sys

from server.cli._common import AddCommand, CliError, session_factory
from server.config import Settings
from server.db import transaction


def _fmt(value: object) -> str:
    if value is None:
        return "-"
    if isinstance(value, list):
        return "–".join(f"{v:.4g}" for v in value)
    return f"{value:.4g}" if isinstance(value, float) else str(value)


def cmd_explain(args: argparse.Namespace, settings: Settings) -> int:
    """Every check of the ranking, in its order, for one candidate; exit 0 whether it passes or not."""
    from server.models import Mission, Ranking
    from server.schemas.rankings import Explanation
    from server.services import explain

    with transaction(session_factory(settings)) as session:
        owner = session.get(Ranking, args.ranking) if args.ranking else session.get(Mission, args.mission)
        if owner is None:
            raise CliError(f"no {'ranking' if args.ranking else 'mission'} with id {args.ranking or args.mission}")
        doc = explain.explain(session, team_id=owner.team_id, mission_id=args.mission, ranking_id=args.ranking,
                              battery_id=args.battery, esc_id=args.esc, motor_id=args.motor,
                              propeller_id=args.propeller, packs_in_parallel=args.packs)
    doc = Explanation.model_validate(doc).model_dump(mode="json")
    if args.json:
        json.dump(doc, sys.stdout, indent=2)
        sys.stdout.write("\n")
        return 0
    verdict = "feasible" if doc["feasible"] else f"rejected: {doc['first_failed']}"
    print(f"mission {doc['mission_id']}: pack {doc['battery_id']} x{doc['packs_in_parallel']}, ESC {doc['esc_id']}, "
          f"motor {doc['motor_id']}, propeller {doc['propeller_id']} -> {verdict}")
    for c in doc["checks"]:
        mark = {True: "ok  ", False: "FAIL", None: "  - "}[c["passed"]]
        print(f"  {mark} {c['reason']:<24} {_fmt(c['value']):>10} vs {_fmt(c['limit']):<12} {c['unit']:<5} "
              f"{c['detail'] or c['text']}")
    for note in doc["notes"]:
        print(f"  note: {note}")
    return 0


def register(add: AddCommand) -> None:
    """Add this module's commands to the parser."""
    p = add("explain", cmd_explain, "why one power system passes or fails each of a mission's limits")
    where = p.add_mutually_exclusive_group(required=True)
    where.add_argument("--mission", type=int, help="mission id (the parts as they are now)")
    where.add_argument("--ranking", type=int, help="ranking id (its library as it ran)")
    p.add_argument("--battery", type=int, required=True, help="battery pack id")
    p.add_argument("--esc", type=int, required=True)
    p.add_argument("--motor", type=int, required=True)
    p.add_argument("--propeller", type=int, required=True)
    p.add_argument("--packs", type=int, default=1, help="packs in parallel (default 1)")
    p.add_argument("--json", action="store_true", help="print the API's explanation document")
