"""Print the engine's figures for the demo's intended and deliberately failing combinations (seed_data/README.md).

SYNTHETIC DEMO DATA in, engine figures out: the demo is loaded into a throwaway SQLite file (with its synthetic
bench runs and their calibrations, as ``liftmatch load-demo`` does) and every combination listed below is evaluated
with the same service the shortlist compare page uses. Never a check value.
Run: python seed_data/scenario_table.py
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session, sessionmaker

from server.db import transaction
from server.models import PART_MODELS, Mission
from server.services import candidate, explain, rankings, seed

INTENDED = [
    ("Q4 mapping survey", "NS-B4S-5200", "NS-E30", "NS-M3508-460", "NS-P13x4.4", 1),
    ("Q4 mapping survey", "NS-B6S-5000", "NS-E30", "NS-M4010-370", "NS-P13x4.4", 1),
    ("Q4 mapping survey, hot and high", "NS-B4S-5200", "NS-E30", "NS-M3508-580", "NS-P13x4.4", 1),
    ("Q4 mapping survey, hot and high", "NS-B6S-5000", "NS-E30", "NS-M4010-370", "NS-P13x4.4", 1),
    ("Q4 mapping transit, 12 m/s", "NS-B4S-5200", "NS-E30", "NS-M3508-460", "NS-P13x4.4", 1),
    ("Q4 mapping transit, 12 m/s", "NS-B6S-5000", "NS-E30", "NS-M4010-370", "NS-P13x4.4", 1),
    ("H6 structure inspection", "NS-B6S-16000", "NS-E45", "NS-M6010-190", "NS-P22x7.2", 1),
    ("H6 structure inspection", "NS-B12S-12000", "NS-E60", "NS-M6010-130", "NS-P20x6.5", 1),
    ("V1 corridor cruise", "NS-B6S-10000", "NS-E80", "NS-M4120-420", "NS-PF13x8", 1),
    ("V1 corridor cruise", "NS-LI6S4P-20000", "NS-E60", "NS-M4120-420", "NS-PF12x8", 1),
]
FAILING = [
    ("Q4 mapping survey", "NS-B4S-5200", "NS-E45", "NS-M2814-700", "NS-P11x4.5", 1),
    ("Q4 mapping survey", "NS-B4S-5200", "NS-E45", "NS-M2212-920", "NS-P10x4.5", 1),
    ("Q4 mapping survey", "NS-B4S-5200", "NS-E45", "NS-M2814-880", "NS-P12x4.5", 1),
    ("Q4 mapping survey", "NS-B4S-5200", "NS-E20", "NS-M2814-880", "NS-P10x4.5", 1),
    ("Q4 mapping survey", "NS-B6S-5000", "NS-E45", "NS-M2814-700", "NS-P11x4.5", 1),
    ("Q4 mapping survey", "NS-B3S-2200", "NS-E20", "NS-M2212-1400", "NS-P10x4.5", 1),
    ("Q4 mapping survey, hot and high", "NS-B4S-5200", "NS-E30", "NS-M3508-460", "NS-P13x4.4", 1),
    ("H6 structure inspection", "NS-LI6S4P-20000", "NS-E45", "NS-M6010-190", "NS-P22x7.2", 1),
    ("H6 structure inspection", "NS-B12S-22000", "NS-E60", "NS-M6010-130", "NS-P20x6.5", 1),
    ("H6 structure inspection", "NS-B12S-12000", "NS-E60", "NS-M6010-190", "NS-P18x6.1", 1),
    ("V1 corridor cruise", "NS-B6S-10000", "NS-E60", "NS-M4120-420", "NS-PF13x8", 1),
    ("V1 corridor cruise", "NS-B6S-10000", "NS-E60", "NS-M4120-500", "NS-PF15x10", 1),
    ("V1 corridor cruise", "NS-B4S-5200", "NS-E45", "NS-M4120-500", "NS-PF15x10", 2),
    ("V1 corridor cruise", "NS-B6S-10000", "NS-E45", "NS-M4010-370", "NS-PF15x10", 1),
]
HEADER = ("| mission | packs × pack × ESC × motor × prop | all-up mass (g) | T per rotor (N) | rpm | duty | "
          "electrical power (W) | g/W | endurance (min) | T/W at d = 1 | I_motor at d = 1 (A) | "
          "P at d = 1 per motor (W) | pack current at d = 1 (A) | ranking (cruise power) | failed checks |")
Combo = tuple[str, str, str, str, str, int]


TOP = 10
"""Rows per mission in the 'who leads' table (tested or untested ESC, bands, indistinguishable from rank 1)."""


def _ranks(factory: sessionmaker[Session], team_id: int,
           mission_id: int) -> tuple[dict[tuple[int, ...], int], int, list[dict[str, Any]]]:
    """Every feasible combination of a mission with its rank (lowest cruise power first), their number and the top
    rows."""
    with transaction(factory) as session:
        ranking_id = rankings.start(session, team_id=team_id, user_id=None, mission_id=mission_id,
                                    objective="cruise_power", top_n=500).id
    rankings.run(factory, ranking_id)
    with factory() as session:
        rows, total = rankings.results(session, team_id=team_id, ranking_id=ranking_id, page_size=500)
    return ({(r["battery_id"], r["esc_id"], r["motor_id"], r["propeller_id"], r["packs_in_parallel"]): r["rank"]
             for r in rows}, total, rows[:TOP])


def _leaders(mission_name: str, rows: list[dict[str, Any]], names: dict[str, dict[int, str]]) -> list[str]:
    """The first rows of a mission's ranking: which ESC (bench-tested or resting on the k_pwm prior), the cruise
    power and its 80 % band, and whether the data can tell the row from rank 1."""
    out = []
    for r in rows:
        band = r["cruise"].get("electrical_power_w_band") or [float("nan")] * 2
        tested = "prior" if "k_pwm" in (r.get("assumed") or {}).get("esc", []) else "bench run"
        out.append(f"| {mission_name} | {r['rank']} | {r['packs_in_parallel']} × {names['batteries'][r['battery_id']]} "
                   f"× {names['escs'][r['esc_id']]} × {names['motors'][r['motor_id']]} × "
                   f"{names['propellers'][r['propeller_id']]} | {tested} | {r['cruise']['electrical_power_w']:.0f} "
                   f"({band[0]:.0f}–{band[1]:.0f}) | {'yes' if r.get('indistinguishable_from_best') else 'no'} |")
    return out


def _row(session: Session, team_id: int, missions: dict[str, Mission], ids: dict[str, dict[str, int]],
         ranks: dict[str, tuple[dict[tuple[int, ...], int], int]], combo: Combo) -> str:  # noqa: PLR0913
    mission_name, pack, esc, motor, prop, packs = combo
    mission = missions[mission_name]
    key = candidate.CandidateIds(ids["batteries"][pack], ids["escs"][esc], ids["motors"][motor],
                                 ids["propellers"][prop], packs)
    m = candidate.evaluate(session, team_id=team_id, mission=mission, ids=key)
    ranked, feasible = ranks[mission_name]
    rank = ranked.get((key.battery_id, key.esc_id, key.motor_id, key.propeller_id, key.packs_in_parallel))
    verdict = explain.explain(session, team_id=team_id, mission_id=mission.id, battery_id=key.battery_id,
                              esc_id=key.esc_id, motor_id=key.motor_id, propeller_id=key.propeller_id,
                              packs_in_parallel=packs)
    failed = ", ".join(c["reason"] for c in verdict["checks"] if c["passed"] is False) or "none"
    cruise, full = m["cruise"], m["full_throttle"]
    rotors = mission.airframe.rotor_count

    def num(value: float | None, digits: int = 0) -> str:
        return "—" if value is None else f"{value:,.{digits}f}".replace(",", " ")

    return (f"| {mission_name} | {packs} × {pack} × {esc} × {motor} × {prop} | {num(m['all_up_mass_g'])} | "
            f"{num(m['thrust_required_n'], 2)} | {num(cruise['rpm'])} | {num(cruise['duty'], 2)} | "
            f"{num(cruise['electrical_power_w'])} | {num(cruise['specific_thrust_g_per_w'], 1)} | "
            f"{num(m['endurance_min'], 1)} | {num(full['thrust_to_weight'], 2)} | {num(full['motor_current_a'], 1)} | "
            f"{num(None if full['electrical_power_w'] is None else full['electrical_power_w'] / rotors)} | "
            f"{num(full['bus_current_a'], 1)} | {'rejected' if rank is None else f'{rank} of {feasible}'} | {failed} |")


def main() -> None:
    with seed.throwaway_demo() as factory:
        with factory() as session:
            missions = {m.name: m for m in session.scalars(select(Mission))}
            team_id = next(iter(missions.values())).team_id
            ids = {kind: {p.part_number: p.id for p in session.scalars(select(model))}
                   for kind, model in PART_MODELS.items()}
            mission_ids = {name: m.id for name, m in missions.items()}
        ranked = {name: _ranks(factory, team_id, mission_id) for name, mission_id in mission_ids.items()}
        ranks = {name: (r[0], r[1]) for name, r in ranked.items()}
        names = {kind: {i: n for n, i in by_number.items()} for kind, by_number in ids.items()}
        with factory() as session:
            missions = {m.name: m for m in session.scalars(select(Mission))}
            for title, combos in (("Intended good combinations", INTENDED),
                                  ("Combinations that deliberately fail a limit", FAILING)):
                print(f"\n**{title}**\n\n{HEADER}\n|{'---|' * 15}")
                for combo in combos:
                    print(_row(session, team_id, missions, ids, ranks, combo))
        print(f"\n**Who leads each ranking (first {TOP} rows)**\n\n| mission | rank | packs × pack × ESC × motor × "
              "prop | ESC's k_pwm | cruise power (W) and 80 % band | indistinguishable from rank 1 |\n"
              "|---|---|---|---|---|---|")
        for name, (_, _, top) in ranked.items():
            print("\n".join(_leaders(name, top, names)))


if __name__ == "__main__":
    main()
