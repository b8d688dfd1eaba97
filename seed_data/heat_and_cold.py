"""Print how heat and cold change the demo's quad ranking (seed_data/README.md, "Heat and cold").

SYNTHETIC DEMO DATA in, engine figures out: the demo is loaded into a throwaway SQLite file and the Q4 missions are
ranked by the engine from their snapshots, the 40 °C day also without temperature effects and without its burst, so
that each effect shows on its own. Never a check value.
Run: python seed_data/heat_and_cold.py
"""

from __future__ import annotations

from dataclasses import replace

from sqlalchemy import select

from server.models import PART_MODELS, Mission
from server.selection import rank
from server.services import seed
from server.services.ranking_inputs import engine_inputs, snapshot

SHOWN = ("below_thrust_to_weight", "winding_over_temperature", "cold_day_thrust_short", "cold_day_endurance_short")


def main() -> None:
    with seed.throwaway_demo() as factory, factory() as session:
        missions = {m.name: m for m in session.scalars(select(Mission))}
        names = {kind: {p.id: p.part_number for p in session.scalars(select(model))}
                 for kind, model in PART_MODELS.items()}
        snaps = {name: snapshot(session, team_id=m.team_id, mission=m) for name, m in missions.items()
                 if name.startswith("Q4 mapping survey") and "hot and high" not in name}
    cases = []
    for name, snap in snaps.items():
        library, mission = engine_inputs(snap)
        if mission.temperature_effects:
            cases.append((f"{name}, without temperature effects", library,
                          replace(mission, temperature_effects=False, burst_s=0.0)))
            cases.append((f"{name}, temperature effects, no burst", library, replace(mission, burst_s=0.0)))
        cases.append((name, library, mission))
    for label, library, mission in cases:
        out = rank(library, mission, top_n=3)
        counts = ", ".join(f"{k} {out.rejected[k]}" for k in SHOWN if out.rejected.get(k))
        print(f"\n{label}: {out.feasible} feasible{'; ' + counts if counts else ''}")
        for r in out.top:
            system = (f"{r.packs_in_parallel} × {names['batteries'][r.battery_id]} × {names['escs'][r.esc_id]} × "
                      f"{names['motors'][r.motor_id]} × {names['propellers'][r.propeller_id]}")
            heat = ""
            if "winding_temperature_c" in r.cruise:
                heat = (f", winding {r.cruise['winding_temperature_c']:.1f} °C at hover, "
                        f"{r.full_throttle['winding_temperature_c']:.1f} °C after the burst")
            print(f"  {r.rank}. {system}: {r.cruise['electrical_power_w']:.1f} W, "
                  f"T/W {r.full_throttle['thrust_to_weight']:.2f}, {r.endurance_min:.1f} min{heat}")


if __name__ == "__main__":
    main()
