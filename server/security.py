"""Password hashing (argon2), API keys (stored as SHA-256, shown once) and CSRF tokens."""

from __future__ import annotations

import hashlib
import hmac
import os
import secrets
import threading
from functools import lru_cache

from argon2 import PasswordHasher
from argon2.exceptions import InvalidHashError, VerificationError

from server.config import Settings

API_KEY_PREFIX = "lm_"


@lru_cache(maxsize=8)
def _hasher(time_cost: int, memory_kib: int, parallelism: int) -> PasswordHasher:
    return PasswordHasher(time_cost=time_cost, memory_cost=memory_kib, parallelism=parallelism)


def hasher(settings: Settings) -> PasswordHasher:
    return _hasher(settings.password_time_cost, settings.password_memory_kib, settings.password_parallelism)


# argon2 costs 64 MiB and ~250 ms of one core per hash by default: at most one per core at a time, so a burst of
# log-ins queues instead of exhausting memory and starving every other request.
_ARGON2_SLOTS = threading.BoundedSemaphore(max(1, os.cpu_count() or 1))


def hash_password(settings: Settings, password: str) -> str:
    with _ARGON2_SLOTS:
        return hasher(settings).hash(password)


@lru_cache(maxsize=8)
def _dummy_hash(time_cost: int, memory_kib: int, parallelism: int) -> str:
    """A hash of a throwaway password with the current cost, verified when the user does not exist."""
    return _hasher(time_cost, memory_kib, parallelism).hash(secrets.token_urlsafe(16))


def verify_password(settings: Settings, password_hash: str | None, password: str) -> bool:
    """Constant work: an unknown user costs one verification, exactly as a known one (no timing oracle)."""
    ph = hasher(settings)
    target = password_hash or _dummy_hash(settings.password_time_cost, settings.password_memory_kib,
                                          settings.password_parallelism)
    try:
        with _ARGON2_SLOTS:
            return ph.verify(target, password) and password_hash is not None
    except (VerificationError, InvalidHashError):
        return False


def new_api_key() -> str:
    """A fresh key: ``lm_`` + 40 url-safe characters."""
    return API_KEY_PREFIX + secrets.token_urlsafe(30)


def api_key_hash(key: str) -> str:
    """Keys are long random strings, so a plain SHA-256 is enough (no salt/stretching needed)."""
    return hashlib.sha256(key.encode()).hexdigest()


def api_key_prefix(key: str) -> str:
    return key[:10]


def new_csrf_token() -> str:
    return secrets.token_urlsafe(24)


def csrf_matches(expected: str | None, given: str | None) -> bool:
    return bool(expected) and bool(given) and hmac.compare_digest(str(expected), str(given))
