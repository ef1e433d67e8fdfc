"""Storage: SQLAlchemy models, engine and sessions, the audit chain, the Alembic runner.

The only layer that touches SQLAlchemy sessions and Alembic. Import the modules
directly (``prepbook.store.engine``, ``.models``, ``.audit``, ``.migrate``); this
package imports nothing itself, so ``import prepbook.store`` stays free.
ORM objects leave this package only for the services in ``prepbook.lab``, which
use them inside one ``Database.session()``.
"""
