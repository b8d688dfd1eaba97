"""Thrust left after one motor fails: the largest total thrust the intact rotors can give in trimmed hover.

Model (derived in docs/model-reference.md#motor-out): a flat multirotor with N equal arms at angles 2πk/N, rotor k
spinning in direction (−1)^k, each rotor's reaction torque proportional to its thrust with the same constant.
After rotor j fails, the intact rotors' thrusts T_k ∈ [0, T_max] must leave no roll, pitch or yaw moment:

    Σ T_k cos θ_k = 0,   Σ T_k sin θ_k = 0,   Σ (−1)^k T_k = 0,   T_j = 0,

and the usable thrust is the largest Σ T_k (a linear programme). The fraction of the intact craft's thrust N T_max
is the same for every failed rotor (symmetry): 2/3 for a hexa, 1/√2 for an octo, 0 for a quad (no trimmed hover
without the fourth rotor). Static hover only: no control margin is kept, and the reduced thrust is the ceiling the
remaining motors reach at full throttle.
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
from scipy.optimize import linprog


@lru_cache(maxsize=64)
def thrust_fraction(rotor_count: int, failed: int = 0) -> float:
    """Usable share of the intact craft's full-throttle thrust with rotor ``failed`` out, for ``rotor_count``
    rotors in the flat, alternating-spin layout above. [-]"""
    n = int(rotor_count)
    if n < 2:
        return 0.0
    angles = 2.0 * math.pi * np.arange(n) / n
    spin = (-1.0) ** np.arange(n)
    balance = np.vstack([np.cos(angles), np.sin(angles), spin])
    bounds = [(0.0, 0.0) if k == failed % n else (0.0, 1.0) for k in range(n)]
    result = linprog(-np.ones(n), A_eq=balance, b_eq=np.zeros(3), bounds=bounds, method="highs")
    if result.status != 0:
        return 0.0
    return max(0.0, float(-result.fun) / n)


def worst_thrust_fraction(rotor_count: int) -> float:
    """The smallest :func:`thrust_fraction` over every single failed rotor. [-]"""
    return min(thrust_fraction(rotor_count, j) for j in range(max(int(rotor_count), 1)))
