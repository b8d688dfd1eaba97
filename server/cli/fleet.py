"""``liftmatch fleet-plan``: the parts a fleet stocks so every mission still flies well."""

from __future__ import annotations

import argparse
import sys

from pydantic import ValidationError

from server.cli._common import AddCommand, CliError, session_factory
from server.config import Settings
from server.db import transaction


def cmd_fleet_plan(args: argparse.Namespace, settings: Settings) -> int:
    """Plan the parts a fleet stocks for several missions, in this process."""
    import json

    from server.models import Mission
    from server.schemas.fleet import FleetPlanCreate
    from server.services import fleet

    try:
        mission_ids = [int(x) for x in args.missions.split(",") if x.strip()]
        weights = [float(x) for x in args.weights.split(",")] if args.weights else [1.0] * len(mission_ids)
    except ValueError:
        raise CliError("--missions and --weights take comma-separated numbers") from None
    if len(weights) != len(mission_ids):
        raise CliError("give one weight per mission")
    limits = {kind: getattr(args, f"max_{kind}") for kind in ("batteries", "escs", "motors", "propellers")}
    try:
        data = FleetPlanCreate(
            name=args.name,
            metric=args.metric,
            one_battery=args.one_battery,
            stocking_cost=args.stocking_cost,
            candidates_per_mission=args.candidates,
            max_part_numbers=limits,  # type: ignore[arg-type]
            missions=[
                {"mission_id": m, "weight": w}  # type: ignore[misc]
                for m, w in zip(mission_ids, weights, strict=True)
            ],
        )
    except ValidationError as exc:
        from server.services._validation import field_errors

        raise CliError("; ".join(f"{e.field}: {e.message}" for e in field_errors(exc))) from None
    factory = session_factory(settings)
    with transaction(factory) as session:
        first = session.get(Mission, mission_ids[0]) if mission_ids else None
        if first is None:
            raise CliError(f"no mission with id {mission_ids[0] if mission_ids else '?'}")
        team_id = first.team_id
        plan_id = fleet.start(session, team_id=team_id, user_id=None, data=data).id
    fleet.run(factory, plan_id)
    with factory() as session:
        doc = fleet.status(fleet.get(session, team_id=team_id, plan_id=plan_id))
    if args.json:
        json.dump(doc, sys.stdout, indent=2, default=str)
        sys.stdout.write("\n")
        return 0 if doc["status"] == "done" else 1
    if doc["status"] != "done":
        raise CliError(f"fleet plan {plan_id} {doc['status']}: {doc['error'] or ''}")
    result = doc["result"]
    if result["status"] == "infeasible":
        print(f"fleet plan {plan_id}: no shared plan exists. {result['infeasibility']['message']}")
        return 0
    names = result.get("mission_names", {})
    print(
        f"fleet plan {plan_id}: objective {result['objective']:.6g} ({doc['metric']}), "
        f"{result['part_numbers']} part numbers stocked, status {result['status']}"
    )
    for a in result["assignments"]:
        print(
            f"  {names.get(str(a['mission_id']), a['mission_id'])}: pack {a['battery_id']} x{a['packs_in_parallel']}, "
            f"ESC {a['esc_id']}, motor {a['motor_id']}, prop {a['propeller_id']}: {a['metric_value']:.4g} "
            f"(+{a['loss_vs_own_best']:.3g} vs its own best)"
        )
    for kind, ids in result["stocked"].items():
        print(f"  stock {kind}: {', '.join(str(i) for i in ids)}")
    print("  trade-off: " + ", ".join(f"{p['part_numbers']} parts -> {p['objective']:.4g}" for p in doc["tradeoff"]))
    return 0


def register(add: AddCommand) -> None:
    """Add this module's commands to the parser."""
    p = add("fleet-plan", cmd_fleet_plan, "choose the parts a fleet stocks so every mission still flies well")
    p.add_argument("--missions", required=True, help="comma-separated mission ids")
    p.add_argument("--weights", help="comma-separated weights (e.g. airframes x flight hours), one per mission")
    p.add_argument("--one-battery", action="store_true", help="the whole fleet uses one battery part number")
    p.add_argument("--metric", default="cruise_energy", choices=["cruise_energy", "endurance_margin"])
    p.add_argument("--stocking-cost", type=float, default=0.0, help="per stocked part number, in the metric's units")
    p.add_argument("--candidates", type=int, default=300, help="top K candidates of each mission")
    for kind in ("batteries", "escs", "motors", "propellers"):
        p.add_argument(f"--max-{kind}", type=int, default=None, help=f"at most this many {kind} part numbers")
    p.add_argument("--name", default="Fleet plan")
    p.add_argument("--json", action="store_true")
