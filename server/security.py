"""Password hashing (argon2), API keys (stored as SHA-256, shown once) and CSRF tokens."""

from __future__ import annotations

import hashlib
import hmac
import secrets
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


def hash_password(settings: Settings, password: str) -> str:
    return hasher(settings).hash(password)


# A hash of a throwaway password, verified when the user does not exist so both paths cost the same.
_DUMMY_PASSWORD = "not-a-real-password"


def verify_password(settings: Settings, password_hash: str | None, password: str) -> bool:
    ph = hasher(settings)
    try:
        if password_hash is None:
            ph.verify(ph.hash(_DUMMY_PASSWORD), password + "x")
            return False
        return ph.verify(password_hash, password)
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
