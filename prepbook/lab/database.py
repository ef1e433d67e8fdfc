"""The database as the edges see it.

The command line and the terminal app reach storage only through the service
layer; this module is the one door they use to open a database.
"""

from __future__ import annotations

from prepbook.store.engine import Database, open_database

__all__ = ["Database", "open_database"]
