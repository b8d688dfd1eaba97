"""Print how the demo's mapping quad ranks on its single-point missions and on its full flight profile.

SYNTHETIC DEMO DATA in, engine figures out (seed_data/README.md, "Flight profile"): the demo is loaded into a
throwaway SQLite file as ``liftmatch load-demo`` does, and the engine ranks the Q4 missions — the hover survey
(lowest hover power), the 12 m/s transit (lowest forward-flight power) and the full profile (least energy over
take-off, climb, transit, survey legs, return, descent and landing, with its reserve). Never a check value.
Run: python seed_data/profile_table.py
"""

from __future__ import annotations

from sqlalchemy import select

from server.models import PART_MODELS, Mission
from server.selection import rank
from server.services import seed
from server.services.ranking_inputs import engine_inputs, snapshot

MISSIONS = [("Q4 mapping survey", "cruise_power"), ("Q4 mapping transit, 12 m/s", "cruise_power"),
            ("Q4 mapping flight, full profile", "profile_energy")]
TOP = 5


def main() -> None:
    with seed.throwaway_demo() as factory, factory() as session:
        names = {kind: {p.id: p.part_number for p in session.scalars(select(model))}
                 for kind, model in PART_MODELS.items()}
        winners = {}
        feasible: dict[str, list[tuple[object, ...]]] = {}
        for mission_name, objective in MISSIONS:
            mission = session.scalars(select(Mission).where(Mission.name == mission_name)).one()
            library, spec = engine_inputs(snapshot(session, team_id=mission.team_id, mission=mission))
            out = rank(library, spec, objective=objective, top_n=500)
            feasible[mission_name] = [(r.battery_id, r.packs_in_parallel, r.esc_id, r.motor_id, r.propeller_id)
                                      for r in out.top]
            rejected = {k: v for k, v in out.rejected.items() if v}
            print(f"\n## {mission_name} (objective {objective}): {out.feasible} of {out.combinations} feasible")
            print("rejected:", ", ".join(f"{k} {v}" for k, v in sorted(rejected.items(), key=lambda kv: -kv[1])))
            print("| rank | pack × ESC × motor × prop | all-up g | cruise power W | hover-point endurance min "
                  "| profile energy Wh | SOC at landing | reserve flown |")
            print("|---|---|---|---|---|---|---|---|")
            for row in out.top[:TOP]:
                system = (f"{'2× ' if row.packs_in_parallel > 1 else ''}{names['batteries'][row.battery_id]} × "
                          f"{names['escs'][row.esc_id]} × {names['motors'][row.motor_id]} × "
                          f"{names['propellers'][row.propeller_id]}")
                profile = row.profile
                energy = f"{profile['total_energy_wh']:.1f}" if profile else "—"
                landing = next((s for s in reversed(profile["segments"]) if not s["reserve"]), None) if profile \
                    else None
                soc = f"{landing['end_state_of_charge']:.2f}" if landing else "—"
                reserve = "yes" if profile and profile["completed"] else ("—" if not profile else "no")
                print(f"| {row.rank} | {system} | {row.all_up_mass_g:.0f} | {row.cruise['electrical_power_w']:.1f} "
                      f"| {row.endurance_min:.1f} | {energy} | {soc} | {reserve} |")
                if row.rank == 1:
                    winners[mission_name] = system
        print("\nwinners:", "; ".join(f"{m}: {w}" for m, w in winners.items()))
        hover, profile = feasible[MISSIONS[0][0]], feasible[MISSIONS[2][0]]
        print(f"hover survey: {len(hover)} feasible, of which {sum(k in profile for k in hover)} fly the profile "
              f"with its reserve; of its top {TOP}, {sum(k in profile for k in hover[:TOP])} do; the profile's top "
              f"{TOP} hold {sum(k in hover[:TOP] for k in profile[:TOP])} of the hover survey's top {TOP}")


if __name__ == "__main__":
    main()
