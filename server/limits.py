"""Request body limits, enforced by FastAPI while the body is read — before it is parsed and before any
authentication (a body announced larger than the limit is refused without reading it: 413 problem+json).

Routes that take files raise the limit for themselves (``max_body_size=UPLOAD_BODY_BYTES``); the library import
route reads its body only after the caller is authenticated (``LIBRARY_BODY_BYTES``).
"""

from __future__ import annotations

MAX_BODY_BYTES = 1 * 1024 * 1024
"""Every JSON body and form (1 MiB)."""
UPLOAD_BODY_BYTES = 3 * 1024 * 1024
"""A multipart upload: one file of at most 2 MB (bench-run or parts CSV) plus its form fields (3 MiB)."""
LIBRARY_BODY_BYTES = 32 * 1024 * 1024
"""A library file for ``POST /api/v1/import`` (32 MiB), read after authentication; larger libraries import with
``liftmatch import FILE``."""
