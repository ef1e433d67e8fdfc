"""The one exception root of prepbook.

Every error a user can cause is a ``PrepbookError``. The command line turns it
into a one-line message on stderr and exit status 1 in exactly one place
(``prepbook.cli.main``). Each subclass also inherits the builtin it resembles so
library callers can catch it the ordinary way.
"""

from __future__ import annotations


class PrepbookError(Exception):
    """Root of every error prepbook raises on purpose."""

    exit_code = 1


class InvalidInput(PrepbookError, ValueError):
    """A value the user gave is malformed, out of range or inconsistent."""


class NotFound(PrepbookError, LookupError):
    """A code or name (material, spec, lot, instrument, batch, run, user) is unknown."""


class Refused(PrepbookError, PermissionError):
    """A rule or a permission says no (self-review, wrong role, expired lot, ...)."""


class IntegrityError(PrepbookError):
    """The stored record is not what the audit trail says it should be."""


class DatabaseError(PrepbookError):
    """The database cannot be opened, created or upgraded."""
