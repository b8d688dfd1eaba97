"""ORM models; importing this package registers every table on ``Base.metadata``."""

from server.models.bench_runs import BenchRun, BenchSample
from server.models.calibrations import Calibration
from server.models.fleet import FleetPlan
from server.models.missions import Airframe, Mission
from server.models.parts import PART_MODELS, Battery, Esc, Motor, PartColumns, PartRevision, Propeller
from server.models.rankings import Ranking, RankingResult, RankingShard
from server.models.refits import Refit
from server.models.shortlists import Shortlist, ShortlistEntry
from server.models.teams import ApiKey, LoginFailure, LoginSession, Membership, Team, User

__all__ = [
    "PART_MODELS",
    "Airframe",
    "ApiKey",
    "Battery",
    "BenchRun",
    "BenchSample",
    "Calibration",
    "Esc",
    "FleetPlan",
    "LoginFailure",
    "LoginSession",
    "Membership",
    "Mission",
    "Motor",
    "PartColumns",
    "PartRevision",
    "Propeller",
    "Ranking",
    "RankingResult",
    "RankingShard",
    "Refit",
    "Shortlist",
    "ShortlistEntry",
    "Team",
    "User",
]
