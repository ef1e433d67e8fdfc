"""Passphrases: stored only as a slow salted hash (Argon2id, argon2-cffi)."""

from __future__ import annotations

from dataclasses import dataclass

from prepbook.errors import InvalidInput

MIN_PASSPHRASE = 8  # common practice, no source


def check_new_passphrase(passphrase: str) -> None:
    if len(passphrase) < MIN_PASSPHRASE:
        raise InvalidInput(f"a passphrase needs at least {MIN_PASSPHRASE} characters")
    if passphrase != passphrase.strip():
        raise InvalidInput("a passphrase must not start or end with spaces")
    if any(not ch.isprintable() for ch in passphrase):
        raise InvalidInput("a passphrase must not contain control characters")


@dataclass(frozen=True)
class HashCost:
    """Argon2id parameters for a new passphrase hash.

    Every real user gets argon2-cffi's defaults (``hash_passphrase`` without a cost).
    A cheaper cost is only for invented users of a test or benchmark fixture, whose
    passphrases are public and whose history signs tens of thousands of reviews.
    Argon2 keeps the parameters in the hash, so verifying reads them from there.
    """

    time_cost: int
    memory_kib: int
    parallelism: int


def hash_passphrase(passphrase: str, cost: HashCost | None = None) -> str:
    from argon2 import PasswordHasher

    if cost is None:
        return PasswordHasher().hash(passphrase)
    return PasswordHasher(time_cost=cost.time_cost, memory_cost=cost.memory_kib,
                          parallelism=cost.parallelism).hash(passphrase)


def passphrase_matches(stored_hash: str | None, passphrase: str) -> bool:
    if not stored_hash:
        return False
    from argon2 import PasswordHasher
    from argon2.exceptions import InvalidHashError, VerificationError

    try:
        return PasswordHasher().verify(stored_hash, passphrase)
    except (VerificationError, InvalidHashError):
        return False
