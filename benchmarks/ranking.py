"""Benchmark: rank a generated library of >= 1 000 000 combinations end to end, and compare a scalar path.

A seeded, invented library (packs 3-6S, ESCs with and without loss data, motors across the 8-18 in class,
propellers with 6-16 point static tables; values in the typical ranges of docs/model-reference.md) is ranked for
a 4-rotor hover mission by :func:`server.selection.rank` (screen, rank, Pareto, refine the top 50). Wall time,
combinations per second and peak memory (max RSS above the baseline) are printed. A random sample of the
evaluated candidates then goes through the scalar brentq path of ``tests/physics/scalar_reference.py`` (cruise
point by thrust and the two full-throttle points, one candidate at a time) and its rate is extrapolated.

    python benchmarks/ranking.py [--combinations N] [--processes P] [--scalar-sample S] [--compare-screens]

Plain hover missions are screened by the compiled loop (server/selection/fused_screen.py); ``--compare-screens``
first times the numpy screen against it on the same chunks (the measurement behind adopting numba).

The last line is ``ranking: N combinations in S s (R combinations/s), scalar ratio X, peak memory M MB``.
"""

from __future__ import annotations

import argparse
import math
import resource
import sys
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from server.physics.battery import open_circuit_voltage_per_cell_v  # noqa: E402
from server.physics.propeller import PropellerTable  # noqa: E402
from server.selection import (  # noqa: E402
    EscLibrary,
    MissionSpec,
    MotorLibrary,
    PackLibrary,
    PartsLibrary,
    PropellerLibrary,
    fused_screen,  # noqa: E402
    rank,
)
from server.selection.constraints import screen  # noqa: E402
from server.selection.enumerate import batch_for, chunk_indices, chunks, plan  # noqa: E402
from server.selection.examples import ExampleKeys  # noqa: E402
from tests.physics import scalar_reference as ref  # noqa: E402

BASE = (20, 10, 70, 72)  # packs, ESCs, motors, propellers: 1 008 000 combinations


def make_library(combinations: int, seed: int = 7) -> PartsLibrary:
    rng = np.random.default_rng(seed)
    scale = math.sqrt(max(combinations, 1) / math.prod(BASE))
    n_p, n_e = BASE[0], BASE[1]
    n_m = max(1, math.ceil(BASE[2] * scale))
    n_q = max(1, math.ceil(combinations / (n_p * n_e * n_m)))
    cells = rng.integers(3, 7, n_p).astype(float)
    cap = rng.uniform(1.5, 8.0, n_p)
    packs = PackLibrary(ids=np.arange(n_p) + 1000, cells_series=cells, cells_parallel=np.ones(n_p), capacity_ah=cap,
                        cell_resistance_ohm=rng.uniform(0.003, 0.010, n_p), full_voltage_per_cell_v=np.full(n_p, 4.2),
                        max_continuous_c=rng.uniform(20.0, 60.0, n_p),
                        mass_kg=cells * 3.7 * cap / rng.uniform(140.0, 190.0, n_p), cost=rng.uniform(20, 120, n_p))
    unknown = rng.random(n_e) < 0.5  # half the ESCs have no loss data: physics defaults
    nan_or = lambda a: np.where(unknown, np.nan, a)  # noqa: E731
    escs = EscLibrary(ids=np.arange(n_e) + 2000, continuous_current_a=rng.uniform(20.0, 80.0, n_e),
                      min_cells=rng.integers(2, 4, n_e).astype(float), max_cells=rng.integers(4, 9, n_e).astype(float),
                      r_on_path_ohm=nan_or(rng.uniform(0.003, 0.015, n_e)),
                      switching_frequency_hz=nan_or(rng.choice([16e3, 24e3, 32e3, 48e3], n_e)),
                      switching_time_s=nan_or(rng.uniform(50e-9, 300e-9, n_e)),
                      dead_time_s=nan_or(rng.uniform(0.1e-6, 1e-6, n_e)),
                      diode_drop_v=nan_or(rng.uniform(0.7, 1.0, n_e)),
                      input_esr_ohm=nan_or(rng.uniform(0.005, 0.05, n_e)),
                      pwm_loss_coefficient=nan_or(rng.uniform(0.0, 0.01, n_e)),
                      mass_kg=rng.uniform(0.02, 0.08, n_e), cost=rng.uniform(15, 60, n_e))
    kv = rng.uniform(300.0, 1200.0, n_m)
    motors = MotorLibrary(ids=np.arange(n_m) + 3000, kv_rpm_per_v=kv, resistance_ohm=rng.uniform(0.03, 0.25, n_m),
                          no_load_current_a=rng.uniform(0.3, 1.2, n_m),
                          inductance_h=np.where(rng.random(n_m) < 0.3, np.nan, rng.uniform(15e-6, 80e-6, n_m)),
                          max_current_a=rng.uniform(15.0, 60.0, n_m),
                          max_cells=np.where(rng.random(n_m) < 0.3, np.inf, rng.integers(4, 9, n_m).astype(float)),
                          mass_kg=rng.uniform(0.04, 0.2, n_m), cost=rng.uniform(20, 90, n_m))
    rows = []
    for _ in range(n_q):
        k = int(rng.integers(6, 17))
        rpm = np.sort(rng.uniform(1500.0, 9000.0, k))
        ct0 = rng.uniform(0.09, 0.13)
        cp0 = math.sqrt(2.0 / math.pi) * ct0**1.5 / rng.uniform(0.5, 0.72)
        drift = np.linspace(0.0, 0.12, k)
        rows.append((rpm, ct0 * (1 + drift), cp0 * (1 + 0.4 * drift)))
    diameter_in = rng.uniform(8.0, 18.0, n_q)
    d = diameter_in * 0.0254
    props = PropellerLibrary(ids=np.arange(n_q) + 4000, diameter_m=d, diameter_in=diameter_in,
                             static=PropellerTable.from_rows(d, rows), forward=None,
                             mass_kg=0.002 * diameter_in, cost=rng.uniform(3, 30, n_q))
    return PartsLibrary(packs, escs, motors, props)


MISSION = MissionSpec(rotor_count=4, frame_mass_kg=1.2, payload_kg=0.5, max_prop_diameter_in=18.0,
                      max_packs_in_parallel=1, kind="hover", altitude_m=300.0, min_thrust_to_weight=2.0,
                      duty_min=0.40, duty_max=0.75, min_endurance_min=5.0)


def scalar_rate(library: PartsLibrary, mission: MissionSpec, sample: int, seed: int = 3) -> tuple[float, int]:
    """Candidates per second of the scalar brentq path on a random sample of evaluated candidates."""
    model = mission.propeller_model(library.propellers)
    blocks = plan(library, mission, model).blocks
    rng = np.random.default_rng(seed)
    pk, es, mo, pr = library.packs, library.escs, library.motors, library.propellers
    systems = []
    sizes = np.array([b.size for b in blocks], dtype=float)
    for _ in range(sample):
        b = blocks[int(rng.choice(len(blocks), p=sizes / sizes.sum()))]
        c, e, m, q = (int(rng.integers(0, n)) for n in b.shape)
        p, e, m, q = int(b.packs[c]), int(b.escs[e]), int(b.motors[m]), int(b.props[q])
        x = pr.static.axis_values[q]
        keep = ~np.isnan(x)
        mass = (mission.frame_mass_kg + mission.payload_kg + pk.mass_kg[p]
                + mission.rotor_count * (es.mass_kg[e] + mo.mass_kg[m] + pr.mass_kg[q]))
        cells = float(pk.cells_series[p])
        socs = (mission.cruise_state_of_charge, mission.low_state_of_charge, 1.0)
        base = {"kv_rpm_per_v": float(mo.kv_rpm_per_v[m]), "resistance_ohm": float(mo.resistance_ohm[m]),
                "no_load_current_a": float(mo.no_load_current_a[m]), "axis_values": tuple(x[keep]),
                "thrust_coefficients": tuple(pr.static.thrust_coefficient[q][keep]),
                "power_coefficients": tuple(pr.static.power_coefficient[q][keep]),
                "diameter_m": float(pr.diameter_m[q]),
                "pack_resistance_ohm": cells * float(pk.cell_resistance_ohm[p]), "rotor_count": 4.0,
                "density_kg_m3": mission.density_kg_m3, "inductance_h": float(mo.inductance_h[m]),
                "on_path_resistance_ohm": float(es.r_on_path_ohm[e]),
                "switching_frequency_hz": float(es.switching_frequency_hz[e]),
                "transition_time_s": float(es.switching_time_s[e]), "dead_time_s": float(es.dead_time_s[e]),
                "body_diode_drop_v": float(es.diode_drop_v[e]), "input_esr_ohm": float(es.input_esr_ohm[e]),
                "pwm_loss_coefficient": float(es.pwm_loss_coefficient[e])}
        voc = [cells * float(open_circuit_voltage_per_cell_v(s)) for s in socs]
        systems.append((base, voc, float(mass) * 9.80665 / 4.0))
    t0 = time.perf_counter()
    for base, voc, thrust in systems:
        try:
            ref.for_thrust(ref.ScalarSystem(open_circuit_voltage_v=voc[0], **base), thrust)
        except ValueError:
            pass  # brentq without a sign change: the request is unreachable, which also costs its time
        for v in voc[1:]:
            try:
                ref.at_duty(ref.ScalarSystem(open_circuit_voltage_v=v, **base), 1.0)
            except ValueError:
                pass
    elapsed = time.perf_counter() - t0
    return sample / elapsed, sample


def compare_screens(library: PartsLibrary, mission: MissionSpec) -> None:
    """The numpy screen and the compiled one on the same chunks (one process): rates, ratio, equal counts."""
    model = mission.propeller_model(library.propellers)
    the_plan = plan(library, mission, model)
    keys = ExampleKeys.of(library, mission)
    fused_screen.warm_up()
    t_numpy = t_fused = 0.0
    n = 0
    for chunk in chunks(the_plan, 65_536):
        block = the_plan.blocks[chunk.block]
        t0 = time.perf_counter()
        plain = screen(batch_for(library, mission, *chunk_indices(block, chunk)), model, mission)
        t1 = time.perf_counter()
        fused = fused_screen.screen_chunk(library, mission, model, block, chunk, keys)
        t2 = time.perf_counter()
        assert np.array_equal(np.bincount(plain.code.ravel(), minlength=fused.counts.size), fused.counts)
        t_numpy, t_fused, n = t_numpy + t1 - t0, t_fused + t2 - t1, n + fused.size
    print(f"screens: numpy {n / t_numpy / 1e6:.2f} M candidates/s, compiled {n / t_fused / 1e6:.2f} M/s "
          f"({t_numpy / t_fused:.1f}x) on the same {n} candidates, same counts")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--combinations", type=int, default=math.prod(BASE))
    parser.add_argument("--processes", "--workers", dest="processes", type=int, default=1,
                        help="screening processes on this machine (--workers is the old name)")
    parser.add_argument("--chunk-size", type=int, default=None, help="default: the ranking's own")
    parser.add_argument("--scalar-sample", type=int, default=300)
    parser.add_argument("--top", type=int, default=50)
    parser.add_argument("--forward-flight", type=float, default=0.0, metavar="V",
                        help="also rank the same craft in forward flight at V m/s (drag area 0.03 m^2) and print the "
                             "ratio of its time to the hover ranking's")
    parser.add_argument("--compare-screens", action="store_true",
                        help="also time the numpy screen against the compiled one on the same chunks")
    args = parser.parse_args()
    library = make_library(args.combinations)
    print(f"library: packs x ESCs x motors x propellers = {' x '.join(str(s) for s in library.sizes)}")
    t_load = time.perf_counter()
    rank(make_library(1000, seed=1), MISSION, top_n=1)  # compiled code loaded (or compiled) once, as a server does
    print(f"compiled screen ready in {time.perf_counter() - t_load:.2f} s (not in the timing below)")
    rss0 = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    t0 = time.perf_counter()
    out = rank(library, MISSION, objective="cruise_power", top_n=args.top, chunk_size=args.chunk_size,
               processes=args.processes)
    wall = time.perf_counter() - t0
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss - rss0
    children = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss if args.processes > 1 else 0
    peak_mb = max(rss, children) / 1024.0
    n = out.combinations
    rate = n / wall
    print(f"combinations {n}, evaluated {out.evaluated}, feasible {out.feasible}, pareto {len(out.pareto)}")
    print("rejected: " + ", ".join(f"{k} {v}" for k, v in out.rejected.items() if v))
    print("timings: " + ", ".join(f"{k} {v:.3f} s" for k, v in out.timings.items()))
    if out.top:
        best = out.top[0]
        print(f"best: pack {best.battery_id} esc {best.esc_id} motor {best.motor_id} prop {best.propeller_id}, "
              f"{best.cruise['electrical_power_w']:.1f} W at duty {best.cruise['duty']:.3f}, "
              f"{best.endurance_min:.1f} min")
    scalar, sample = scalar_rate(library, MISSION, args.scalar_sample)
    print(f"scalar brentq path: {scalar:.1f} candidates/s on {sample} sampled candidates "
          f"(extrapolated {n / scalar:.0f} s for all)")
    if args.forward_flight > 0:
        forward = replace(MISSION, kind="forward_flight", cruise_airspeed_m_s=args.forward_flight, drag_area_m2=0.03)
        t1 = time.perf_counter()
        flown = rank(library, forward, objective="cruise_power", top_n=args.top, chunk_size=args.chunk_size,
                     processes=args.processes)
        wall_ff = time.perf_counter() - t1
        print(f"forward flight at {args.forward_flight:g} m/s: {flown.combinations} combinations in {wall_ff:.3f} s, "
              f"{wall_ff / wall:.2f}x the hover ranking; feasible {flown.feasible} (hover {out.feasible})")
    if args.compare_screens:
        compare_screens(library, MISSION)
    print(f"ranking: {n} combinations in {wall:.3f} s ({rate:.0f} combinations/s), scalar ratio {rate / scalar:.0f}, "
          f"peak memory {peak_mb:.0f} MB")


if __name__ == "__main__":
    main()
