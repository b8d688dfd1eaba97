"""``liftmatch import-bench`` and ``liftmatch calibrate``: bench runs and the calibrations fitted from them."""

from __future__ import annotations

import argparse
import sys

from pydantic import ValidationError

from server.cli._common import AddCommand, CliError, session_factory
from server.config import Settings
from server.db import transaction


def cmd_import_bench(args: argparse.Namespace, settings: Settings) -> int:
    """Upload a bench-run CSV for the team that owns the motor; calibrates at once."""
    import json

    from server.models import Motor
    from server.schemas.bench_runs import BenchRunMeta
    from server.services import bench_runs

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
        "thrust_sign": args.thrust_sign,
        "notes": args.notes or "",
        "name": args.name or "",
    }
    try:
        meta = BenchRunMeta.model_validate({k: v for k, v in data.items() if v is not None})
    except ValidationError as exc:
        from server.services._validation import field_errors

        raise CliError("; ".join(f"{e.field}: {e.message}" for e in field_errors(exc))) from None
    with transaction(session_factory(settings)) as session:
        motor = session.get(Motor, args.motor)
        if motor is None:
            raise CliError(f"no motor with id {args.motor}")
        run, calibration = bench_runs.import_run(
            session, team_id=motor.team_id, user_id=None, meta=meta, raw=raw, filename=args.file.rsplit("/", 1)[-1]
        )
        out = {"run": bench_runs.run_summary(run), "calibration": calibration}
    json.dump(out, sys.stdout, indent=2, default=str)
    sys.stdout.write("\n")
    return 0


def cmd_calibrate(args: argparse.Namespace, settings: Settings) -> int:
    """Re-fit a part from every bench run that shares its ESC pool."""
    import json

    from server.models import PART_MODELS
    from server.services import calibrations

    kind, _, ident = args.part.rpartition(":")
    kind = kind or args.kind
    if kind not in ("escs", "motors", "propellers") or not ident.isdigit():
        raise CliError("give the part as KIND:ID (escs, motors or propellers), e.g. motors:12, or use --kind")
    with transaction(session_factory(settings)) as session:
        part = session.get(PART_MODELS[kind], int(ident))
        if part is None:
            raise CliError(f"no {kind[:-1]} with id {ident}")
        result = calibrations.calibrate_part(session, team_id=part.team_id, kind=kind, part_id=part.id)
    json.dump(result, sys.stdout, indent=2, default=str)
    sys.stdout.write("\n")
    return 0


def register(add: AddCommand) -> None:
    """Add this module's commands to the parser."""
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
    p.add_argument("--thrust-sign", type=int, choices=[1, -1], default=1,
                   help="-1 flips the thrust column (load cell mounted or wired the other way round)")
    p.add_argument("--name")
    p.add_argument("--notes")
    p = add("calibrate", cmd_calibrate, "re-fit a part (KIND:ID, e.g. motors:12) from the team's bench runs")
    p.add_argument("part")
    p.add_argument("--kind", choices=["escs", "motors", "propellers"], default="")
