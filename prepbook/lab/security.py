"""Passphrases: stored only as a slow salted hash (Argon2id, argon2-cffi)."""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from contextvars import ContextVar

from prepbook.errors import InvalidInput

MIN_PASSPHRASE = 8  # common practice, no source


def check_new_passphrase(passphrase: str) -> None:
    if len(passphrase) < MIN_PASSPHRASE:
        raise InvalidInput(f"a passphrase needs at least {MIN_PASSPHRASE} characters")
    if passphrase != passphrase.strip():
        raise InvalidInput("a passphrase must not start or end with spaces")
    if any(not ch.isprintable() for ch in passphrase):
        raise InvalidInput("a passphrase must not contain control characters")


# Set only while ``prepbook demo --years`` creates its synthetic users (see
# ``synthetic_demo_hashing``); every real user gets argon2-cffi's default parameters.
_SYNTHETIC_DEMO = ContextVar("prepbook_synthetic_demo_hashing", default=False)


@contextmanager
def synthetic_demo_hashing() -> Iterator[None]:
    """Hash passphrases with very cheap Argon2 parameters inside this block.

    Only for the invented users of a synthetic demo history, whose passphrases are
    printed for anyone to read: there is nothing to protect, and the history signs
    tens of thousands of reviews, each of which verifies a passphrase. Argon2 keeps
    its parameters in the hash itself, so verifying one of these hashes takes
    microseconds instead of a good fraction of a second, and every other hash is
    untouched. Never use this for a real user.
    """
    token = _SYNTHETIC_DEMO.set(True)
    try:
        yield
    finally:
        _SYNTHETIC_DEMO.reset(token)


def hash_passphrase(passphrase: str) -> str:
    from argon2 import PasswordHasher

    if _SYNTHETIC_DEMO.get():
        return PasswordHasher(time_cost=1, memory_cost=8, parallelism=1).hash(passphrase)
    return PasswordHasher().hash(passphrase)


def passphrase_matches(stored_hash: str | None, passphrase: str) -> bool:
    if not stored_hash:
        return False
    from argon2 import PasswordHasher
    from argon2.exceptions import InvalidHashError, VerificationError

    try:
        return PasswordHasher().verify(stored_hash, passphrase)
    except (VerificationError, InvalidHashError):
        return False
