"""Prediction bands by sampling: draw every uncertain parameter, evaluate the same physics, take percentiles.

Each part's parameters are an :class:`Uncertain`: nominal values, standard uncertainties, and optionally a
covariance block (a calibration's). Parameters in a covariance block are drawn jointly from the multivariate
normal distribution of the fit; the others independently — multiplicatively (log-normal with the nominal value
as median) when they must stay positive, else normal and clipped at zero. The draws go through the engine's own
vectorised solvers as one more batch axis, and a band is the 10th-90th percentile of the outputs
(:data:`BAND_LEVEL` = 0.8). Sampling rather than linearisation because the outputs are strongly non-linear in
some inputs (a duty near 1, a pack near its power limit) and the solvers are vectorised anyway. Draws use a fixed
seed, so a band is reproducible.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

from ._types import FloatArray

BAND_LEVEL = 0.8
"""Central probability of a band (its ends are the 10th and 90th percentiles)."""
DEFAULT_SAMPLES = 200
SEED = 20261201


@dataclass(frozen=True)
class Uncertain:
    """One part's parameters: nominal values, standard uncertainties, and a covariance block of some of them.

    ``positive`` parameters are drawn log-normally (their nominal value is the median); the others normally and
    clipped at zero. ``covariance`` is ``(names, matrix)`` (units of the values); its parameters are drawn jointly
    and their entries in ``sd`` are ignored.
    """

    values: Mapping[str, float]
    sd: Mapping[str, float] = field(default_factory=dict)
    covariance: tuple[tuple[str, ...], FloatArray] | None = None
    positive: frozenset[str] = frozenset()


def generator(seed: int = SEED) -> np.random.Generator:
    return np.random.default_rng(seed)


def draw(part: Uncertain, samples: int, rng: np.random.Generator) -> dict[str, FloatArray]:
    """``samples`` draws of every parameter of ``part`` (arrays of length ``samples``; certain ones repeated)."""
    out = {name: np.full(samples, float(value)) for name, value in part.values.items()}
    joint: set[str] = set()
    if part.covariance is not None:
        names, matrix = part.covariance
        names = tuple(n for n in names if n in part.values)
        idx = [list(part.covariance[0]).index(n) for n in names]
        cov = np.asarray(matrix, dtype=np.float64)[np.ix_(idx, idx)]
        if names and np.all(np.isfinite(cov)):
            mean = np.array([part.values[n] for n in names], dtype=np.float64)
            # eigen-decomposition: a covariance from a fit may be positive semi-definite only
            w, v = np.linalg.eigh(0.5 * (cov + cov.T))
            z = rng.standard_normal((samples, len(names)))
            joint_draws = mean + (z * np.sqrt(np.clip(w, 0.0, None))) @ v.T
            for j, name in enumerate(names):
                out[name] = np.clip(joint_draws[:, j], 0.0, None) if name in part.positive else joint_draws[:, j]
            joint = set(names)
    for name in sorted(part.sd):  # sorted: the same stream of random numbers whatever the mapping's order
        sd = float(part.sd[name])
        if name in joint or name not in part.values or not sd > 0.0:
            continue
        value = float(part.values[name])
        z = rng.standard_normal(samples)
        if name in part.positive and value > 0.0:
            sigma = np.sqrt(np.log1p((sd / value) ** 2))
            out[name] = value * np.exp(sigma * z)
        else:
            out[name] = np.clip(value + sd * z, 0.0, None)
    return out


def band(samples: FloatArray, axis: int = 0, level: float = BAND_LEVEL) -> tuple[FloatArray, FloatArray]:
    """The central ``level`` interval of ``samples`` along ``axis`` (NaN draws, e.g. unreachable points, ignored;
    NaN where fewer than half the draws have a value)."""
    a = np.asarray(samples, dtype=np.float64)
    tail = 0.5 * (1.0 - level) * 100.0
    with np.errstate(all="ignore"):
        enough = np.sum(np.isfinite(a), axis=axis) >= 0.5 * a.shape[axis]
        if not np.any(enough):
            nan = np.full(np.delete(a.shape, axis), np.nan)
            return nan, nan.copy()
        lo, hi = np.nanpercentile(a, [tail, 100.0 - tail], axis=axis)
    return np.where(enough, lo, np.nan), np.where(enough, hi, np.nan)


def discrepancy(samples: int, relative_sd: float, rng: np.random.Generator) -> FloatArray:
    """Multiplicative model-discrepancy factors ``1 + e``, ``e ~ N(0, relative_sd)`` (one per draw). [-]"""
    return 1.0 + relative_sd * rng.standard_normal(samples)
