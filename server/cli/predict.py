"""``liftmatch predict``: JSON request in, JSON out (the API's predict service)."""

from __future__ import annotations

import argparse
import sys

from pydantic import ValidationError

from server.cli._common import AddCommand, CliError, session_factory
from server.config import Settings
from server.db import transaction
from server.errors import DomainError


def cmd_predict(args: argparse.Namespace, settings: Settings) -> int:
    """Predict from a JSON request (file or stdin); parts by id need --team. Invalid input exits 2."""
    import json

    from server.schemas.predict import PredictRequest, PredictResponse
    from server.services import predict as predict_service
    from server.services import teams
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
    with transaction(session_factory(settings)) as session:
        team_id = teams.get_team_by_name(session, name=args.team).id if args.team else None
        try:
            result = predict_service.predict(session, team_id, request)
        except DomainError as exc:
            print(f"liftmatch: invalid input: {exc}", file=sys.stderr)
            return 2
    # the API's response document, field for field
    json.dump(PredictResponse.model_validate(result).model_dump(mode="json"), sys.stdout, indent=2)
    sys.stdout.write("\n")
    return 0


def register(add: AddCommand) -> None:
    """Add this module's commands to the parser."""
    p = add("predict", cmd_predict, "operating points of one power system: JSON request in, JSON out")
    p.add_argument("file", nargs="?", default="-", help="request JSON file, or - for stdin (default)")
    p.add_argument("--team", help="team whose saved parts ids refer to")
