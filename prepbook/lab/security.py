"""Passphrases: stored only as a slow salted hash (Argon2id, argon2-cffi)."""

from __future__ import annotations

from prepbook.errors import InvalidInput

MIN_PASSPHRASE = 8  # common practice, no source


def check_new_passphrase(passphrase: str) -> None:
    if len(passphrase) < MIN_PASSPHRASE:
        raise InvalidInput(f"a passphrase needs at least {MIN_PASSPHRASE} characters")
    if passphrase != passphrase.strip():
        raise InvalidInput("a passphrase must not start or end with spaces")
    if any(not ch.isprintable() for ch in passphrase):
        raise InvalidInput("a passphrase must not contain control characters")


def hash_passphrase(passphrase: str) -> str:
    from argon2 import PasswordHasher

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
