"""Passphrases (stored only as a slow salted hash: Argon2id, argon2-cffi), the lab's
passphrase policy, user names checked whole, and how long a lockout lasts."""

from __future__ import annotations

import unicodedata
from datetime import timedelta

import msgspec

from prepbook.errors import InvalidInput

MAX_NAME = 40
# The longest a lockout lasts, however many wrong passphrases: nobody, not even the last
# admin, is locked out for good (common practice, no source).
LONGEST_LOCK = timedelta(hours=24)


class PassphrasePolicy(msgspec.Struct, frozen=True):
    """What the lab asks of a new passphrase (settings ``passphrase_min_length`` and
    ``passphrase_name_rule``)."""

    min_length: int = 12
    refuse_name: bool = True


def check_new_passphrase(passphrase: str, *, name: str = "",
                         policy: PassphrasePolicy | None = None) -> None:
    """Refuse a new passphrase the policy does not allow (one line saying why)."""
    policy = policy or PassphrasePolicy()
    if len(passphrase) < policy.min_length:
        raise InvalidInput(f"a passphrase needs at least {policy.min_length} characters "
                           "(the lab's passphrase_min_length)")
    if passphrase != passphrase.strip():
        raise InvalidInput("a passphrase must not start or end with spaces")
    if any(not ch.isprintable() for ch in passphrase):
        raise InvalidInput("a passphrase must not contain control characters")
    if policy.refuse_name and name and folded(name) in folded(passphrase):
        raise InvalidInput(f"a passphrase must not contain the user's name ({name})")


def folded(text: str) -> str:
    """``text`` as compared for look-alikes: compatibility-normalized (NFKC), case-folded."""
    return unicodedata.normalize("NFKC", unicodedata.normalize("NFKC", text).casefold())


# Unicode categories a name may hold: letters, combining marks, decimal digits; plus . _ -
_NAME_CATEGORIES = ("L", "M", "Nd")
_NAME_PUNCTUATION = frozenset("._-")


def check_user_name(name: str, existing: list[str]) -> None:
    """Refuse a user name unless the whole of it is a clean name unlike every existing one.

    Checked whole (a trailing newline is a character like any other): 1-40 letters,
    digits, marks or . _ -, starting with a letter, in Unicode normal form C; no control,
    format (invisible), space or private-use character; and not a look-alike of an
    existing name, that is equal to it once both are NFKC-normalized and case-folded.
    """
    shown = ascii(name)
    if not 1 <= len(name) <= MAX_NAME:
        raise InvalidInput(f"user name {shown} must be 1-{MAX_NAME} characters")
    for ch in name:
        category = unicodedata.category(ch)
        if ch not in _NAME_PUNCTUATION and not category.startswith(_NAME_CATEGORIES):
            raise InvalidInput(
                f"user name {shown} holds {unicodedata.name(ch, f'U+{ord(ch):04X}')} "
                f"(category {category}); a name is letters, digits and . _ - only")
    if not unicodedata.category(name[0]).startswith("L"):
        raise InvalidInput(f"user name {shown} must start with a letter")
    if unicodedata.normalize("NFC", name) != name:
        raise InvalidInput(f"user name {shown} is not in Unicode normal form C; type it "
                           "again as composed characters")
    mine = folded(name)
    for other in existing:
        if folded(other) == mine:
            raise InvalidInput(f"user name {shown} looks like the existing user {other!r} "
                               "(names differing only by case or Unicode form are one name)")


def lock_period(failures: int, after: int, first: timedelta) -> timedelta | None:
    """How long ``failures`` wrong passphrases in a row lock a user out: none below
    ``after``, then ``first``, doubled by each further failure, at most a day."""
    if failures < after:
        return None
    doublings = min(failures - after, 16)
    return min(first * (2 ** doublings), LONGEST_LOCK)


class HashCost(msgspec.Struct, frozen=True):
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
