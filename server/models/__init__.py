"""ORM models; importing this package registers every table on ``Base.metadata``."""

from server.models.missions import Airframe, Mission
from server.models.parts import PART_MODELS, Battery, Esc, Motor, PartColumns, Propeller
from server.models.teams import ApiKey, Membership, Team, User

__all__ = [
    "PART_MODELS",
    "Airframe",
    "ApiKey",
    "Battery",
    "Esc",
    "Membership",
    "Mission",
    "Motor",
    "PartColumns",
    "Propeller",
    "Team",
    "User",
]
