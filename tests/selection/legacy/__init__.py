"""The screening kernel as it was before the speed work (engine rank-1.0 at commit 4ceda7b), kept verbatim.

Only the imports of :mod:`server.selection.library` were made absolute. ``tests/selection/test_fast_paths.py``
compares the current kernel with it; nothing else may import it.
"""
