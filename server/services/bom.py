"""Bills of materials: one implementation for a shortlist's chosen candidates and for a fleet plan.

Per airframe a power system needs ``packs_in_parallel`` packs and one ESC, motor and propeller per rotor.
Propellers are split by rotation: a multirotor's rotors alternate direction, so half are CW and half CCW; with
an odd rotor count (a single puller, a tricopter) the unpaired rotor is listed CCW — check it against your motor
mount. Spares are ``ceil(quantity × spares_percent / 100)`` per line; ``order_quantity`` = quantity + spares and
``total_cost`` = unit cost × order_quantity.
"""

from __future__ import annotations

import io
import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import Any

from sqlalchemy.orm import Session

from server.csv_cells import csv_writer
from server.errors import FieldError, InvalidInput
from server.models import Mission, PartColumns
from server.services import fleet, shortlists
from server.services import parts as parts_service

KINDS = ("batteries", "escs", "motors", "propellers")
KIND_SINGULAR = {"batteries": "battery", "escs": "esc", "motors": "motor", "propellers": "propeller"}


@dataclass(frozen=True)
class SystemUse:
    """One power system flown on ``airframes`` airframes of ``rotor_count`` rotors; ``label`` names the use."""

    label: str
    battery_id: int
    esc_id: int
    motor_id: int
    propeller_id: int
    packs_in_parallel: int
    rotor_count: int
    airframes: int

    def part_id(self, kind: str) -> int:
        return int(getattr(self, f"{KIND_SINGULAR[kind]}_id"))


@dataclass
class BomLine:
    kind: str
    part: PartColumns
    rotation: str
    quantity_per_airframe: int
    airframes: int
    quantity: int
    uses: list[str] = field(default_factory=list)

    def spares(self, spares_percent: float) -> int:
        return math.ceil(self.quantity * spares_percent / 100 - 1e-9) if spares_percent > 0 else 0

    def cells(self, spares_percent: float) -> dict[str, Any]:
        spares = self.spares(spares_percent)
        order = self.quantity + spares
        cost = self.part.unit_cost
        return {
            "kind": self.kind,
            "name": self.part.name,
            "maker": self.part.maker,
            "part_number": self.part.part_number,
            "part_id": self.part.id,
            "rotation": self.rotation,
            "quantity_per_airframe": self.quantity_per_airframe,
            "airframes": self.airframes,
            "quantity": self.quantity,
            "spares": spares,
            "order_quantity": order,
            "unit_cost": "" if cost is None else cost,
            "currency": self.part.currency,
            "total_cost": "" if cost is None else round(cost * order, 2),
            "missions": "; ".join(dict.fromkeys(self.uses)),
        }


def rotation_split(rotors: int) -> list[tuple[str, int]]:
    """Propellers per airframe by rotation: (CW, ⌊n/2⌋) and (CCW, ⌈n/2⌉), zero counts left out."""
    return [(name, count) for name, count in (("CW", rotors // 2), ("CCW", rotors - rotors // 2)) if count]


def per_airframe(use: SystemUse) -> list[tuple[str, str, int]]:
    """(kind, rotation, quantity per airframe) for one system; rotation is empty except for propellers."""
    out = [("batteries", "", use.packs_in_parallel), ("escs", "", use.rotor_count), ("motors", "", use.rotor_count)]
    out += [("propellers", rotation, count) for rotation, count in rotation_split(use.rotor_count)]
    return out


def lines(session: Session, team_id: int, uses: Sequence[SystemUse], *, merge: bool) -> list[tuple[str, BomLine]]:
    """BOM lines as (group, line). ``merge=False``: one group per use, in order (a shortlist's entries);
    ``merge=True``: one line per part and rotation over every use (a fleet), in kind order."""
    ids: dict[str, set[int]] = {kind: set() for kind in KINDS}
    for use in uses:
        for kind in KINDS:
            ids[kind].add(use.part_id(kind))
    parts = parts_service.by_ids(session, team_id=team_id, ids=ids)
    out: dict[tuple[str, str, int, str], BomLine] = {}
    for use in uses:
        group = "" if merge else use.label
        for kind, rotation, count in per_airframe(use):
            part = parts[kind].get(use.part_id(kind))
            if part is None:  # deleted since (only a fleet plan can outlive its parts' references)
                continue
            key = (group, kind, part.id, rotation)
            line = out.get(key)
            if line is None:
                line = out[key] = BomLine(kind, part, rotation, count, use.airframes, 0)
            elif line.quantity_per_airframe != count or line.airframes != use.airframes:
                line.quantity_per_airframe, line.airframes = 0, 0  # differs between uses: only the total counts
            line.quantity += count * use.airframes
            line.uses.append(use.label)
    ordered = sorted(out.items(), key=lambda kv: (KINDS.index(kv[0][1]), kv[0][2], kv[0][3])) if merge else list(
        out.items())
    return [(key[0], line) for key, line in ordered]


def write_csv(columns: Iterable[str], rows: Iterable[dict[str, Any]]) -> str:
    """The file, through the app's one CSV writer (text that would start a spreadsheet formula is neutralised)."""
    names = list(columns)
    out = io.StringIO()
    writer = csv_writer(out)
    writer.writerow(names)
    writer.writerows([row.get(name, "") for name in names] for row in rows)
    return out.getvalue()


SHORTLIST_COLUMNS = ["entry", "kind", "name", "maker", "part_number", "quantity_per_airframe", "airframes", "quantity",
                     "unit_cost", "currency", "total_cost", "rotation", "spares", "order_quantity", "entry_id",
                     "part_id"]
FLEET_COLUMNS = ["kind", "name", "maker", "part_number", "quantity", "unit_cost", "currency", "total_cost", "missions",
                 "rotation", "spares", "order_quantity", "part_id"]


def shortlist_csv(session: Session, *, team_id: int, shortlist_id: int, airframes: int,
                  entries: Sequence[int] | None = None, spares_percent: float = 0.0) -> str:
    """The chosen entries (all when ``entries`` is None) for ``airframes`` airframes, one group per entry."""
    shortlist = shortlists.get(session, team_id=team_id, shortlist_id=shortlist_id)
    chosen = list(shortlist.entries)
    if entries is not None:
        known = {e.id for e in chosen}
        unknown = [str(i) for i in entries if i not in known]
        if unknown:
            raise InvalidInput("Unknown entries", [FieldError(
                "entries", f"not entries of this shortlist: {', '.join(unknown)} (its entries: "
                f"{', '.join(str(e.id) for e in chosen) or 'none'})")])
        chosen = [e for e in chosen if e.id in set(entries)]
    mission = session.get(Mission, shortlist.mission_id)
    assert mission is not None
    rotors = mission.airframe.rotor_count
    uses = [SystemUse(str(e.id), e.battery_id, e.esc_id, e.motor_id, e.propeller_id, e.packs_in_parallel, rotors,
                      airframes) for e in chosen]
    position = {str(e.id): e.position + 1 for e in chosen}
    rows = [line.cells(spares_percent) | {"entry": position[group], "entry_id": int(group)}
            for group, line in lines(session, team_id, uses, merge=False)]
    return write_csv(SHORTLIST_COLUMNS, rows)


def fleet_csv(session: Session, *, team_id: int, plan_id: int, spares_percent: float = 0.0) -> str:
    """Every part number the fleet needs: quantities over each mission's airframes, one line per part and rotation."""
    plan = fleet.get(session, team_id=team_id, plan_id=plan_id)
    if plan.status != "done" or not plan.result or not plan.result.get("assignments"):
        raise InvalidInput("No plan yet", [FieldError("status", f"the plan is {plan.status} without an assignment")])
    snaps = {m["mission"]["id"]: m for m in plan.inputs["missions"]}
    uses = []
    for a in plan.result["assignments"]:
        snap = snaps[a["mission_id"]]
        uses.append(SystemUse(snap["mission"]["name"], a["battery_id"], a["esc_id"], a["motor_id"], a["propeller_id"],
                              a["packs_in_parallel"], snap["airframe"]["rotor_count"], snap["airframes"]))
    rows = [line.cells(spares_percent) for _, line in lines(session, team_id, uses, merge=True)]
    return write_csv(FLEET_COLUMNS, rows)
