"""The ``liftmatch`` command. Exit codes: 0 ok, 2 usage error, 1 failure (one line on stderr)."""

from __future__ import annotations

import argparse
import getpass
import os
import sys
from collections.abc import Callable, Sequence

from pydantic import ValidationError

from server.config import Settings, get_settings
from server.db import make_engine, make_sessionmaker, transaction
from server.errors import DomainError

Handler = Callable[[argparse.Namespace, Settings], int]


class CliError(Exception):
    """A failure to report in one line."""


def _sessionmaker(settings: Settings):  # type: ignore[no-untyped-def]
    return make_sessionmaker(make_engine(settings.database_url))


def cmd_migrate(args: argparse.Namespace, settings: Settings) -> int:
    from server import migrate

    migrate.upgrade(settings.database_url, args.revision)
    print(f"database at revision {args.revision}", file=sys.stderr)
    return 0


def cmd_create_team(args: argparse.Namespace, settings: Settings) -> int:
    from server.services import accounts

    with transaction(_sessionmaker(settings)) as session:
        team = accounts.create_team(session, name=args.name)
        print(team.id)
    return 0


def _read_password(args: argparse.Namespace) -> str:
    if args.password_stdin:
        return sys.stdin.readline().rstrip("\n")
    if not sys.stdin.isatty():
        raise CliError("no terminal to prompt for a password; use --password-stdin")
    first = getpass.getpass("Password: ")
    if first != getpass.getpass("Repeat password: "):
        raise CliError("the passwords differ")
    return first


def cmd_create_user(args: argparse.Namespace, settings: Settings) -> int:
    from server.services import accounts

    password = _read_password(args)
    with transaction(_sessionmaker(settings)) as session:
        team = accounts.get_team_by_name(session, name=args.team)
        user = accounts.create_user(
            session,
            settings=settings,
            email=args.email,
            password=password,
            team=team,
            role=args.role,
            display_name=args.name or "",
        )
        print(user.id)
    return 0


def cmd_create_api_key(args: argparse.Namespace, settings: Settings) -> int:
    from server.services import accounts

    with transaction(_sessionmaker(settings)) as session:
        team = accounts.get_team_by_name(session, name=args.team)
        _, key = accounts.create_api_key(session, team_id=team.id, scope=args.scope, name=args.name or "")
    print(key)  # alone on stdout: scripts capture it
    return 0


def cmd_load_demo(args: argparse.Namespace, settings: Settings) -> int:
    from server.services import seed

    with transaction(_sessionmaker(settings)) as session:
        summary = seed.load_demo(session, settings=settings)
    print(summary, file=sys.stderr)
    return 0


def cmd_predict(args: argparse.Namespace, settings: Settings) -> int:
    """Predict from a JSON request (file or stdin); parts by id need --team. Invalid input exits 2."""
    import json

    from server.schemas.predict import PredictRequest
    from server.services import accounts
    from server.services import predict as predict_service
    from server.services._validation import field_errors

    try:
        if args.file == "-":
            text = sys.stdin.read()
        else:
            with open(args.file, encoding="utf-8") as fh:
                text = fh.read()
    except OSError as exc:
        raise CliError(f"cannot read {args.file}: {exc.strerror}") from None
    try:
        request = PredictRequest.model_validate(json.loads(text))
    except json.JSONDecodeError as exc:
        print(f"liftmatch: invalid input: not JSON ({exc.msg} at line {exc.lineno})", file=sys.stderr)
        return 2
    except ValidationError as exc:
        errors = "; ".join(f"{e.field}: {e.message}" for e in field_errors(exc))
        print(f"liftmatch: invalid input: {errors}", file=sys.stderr)
        return 2
    with transaction(_sessionmaker(settings)) as session:
        team_id = accounts.get_team_by_name(session, name=args.team).id if args.team else None
        try:
            result = predict_service.predict(session, team_id, request)
        except DomainError as exc:
            print(f"liftmatch: invalid input: {exc}", file=sys.stderr)
            return 2
    json.dump(result, sys.stdout, indent=2)
    sys.stdout.write("\n")
    return 0


def cmd_rank(args: argparse.Namespace, settings: Settings) -> int:
    """Rank every power system of the mission's team for that mission, in this process."""
    import json

    from server.models import Mission
    from server.services import rankings

    factory = _sessionmaker(settings)
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


def cmd_import_bench(args: argparse.Namespace, settings: Settings) -> int:
    """Upload a bench-run CSV for the team that owns the motor; calibrates at once."""
    import json

    from server.models import Motor
    from server.schemas.bench import BenchRunMeta
    from server.services import bench

    try:
        with open(args.file, "rb") as fh:
            raw = fh.read(2 * 1024 * 1024 + 1)
    except OSError as exc:
        raise CliError(f"cannot read {args.file}: {exc.strerror}") from None
    data = {
        "motor_id": args.motor,
        "propeller_id": args.propeller,
        "esc_id": args.esc,
        "pack_id": args.pack,
        "supply_voltage_v": args.supply_v,
        "altitude_m": args.altitude,
        "air_temperature_c": args.temperature,
        "notes": args.notes or "",
        "name": args.name or "",
    }
    try:
        meta = BenchRunMeta.model_validate({k: v for k, v in data.items() if v is not None})
    except ValidationError as exc:
        from server.services._validation import field_errors

        raise CliError("; ".join(f"{e.field}: {e.message}" for e in field_errors(exc))) from None
    with transaction(_sessionmaker(settings)) as session:
        motor = session.get(Motor, args.motor)
        if motor is None:
            raise CliError(f"no motor with id {args.motor}")
        run, calibration = bench.import_run(
            session, team_id=motor.team_id, user_id=None, meta=meta, raw=raw, filename=args.file.rsplit("/", 1)[-1]
        )
        out = {"run": bench.run_summary(run), "calibration": calibration}
    json.dump(out, sys.stdout, indent=2, default=str)
    sys.stdout.write("\n")
    return 0


def cmd_calibrate(args: argparse.Namespace, settings: Settings) -> int:
    """Re-fit a part from every bench run that shares its ESC pool."""
    import json

    from server.models import PART_MODELS
    from server.services import bench

    kind, _, ident = args.part.rpartition(":")
    kind = kind or args.kind
    if kind not in ("escs", "motors", "propellers") or not ident.isdigit():
        raise CliError("give the part as KIND:ID (escs, motors or propellers), e.g. motors:12, or use --kind")
    with transaction(_sessionmaker(settings)) as session:
        part = session.get(PART_MODELS[kind], int(ident))
        if part is None:
            raise CliError(f"no {kind[:-1]} with id {ident}")
        result = bench.calibrate_part(session, team_id=part.team_id, kind=kind, part_id=part.id)
    json.dump(result, sys.stdout, indent=2, default=str)
    sys.stdout.write("\n")
    return 0


def cmd_export(args: argparse.Namespace, settings: Settings) -> int:
    """Write the team's library (JSON) to a file or stdout."""
    import json

    from server.services import accounts, exchange

    with _sessionmaker(settings)() as session:
        team = accounts.get_team_by_name(session, name=args.team)
        doc = exchange.export(session, team_id=team.id, team_name=team.name)
    text = json.dumps(doc, indent=1, default=str)
    if args.file == "-":
        sys.stdout.write(text + "\n")
    else:
        with open(args.file, "w", encoding="utf-8") as fh:
            fh.write(text + "\n")
    return 0


def cmd_import(args: argparse.Namespace, settings: Settings) -> int:
    """Add a library file to a team (all or nothing)."""
    import json

    from server.services import accounts, exchange

    try:
        with open(args.file, encoding="utf-8") as fh:
            data = json.load(fh)
    except (OSError, json.JSONDecodeError) as exc:
        raise CliError(f"cannot read {args.file}: {exc}") from None
    with transaction(_sessionmaker(settings)) as session:
        team = accounts.get_team_by_name(session, name=args.team)
        counts = exchange.import_library(session, team_id=team.id, user_id=None, data=data)
    print(json.dumps(counts))
    return 0


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
    factory = _sessionmaker(settings)
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


def _serve(settings: Settings, host: str, port: int, reload: bool = False) -> int:
    import uvicorn

    uvicorn.run(
        "server.main:create_app", factory=True, host=host, port=port, reload=reload, log_level="info", workers=1
    )
    return 0


def _require_secret(settings: Settings) -> None:
    try:
        settings.check_secret()
    except ValueError as exc:
        raise CliError(str(exc)) from None


def cmd_serve(args: argparse.Namespace, settings: Settings) -> int:
    _require_secret(settings)
    print(f"liftmatch serving on http://{args.host}:{args.port}/", file=sys.stderr)
    return _serve(settings, args.host, args.port, args.reload)


def cmd_demo(args: argparse.Namespace, settings: Settings) -> int:
    from server import migrate
    from server.services import seed

    _require_secret(settings)
    migrate.upgrade(settings.database_url)
    with transaction(_sessionmaker(settings)) as session:
        summary = seed.load_demo(session, settings=settings, if_missing=True)
    print(summary, file=sys.stderr)
    print(
        f"\n  liftmatch demo: http://{args.host}:{args.port}/\n"
        f"  log in as {seed.DEMO_LOGIN[0]} / {seed.DEMO_LOGIN[1]}  (invented demo data)\n",
        file=sys.stderr,
    )
    return _serve(settings, args.host, args.port)


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="liftmatch", description=__doc__)
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    def add(name: str, handler: Handler, help_text: str) -> argparse.ArgumentParser:
        p = sub.add_parser(name, help=help_text, description=help_text)
        p.set_defaults(handler=handler)
        return p

    for name, handler, text in (
        ("serve", cmd_serve, "serve the web app and API"),
        ("demo", cmd_demo, "migrate, load the invented demo scenario and serve"),
    ):
        p = add(name, handler, text)
        p.add_argument("--host", default="127.0.0.1")
        p.add_argument("--port", type=int, default=8000)
        if name == "serve":
            p.add_argument("--reload", action="store_true", help="restart on code changes (development)")
    p = add("migrate", cmd_migrate, "bring the database schema up to date")
    p.add_argument("--revision", default="head")
    p = add("create-team", cmd_create_team, "create a team; prints its id")
    p.add_argument("name")
    p = add("create-user", cmd_create_user, "create a user in a team; prints the user id")
    p.add_argument("email")
    p.add_argument("--team", required=True)
    p.add_argument("--role", required=True, choices=["owner", "engineer", "viewer"])
    p.add_argument("--name", help="display name")
    p.add_argument("--password-stdin", action="store_true", help="read the password from the first stdin line")
    p = add("create-api-key", cmd_create_api_key, "create an API key; prints the key alone on stdout")
    p.add_argument("--team", required=True)
    p.add_argument("--scope", required=True, choices=["read", "write"])
    p.add_argument("--name", help="what the key is for")
    p = add("predict", cmd_predict, "operating points of one power system: JSON request in, JSON out")
    p.add_argument("file", nargs="?", default="-", help="request JSON file, or - for stdin (default)")
    p.add_argument("--team", help="team whose saved parts ids refer to")
    p = add("rank", cmd_rank, "rank every power system of the team's library for a mission")
    p.add_argument("--mission", type=int, required=True, help="mission id")
    p.add_argument(
        "--objective", default="cruise_power", choices=["cruise_power", "endurance", "specific_thrust", "mass", "cost"]
    )
    p.add_argument("--top", type=int, default=50, help="candidates to refine and list (1-500)")
    p.add_argument("--json", action="store_true", help="print the status and results as JSON")
    p = add("import-bench", cmd_import_bench, "import a bench-run CSV and calibrate its parts")
    p.add_argument("file")
    p.add_argument("--motor", type=int, required=True)
    p.add_argument("--propeller", type=int, required=True)
    p.add_argument("--esc", type=int, required=True)
    supply = p.add_mutually_exclusive_group(required=True)
    supply.add_argument("--pack", type=int, help="battery pack id")
    supply.add_argument("--supply-v", type=float, help="bench supply voltage [V]")
    p.add_argument("--altitude", type=float, help="site altitude [m]")
    p.add_argument("--temperature", type=float, help="air temperature [°C]")
    p.add_argument("--name")
    p.add_argument("--notes")
    p = add("calibrate", cmd_calibrate, "re-fit a part (KIND:ID, e.g. motors:12) from the team's bench runs")
    p.add_argument("part")
    p.add_argument("--kind", choices=["escs", "motors", "propellers"], default="")
    p = add("export", cmd_export, "write a team's whole library as JSON")
    p.add_argument("--team", required=True)
    p.add_argument("file", nargs="?", default="-", help="output file, or - for stdout (default)")
    p = add("import", cmd_import, "add a library JSON file to a team (all or nothing)")
    p.add_argument("file")
    p.add_argument("--team", required=True)
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
    add("load-demo", cmd_load_demo, "load the invented demo scenario (Northfold Survey)")
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)  # exits 2 on a usage error
    if args.command == "demo":
        os.environ.setdefault("LIFTMATCH_DEMO", "1")
    try:
        get_settings.cache_clear()
        settings = get_settings()
        return int(args.handler(args, settings))
    except ValidationError as exc:
        first = exc.errors()[0]
        where = ".".join(str(p) for p in first["loc"])
        print(f"liftmatch: configuration {where}: {first['msg'].removeprefix('Value error, ')}", file=sys.stderr)
        return 1
    except (DomainError, CliError) as exc:
        print(f"liftmatch: {exc}", file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        return 130
    except BrokenPipeError:  # the reader went away (e.g. `| head`): stop quietly, as Python's docs advise
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return 0


if __name__ == "__main__":
    sys.exit(main())
