"""A few rejected combinations per reason, the same whatever the chunking: "show some this limit rejected".

Each candidate gets a key that orders combinations by part id (pack, packs in parallel, ESC, motor, propeller):
``key = (((pack_rank K + k - 1) E + esc_rank) M + motor_rank) Q + prop_rank``. Per reason, the
:data:`EXAMPLES_PER_REASON` smallest keys are kept; keeping the smallest is order-independent, so chunks and
worker processes merge into the same examples as a single pass. Part-level reasons (pruned while enumerating,
never materialised) get theirs from :func:`pruned_examples`, which walks the combinations in key order.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .constraints import CODE, PRUNE_REASONS, REASONS
from .enumerate import Block, Chunk, PartVerdicts
from .library import MissionSpec, PartsLibrary

EXAMPLES_PER_REASON = 5
_NONE = np.iinfo(np.int64).max


@dataclass(frozen=True)
class ExampleKeys:
    """How candidates map to keys in part-id order, and back."""

    ranks: tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]
    orders: tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]
    k_max: int

    @classmethod
    def of(cls, library: PartsLibrary, mission: MissionSpec) -> ExampleKeys:
        ranks, orders = [], []
        for part in (library.packs, library.escs, library.motors, library.propellers):
            order = np.argsort(part.ids, kind="stable")
            rank = np.empty(len(order), dtype=np.int64)
            rank[order] = np.arange(len(order))
            ranks.append(rank)
            orders.append(order)
        return cls((ranks[0], ranks[1], ranks[2], ranks[3]), (orders[0], orders[1], orders[2], orders[3]),
                   int(mission.max_packs_in_parallel))

    @property
    def sizes(self) -> tuple[int, int, int]:
        return len(self.ranks[1]), len(self.ranks[2]), len(self.ranks[3])

    def keys(self, pack: np.ndarray, k: np.ndarray, esc: np.ndarray, motor: np.ndarray,
             prop: np.ndarray) -> np.ndarray:
        """Keys of candidates given by library positions (arrays broadcast, e.g. a chunk's cube axes)."""
        n_e, n_m, n_q = self.sizes
        pr, er, mr, qr = self.ranks
        keys: np.ndarray = (((pr[pack] * self.k_max + (np.asarray(k, dtype=np.int64) - 1)) * n_e + er[esc]) * n_m
                            + mr[motor]) * n_q + qr[prop]
        return keys

    def decode(self, keys: np.ndarray) -> list[tuple[int, int, int, int, int]]:
        """Library positions (pack, k, esc, motor, prop) of keys."""
        n_e, n_m, n_q = self.sizes
        out = []
        for key in np.asarray(keys, dtype=np.int64).tolist():
            key, q = divmod(key, n_q)
            key, m = divmod(key, n_m)
            key, e = divmod(key, n_e)
            p, k = divmod(key, self.k_max)
            po, eo, mo, qo = self.orders
            out.append((int(po[p]), k + 1, int(eo[e]), int(mo[m]), int(qo[q])))
        return out


@dataclass
class Examples:
    """The smallest keys seen so far per reason code (sorted, at most :data:`EXAMPLES_PER_REASON` each)."""

    keys: dict[int, np.ndarray] = field(default_factory=dict)
    threshold: np.ndarray = field(default_factory=lambda: np.full(len(REASONS) + 1, _NONE, dtype=np.int64))

    def add(self, codes: np.ndarray, keys: np.ndarray) -> None:
        """Offer candidates with reason ``codes`` (0 = feasible, ignored) and ``keys`` (same shape)."""
        codes = np.ravel(codes)
        keys = np.ravel(np.broadcast_to(keys, np.shape(codes) if np.ndim(keys) == 0 else np.shape(keys)))
        # One gather and compare over the chunk; only the few candidates that beat their reason's worst kept key
        # are looked at further (none once every reason has its examples from earlier, smaller keys).
        offered = np.flatnonzero((codes != 0) & (keys < self.threshold[codes]))
        if offered.size == 0:
            return
        for code in np.unique(codes[offered]).tolist():
            taken = keys[offered[codes[offered] == code]]
            self._keep(int(code), taken)

    def _keep(self, code: int, keys: np.ndarray) -> None:
        if keys.size > EXAMPLES_PER_REASON:  # only the smallest few can be kept: select them in linear time
            keys = np.partition(keys, EXAMPLES_PER_REASON - 1)[:EXAMPLES_PER_REASON]
        merged = np.union1d(self.keys.get(code, np.empty(0, dtype=np.int64)), keys)[:EXAMPLES_PER_REASON]
        self.keys[code] = merged
        if merged.size >= EXAMPLES_PER_REASON:
            self.threshold[code] = merged[-1]

    def merge(self, other: Examples) -> None:
        for code, keys in other.keys.items():
            self._keep(code, keys)

    def by_reason(self, keys: ExampleKeys) -> dict[str, list[tuple[int, int, int, int, int]]]:
        """Library positions of the examples, per reason name (reasons without any left out)."""
        return {REASONS[code - 1]: keys.decode(values) for code, values in sorted(self.keys.items())}


def chunk_keys(keys: ExampleKeys, block: Block, chunk: Chunk) -> np.ndarray:
    """Keys of a chunk's cube (configuration, ESC, motor, propeller), computed per axis and summed."""
    c = slice(chunk.c0, chunk.c1)
    e = slice(chunk.e0, chunk.e1)
    return keys.keys(block.packs[c].reshape(-1, 1, 1, 1), block.ks[c].reshape(-1, 1, 1, 1),
                     block.escs[e].reshape(1, -1, 1, 1), block.motors.reshape(1, 1, -1, 1),
                     block.props.reshape(1, 1, 1, -1))


def pruned_examples(library: PartsLibrary, mission: MissionSpec, verdicts: PartVerdicts, keys: ExampleKeys,
                    counts: dict[str, int]) -> Examples:
    """The smallest-key combinations of every part-level reason that removed any (walked in key order)."""
    out = Examples()
    wanted = {CODE[name] for name in PRUNE_REASONS if counts.get(name, 0) > 0}
    if not wanted:
        return out
    _, esc_order, motor_order, prop_order = keys.orders
    esc = esc_order.reshape(-1, 1, 1)
    motor = motor_order.reshape(1, -1, 1)
    prop = prop_order.reshape(1, 1, -1)
    for pack in keys.orders[0].tolist():
        for k in range(1, keys.k_max + 1):
            codes = verdicts.first_failure(library, np.array(pack), esc, motor, prop)
            out.add(np.where(np.isin(codes, list(wanted)), codes, 0),
                    keys.keys(np.array(pack), np.array(k), esc, motor, prop))
            if all(out.keys.get(code, np.empty(0)).size >= min(EXAMPLES_PER_REASON, counts[REASONS[code - 1]])
                   for code in wanted):
                return out
    return out
