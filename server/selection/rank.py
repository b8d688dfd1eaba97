"""The orchestrator: enumerate -> screen in chunks -> constrain -> rank / Pareto -> refine the top N -> rows."""

from __future__ import annotations

import time
from collections.abc import Callable
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, replace
from multiprocessing import get_all_start_methods, get_context
from typing import Any

import numpy as np

from server.physics import ENGINE_VERSION
from server.physics.propeller_segments import PropModel

from . import fused_screen
from .constraints import CODE, REASONS
from .enumerate import DEFAULT_CHUNK_SIZE, Chunk, PartVerdicts, Plan, chunks, plan
from .examples import ExampleKeys, pruned_examples
from .library import MissionSpec, PartsLibrary
from .refine import refine
from .result import OBJECTIVES, CandidateRow, RankingOutcome, ranking_order
from .rows import build_rows
from .stream import Partial, screen_chunk

FUSED_CHUNK_FACTOR = 8
"""By default the chunks of the compiled screen (:mod:`.fused_screen`) are this many times the numpy screen's: it
keeps about 50 B per candidate of a chunk instead of ~1 kB, and larger chunks share more full-throttle points."""
SCREEN_SHARE = 0.9
"""Share of the progress bar given to screening (the rest covers refinement and the result rows)."""


def _id_ranks(library: PartsLibrary) -> tuple[np.ndarray, ...]:
    """Per part kind, each part's tie-break position: parts with fewer assumed parameters first, then by id."""
    ranks = []
    for part in (library.packs, library.escs, library.motors, library.propellers):
        assumed = np.zeros(len(part.ids)) if part.assumed is None else part.assumed
        order = np.lexsort((part.ids, assumed))
        rank = np.empty(len(order), dtype=np.intp)
        rank[order] = np.arange(len(order))
        ranks.append(rank)
    return tuple(ranks)


class _Progress:
    """Monotone progress reporting in [0, 1]."""

    def __init__(self, callback: Callable[[float], None] | None) -> None:
        self.callback, self.last = callback, 0.0

    def __call__(self, value: float) -> None:
        value = min(1.0, max(self.last, float(value)))
        if self.callback is not None and (value > self.last or value == 1.0):
            self.callback(value)
        self.last = value


def chunk_sizes(all_chunks: list[Chunk], the_plan: Plan) -> np.ndarray:
    """Candidates in each chunk."""
    return np.array([(c.c1 - c.c0) * (c.e1 - c.e0) * the_plan.blocks[c.block].shape[2]
                     * the_plan.blocks[c.block].shape[3] for c in all_chunks], dtype=np.float64)


_NEXT: Any = None
"""The shared index of the next chunk to screen (a ``multiprocessing.Value``), set in each worker at its start."""


def _share_counter(counter: Any) -> None:
    global _NEXT
    _NEXT = counter


def _take(counter: Any, count: int) -> int:
    """The next chunk index to screen (``count`` or more: none left)."""
    with counter.get_lock():
        index = int(counter.value)
        counter.value = index + 1
    return index


def _screen_shared(library: PartsLibrary, mission: MissionSpec, the_plan: Plan, all_chunks: list[Chunk],
                   objective: str, pool_size: int, id_ranks: tuple[np.ndarray, ...]) -> Partial:
    """A worker's share: chunks taken one at a time from the shared counter until none are left."""
    model = mission.propeller_model(library.propellers)
    partial = Partial(objective, pool_size, id_ranks)
    while (index := _take(_NEXT, len(all_chunks))) < len(all_chunks):
        screen_chunk(partial, library, mission, model, the_plan, all_chunks[index])
    return partial


def _screen_parallel(library: PartsLibrary, mission: MissionSpec, model: PropModel, the_plan: Plan,
                     all_chunks: list[Chunk], partial: Partial, processes: int, progress: _Progress,
                     should_cancel: Callable[[], bool] | None) -> bool:
    """Screen with ``processes - 1`` forked processes plus this one; returns True when cancelled.

    Every process takes the next chunk from one shared counter until none are left, so no core idles while a
    chunk is waiting (the last chunks end within about one chunk's time of each other). Cancelling moves the
    counter past the end: every process stops after its current chunk. Partials merge in any order with the same
    result.
    """
    method = "fork" if "fork" in get_all_start_methods() else "spawn"
    if fused_screen.supports(mission, model):
        fused_screen.warm_up()  # compiled (or loaded from the cache) once, before the workers fork
    context = get_context(method)
    counter = context.Value("q", 0)
    count = len(all_chunks)
    total = max(the_plan.evaluated, 1)
    sizes = np.cumsum(chunk_sizes(all_chunks, the_plan))
    with ProcessPoolExecutor(max_workers=processes - 1, mp_context=context, initializer=_share_counter,
                             initargs=(counter,)) as pool:
        futures = [pool.submit(_screen_shared, library, mission, the_plan, all_chunks, partial.objective,
                               partial.pool_size, partial.id_ranks) for _ in range(processes - 1)]
        cancelled = False
        while (index := _take(counter, count)) < count:
            if should_cancel is not None and should_cancel():
                with counter.get_lock():
                    counter.value = count
                cancelled = True
                break
            screen_chunk(partial, library, mission, model, the_plan, all_chunks[index])
            taken = min(int(counter.value), count)
            progress(SCREEN_SHARE * float(sizes[taken - 1]) / total if taken else 0.0)
        for future in futures:
            partial.merge(future.result())
    return cancelled


def rank(library: PartsLibrary, mission: MissionSpec, *, objective: str = "cruise_power", top_n: int = 50,
         chunk_size: int | None = None, progress: Callable[[float], None] | None = None,
         should_cancel: Callable[[], bool] | None = None, processes: int = 1) -> RankingOutcome:
    """Rank every power system of ``library`` for ``mission``.

    Parameters
    ----------
    library : PartsLibrary
        Packs, ESCs, motors and propellers (NaN = unknown, see :mod:`.library`).
    mission : MissionSpec
        Airframe and mission (rotor count, masses, limits, flight condition).
    objective : {"cruise_power", "endurance", "specific_thrust", "mass", "cost"}
        Lowest craft electrical power at the cruise point, longest endurance, best g/W, lowest all-up mass,
        lowest cost. Ties fall to the other metrics in that order (after thrust-to-weight), then to the parts
        with fewer assumed (prior) parameters, then part ids.
    top_n : int, default 50
        Rows to return; these are refined by the discharge simulation and re-ranked with it.
    chunk_size : int, optional
        Candidates per evaluated chunk; results do not depend on it. Default :data:`.enumerate.DEFAULT_CHUNK_SIZE`
        for the numpy screen (memory ~ 1 kB per candidate of a chunk) and :data:`FUSED_CHUNK_FACTOR` times that for
        the compiled one (~ 50 B per candidate).
    progress : callable, optional
        Called with a monotonically increasing fraction in [0, 1]; the last call of a finished run is 1.0.
    should_cancel : callable, optional
        Polled between chunks; when it returns True the run stops with ``cancelled=True`` and no rows.
    processes : int, default 1
        Processes on this machine that screen blocks in parallel (results are identical to ``processes=1``).

    Returns
    -------
    RankingOutcome
        Counts per rejection reason, the top rows, the Pareto rows and timings [s].
    """
    if processes < 1:
        raise ValueError("top_n must be >= 0, chunk_size and processes >= 1")
    report = _Progress(progress)
    report(0.0)
    t0 = time.perf_counter()
    prepared = prepare(library, mission, objective=objective, top_n=top_n, chunk_size=chunk_size)
    the_plan, all_chunks = prepared.plan, prepared.chunks
    t1 = time.perf_counter()
    partial = prepared.empty_partial()
    total = max(the_plan.evaluated, 1)
    cancelled = False
    if processes > 1 and len(all_chunks) > 1:
        cancelled = _screen_parallel(library, mission, prepared.model, the_plan, all_chunks, partial, processes,
                                     report, should_cancel)
    else:
        for chunk in all_chunks:
            if should_cancel is not None and should_cancel():
                cancelled = True
                break
            screen_chunk(partial, library, mission, prepared.model, the_plan, chunk)
            report(SCREEN_SHARE * partial.evaluated / total)
    t2 = time.perf_counter()
    timings = {"enumerate_s": t1 - t0, "screen_s": t2 - t1}
    if cancelled:
        rejected, violations = _counts(the_plan, partial)
        return RankingOutcome(objective=objective, combinations=the_plan.combinations, evaluated=partial.evaluated,
                              feasible=int(partial.counts[0]), rejected=rejected, violations=violations, top=[],
                              pareto=[], timings=timings | {"refine_s": 0.0, "total_s": t2 - t0}, cancelled=True)
    return finish(library, mission, prepared, partial, timings=timings, progress=report)


@dataclass(frozen=True)
class Prepared:
    """What every screening pass of one ranking shares: the propeller model, the plan and its chunks (a fixed
    order, a function of the inputs and the chunk size alone, so that separate processes cut the same chunks)."""

    objective: str
    top_n: int
    model: PropModel
    plan: Plan
    chunks: list[Chunk]
    id_ranks: tuple[np.ndarray, ...]
    default_chunk: int = DEFAULT_CHUNK_SIZE
    """The mission's default chunk size (:func:`default_chunk_size`), the largest shards cut."""

    @property
    def pool_size(self) -> int:
        return 2 * self.top_n + 16 if self.top_n else 0

    def empty_partial(self) -> Partial:
        return Partial(self.objective, self.pool_size, self.id_ranks)

    def rechunked(self, chunk_size: int) -> Prepared:
        """The same plan cut into chunks of about ``chunk_size`` candidates (results do not depend on it)."""
        return replace(self, chunks=list(chunks(self.plan, chunk_size)))


def default_chunk_size(mission: MissionSpec, model: PropModel) -> int:
    """Candidates per chunk by default: the compiled screen keeps ~50 B per candidate, the numpy one ~1 kB."""
    return DEFAULT_CHUNK_SIZE * (FUSED_CHUNK_FACTOR if fused_screen.supports(mission, model) else 1)


def prepare(library: PartsLibrary, mission: MissionSpec, *, objective: str, top_n: int,
            chunk_size: int | None = None) -> Prepared:
    """Check the arguments, build the propeller model, the plan (part-level pruning) and its chunks."""
    if objective not in OBJECTIVES:
        raise ValueError(f"unknown objective {objective!r}; choose one of {OBJECTIVES}")
    if top_n < 0 or (chunk_size is not None and chunk_size < 1):
        raise ValueError("top_n must be >= 0, chunk_size and processes >= 1")
    model = mission.propeller_model(library.propellers)
    the_plan = plan(library, mission, model)
    default = default_chunk_size(mission, model)
    return Prepared(objective, top_n, model, the_plan, list(chunks(the_plan, chunk_size or default)),
                    _id_ranks(library), default)


def _counts(the_plan: Plan, partial: Partial) -> tuple[dict[str, int], dict[str, int]]:
    rejected = dict(the_plan.pruned) | {name: int(partial.counts[i + 1]) for i, name in enumerate(REASONS)
                                         if name not in the_plan.pruned}
    violations = {name: int(partial.violations[i]) for i, name in enumerate(REASONS) if name not in the_plan.pruned}
    return rejected, violations


def finish(library: PartsLibrary, mission: MissionSpec, prepared: Prepared, partial: Partial, *,
           timings: dict[str, float], progress: Callable[[float], None] | None = None) -> RankingOutcome:
    """From the merged partial of every chunk: refine the best, count, pick the rejection examples, build rows.

    ``partial`` may be the merge, in any order, of partials of disjoint chunk groups (processes or shards): the
    outcome is the same as one pass over every chunk.
    """
    report = progress if isinstance(progress, _Progress) else _Progress(progress)
    t2 = time.perf_counter()
    model, the_plan, objective, top_n = prepared.model, prepared.plan, prepared.objective, prepared.top_n
    rejected, violations = _counts(the_plan, partial)
    feasible = int(partial.counts[0])
    top, dropped, notes = _refine_top(library, mission, model, partial, top_n, report)
    feasible -= len(dropped)
    rejected["endurance_short"] += len(dropped)
    keys = ExampleKeys.of(library, mission)
    examples = pruned_examples(library, mission, PartVerdicts.of(library, mission, model), keys, the_plan.pruned)
    examples.merge(partial.examples)
    if dropped:  # refined endurance short: counted under endurance_short, so among its examples too
        pack, k, esc, motor, prop = (np.array(column) for column in zip(*dropped, strict=True))
        examples.add(np.full(len(dropped), CODE["endurance_short"]), keys.keys(pack, k, esc, motor, prop))
    front = partial.front.members
    if dropped:
        gone = {tuple(int(v) for v in key) for key in dropped}
        keep = [i for i in range(len(front)) if tuple(int(a[i]) for a in front.indices()) not in gone]
        front = front.take(np.array(keep, dtype=np.intp))
        notes.append("Pareto members whose refined endurance fell below the minimum were removed.")
    pareto_order = np.lexsort((front.prop, front.motor, front.esc, front.k, front.pack, front.cost, front.mass_kg,
                               -front.thrust_to_weight, -front.endurance_min))
    pareto_rows = build_rows(library, mission, model, front.take(pareto_order))
    t3 = time.perf_counter()
    report(1.0)
    total = sum(timings.get(name, 0.0) for name in ("enumerate_s", "screen_s")) + (t3 - t2)
    return RankingOutcome(objective=objective, combinations=the_plan.combinations, evaluated=partial.evaluated,
                          feasible=feasible, rejected=rejected, violations=violations, top=top, pareto=pareto_rows,
                          timings=timings | {"refine_s": t3 - t2, "total_s": total}, engine_version=ENGINE_VERSION,
                          notes=notes, rejected_examples=_example_ids(library, examples.by_reason(keys)))


def _example_ids(library: PartsLibrary,
                 examples: dict[str, list[tuple[int, int, int, int, int]]]) -> dict[str, list[dict[str, Any]]]:
    """Examples as part ids: {battery_id, packs_in_parallel, esc_id, motor_id, propeller_id}."""
    pk, es, mo, pr = library.packs, library.escs, library.motors, library.propellers
    return {reason: [{"battery_id": pk.ids[p].item(), "packs_in_parallel": k, "esc_id": es.ids[e].item(),
                      "motor_id": mo.ids[m].item(), "propeller_id": pr.ids[q].item()} for p, k, e, m, q in found]
            for reason, found in examples.items()}


def _refine_top(library: PartsLibrary, mission: MissionSpec, model: PropModel, partial: Partial, top_n: int,
                report: _Progress) -> tuple[list[CandidateRow], list[tuple[int, ...]], list[str]]:
    """Refine pool candidates in screening order until ``top_n`` meet the endurance floor; re-rank them."""
    pool = partial.pool
    accepted: list[int] = []
    minutes_all = np.full(len(pool), np.nan)
    reasons_all: list[str] = [""] * len(pool)
    dropped: list[tuple[int, ...]] = []
    position = 0
    while len(accepted) < top_n and position < len(pool):
        batch = np.arange(position, min(position + top_n - len(accepted), len(pool)))
        minutes, reasons = refine(library, mission, model, pool.take(batch))
        for j, i in enumerate(batch):
            minutes_all[i], reasons_all[i] = minutes[j], reasons[j]
            if minutes[j] >= mission.min_endurance_min:
                accepted.append(int(i))
            else:
                dropped.append(tuple(int(a[i]) for a in pool.indices()))
        position = int(batch[-1]) + 1
        report(SCREEN_SHARE + (1.0 - SCREEN_SHARE) * 0.8 * len(accepted) / max(top_n, 1))
    notes = []
    if len(accepted) < top_n and len(accepted) < partial.counts[0] - len(dropped):
        notes.append("Fewer rows than requested: too many of the best screened candidates failed the refined "
                     "endurance floor.")
    chosen = np.array(accepted, dtype=np.intp)
    screened = pool.take(chosen)
    refined = screened.replace_endurance(minutes_all[chosen])
    order = ranking_order(refined, partial.objective, partial.id_ranks)
    rows = build_rows(library, mission, model, refined.take(order), [reasons_all[i] for i in chosen[order]],
                      np.ones(len(chosen), dtype=bool), screened.endurance_min[order])
    return rows, dropped, notes
