"""The package's record types: frozen ``msgspec.Struct`` classes, and their plain data.

Pure. Every value a service returns, and every entry of the catalog and result of the
core, is declared ``class X(msgspec.Struct, frozen=True)`` (DEVELOPERS.md says why:
start-up). ``msgspec.structs.replace`` makes a changed copy, ``msgspec.structs.asdict``
gives a record's own fields (one level), and :func:`as_data` below a record as plain
data all the way down, for JSON.
"""

from __future__ import annotations

from datetime import date, datetime
from decimal import Decimal
from typing import Any, cast

import msgspec


def as_data(record: msgspec.Struct) -> dict[str, Any]:
    """A record as a mapping of its fields in their declared order, the records inside it
    (alone or in tuples, lists and mappings) as mappings too, as ``dataclasses.asdict``
    does. Dates and times stay as they are: JSON writers give them their own format."""
    return cast(dict[str, Any], msgspec.to_builtins(
        record, builtin_types=(datetime, date, Decimal)))
