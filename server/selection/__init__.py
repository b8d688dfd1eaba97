"""Ranking engine: every pack (x k in parallel) x ESC x motor x propeller of a team's library, for one mission.

Pure numpy/scipy on top of :mod:`server.physics` (no DB, no I/O). Layers, as in STYLE.md:

- :mod:`.library` inputs (frozen dataclasses of arrays) and :mod:`.propmodel` (propeller tables as segments),
- :mod:`.evaluate` operating points of a chunk, :mod:`.constraints` reasons and metrics,
- :mod:`.enumerate` compatible blocks and chunks, :mod:`.stream` streaming reduction, :mod:`.pareto`,
  :mod:`.refine` discharge simulation of the best, :mod:`.profile` flight profiles, :mod:`.rows` result rows,
- :mod:`.rank` the orchestrator :func:`rank`.
"""

from server.physics import ENGINE_VERSION

from .constraints import REASONS
from .library import EscLibrary, MissionSpec, MotorLibrary, PackLibrary, PartsLibrary, PropellerLibrary, Segment
from .rank import rank
from .result import OBJECTIVES, CandidateRow, RankingOutcome

__all__ = [
    "ENGINE_VERSION", "OBJECTIVES", "REASONS", "CandidateRow", "EscLibrary", "MissionSpec", "MotorLibrary",
    "PackLibrary", "PartsLibrary", "PropellerLibrary", "RankingOutcome", "Segment", "rank",
]
