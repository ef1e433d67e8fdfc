"""The schema revision this prepbook needs: the newest one in ``prepbook.migrations``.

A module of its own, importing nothing, so that opening a database
(``prepbook.store.engine``) can compare a file's revision with it without loading
Alembic, and ``prepbook.store.migrate`` (which upgrades to it) and the engine need
not import each other. tests/store/test_migrations.py keeps it equal to the newest
revision shipped.
"""

HEAD_REVISION = "d3f5a7c9e1b2"
