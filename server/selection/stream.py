"""Streaming screen: evaluate chunks one after another, keeping only counts, the best few and the Pareto set.

A :class:`Partial` is the reduced state of any set of chunks. Two partials merge into the partial of the
union (counts add; the best ``pool_size`` under a total order and the non-dominated set do not depend on the
order in which candidates arrive), which is what makes results independent of chunk size and of screening processes.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from server.physics.propeller_segments import PropModel

from . import fused_screen
from .constraints import REASONS, screen
from .enumerate import Block, Chunk, Plan, batch_for, chunk_indices, cost_of
from .examples import ExampleKeys, Examples, chunk_keys
from .library import MissionSpec, PartsLibrary
from .pareto import ParetoFront
from .result import CandidateSet, primary_key, ranking_order


@dataclass
class Partial:
    """Counts per reason code, all-violation counts, the best candidates so far and the Pareto front."""

    objective: str
    pool_size: int
    id_ranks: tuple[np.ndarray, ...]
    counts: np.ndarray = field(default_factory=lambda: np.zeros(len(REASONS) + 1, dtype=np.int64))
    violations: np.ndarray = field(default_factory=lambda: np.zeros(len(REASONS), dtype=np.int64))
    pool: CandidateSet = field(default_factory=CandidateSet.empty)
    front: ParetoFront = field(default_factory=ParetoFront)
    evaluated: int = 0
    examples: Examples = field(default_factory=Examples)
    keys: ExampleKeys | None = None

    def add_candidates(self, cs: CandidateSet) -> None:
        """Keep the best ``pool_size`` of the pool and ``cs`` under the ranking's total order."""
        if len(cs) == 0 or self.pool_size == 0:
            return
        if len(self.pool) >= self.pool_size:
            worst = primary_key(self.pool.take(np.array([len(self.pool) - 1])), self.objective)[0]
            cs = cs.take(np.flatnonzero(primary_key(cs, self.objective) <= worst))
            if len(cs) == 0:
                return
        merged = CandidateSet.concat(self.pool, cs)
        order = ranking_order(merged, self.objective, self.id_ranks)
        self.pool = merged.take(order[: self.pool_size])

    def merge(self, other: Partial) -> None:
        self.counts += other.counts
        self.violations += other.violations
        self.evaluated += other.evaluated
        self.add_candidates(other.pool)
        self.front.merge(other.front)
        self.examples.merge(other.examples)


def screen_chunk(partial: Partial, library: PartsLibrary, mission: MissionSpec, model: PropModel, the_plan: Plan,
                 chunk: Chunk) -> int:
    """Evaluate one chunk into ``partial``; returns the number of candidates evaluated.

    Plain missions go through the compiled loop of :mod:`.fused_screen`, the rest through
    :func:`.constraints.screen`; both give the same verdicts and metrics.
    """
    block = the_plan.blocks[chunk.block]
    if partial.keys is None:
        partial.keys = ExampleKeys.of(library, mission)
    if fused_screen.supports(mission, model):
        return _screen_fused(partial, library, mission, model, block, chunk)
    index = chunk_indices(block, chunk)
    result = screen(batch_for(library, mission, *index), model, mission)
    codes = result.code.ravel()
    partial.counts += np.bincount(codes, minlength=len(REASONS) + 1)
    partial.violations += result.violations
    partial.evaluated += codes.size
    partial.examples.add(result.code, chunk_keys(partial.keys, block, chunk))
    feasible = np.flatnonzero(codes == 0)
    if feasible.size:
        ic, ie, im, iq = np.unravel_index(feasible, result.code.shape)
        pack = block.packs[chunk.c0 + ic]
        k = block.ks[chunk.c0 + ic]
        esc = block.escs[chunk.e0 + ie]
        motor, prop = block.motors[im], block.props[iq]
        cs = CandidateSet(
            pack=pack, k=k, esc=esc, motor=motor, prop=prop,
            electrical_power_w=result.electrical_power_w.ravel()[feasible],
            endurance_min=result.endurance_min.ravel()[feasible],
            specific_thrust_g_per_w=result.specific_thrust_g_per_w.ravel()[feasible],
            thrust_to_weight=result.thrust_to_weight.ravel()[feasible],
            mass_kg=result.mass_kg.ravel()[feasible],
            cost=cost_of(library, mission, pack, k, esc, motor, prop),
            profile_energy_wh=np.broadcast_to(result.profile_energy_wh, result.code.shape).ravel()[feasible],
        )
        partial.add_candidates(cs)
        partial.front.add(cs)
    return int(codes.size)


def _screen_fused(partial: Partial, library: PartsLibrary, mission: MissionSpec, model: PropModel, block: Block,
                  chunk: Chunk) -> int:
    """:func:`screen_chunk` through the compiled loop."""
    assert partial.keys is not None
    out = fused_screen.screen_chunk(library, mission, model, block, chunk, partial.keys)
    partial.counts += out.counts
    partial.violations += out.violations
    partial.evaluated += out.size
    partial.examples.add(out.example_codes, out.example_keys)
    if out.feasible.size:
        ic, ie, im, iq = np.unravel_index(out.feasible, (chunk.c1 - chunk.c0, chunk.e1 - chunk.e0, len(block.motors),
                                                         len(block.props)))
        pack = block.packs[chunk.c0 + ic]
        k = block.ks[chunk.c0 + ic]
        esc = block.escs[chunk.e0 + ie]
        motor, prop = block.motors[im], block.props[iq]
        cs = CandidateSet(
            pack=pack, k=k, esc=esc, motor=motor, prop=prop, electrical_power_w=out.electrical_power_w,
            endurance_min=out.endurance_min, specific_thrust_g_per_w=out.specific_thrust_g_per_w,
            thrust_to_weight=out.thrust_to_weight, mass_kg=out.mass_kg,
            cost=cost_of(library, mission, pack, k, esc, motor, prop),
        )
        partial.add_candidates(cs)
        partial.front.add(cs)
    return out.size
