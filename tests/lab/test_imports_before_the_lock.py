"""No library is imported while a write holds the lab's writer lock.

The first standardization in a process used to import scipy's root finder (0.3-1 s);
under the lock every other bench waited that long. Its pH is now found by bisection
(``chem.equilibria._bisect``), so a standardization imports no scipy at all, and no
other library is imported while the lock is held.
"""

from __future__ import annotations

import json
import subprocess
import sys

from tests.cli.test_bench_flow import REPS, _make_batch, bench  # noqa: F401
from tests.conftest import Cli

# Run in a fresh interpreter: this test process may have imported scipy already.
_SCRIPT = """
import json, sys
from sqlalchemy import event
from prepbook.lab import runs
from prepbook.lab.database import open_database

db = open_database(sys.argv[1])
under_lock, held = set(), []

def before(_conn, _cursor, statement, *_args):
    if statement.startswith("BEGIN IMMEDIATE") or "pg_advisory_xact_lock" in statement:
        held.append(set(sys.modules))

def commit(_conn):
    if held:
        under_lock.update(set(sys.modules) - held.pop())

event.listen(db.engine, "before_cursor_execute", before)
event.listen(db.engine, "commit", commit)
runs.standardize(db, actor="ben", batch=sys.argv[2], replicates=json.loads(sys.argv[3]),
                 lot="KHP-0001", balance="BAL-1", burette="BUR-1")
db.dispose()
print(json.dumps({"under_lock": sorted(under_lock), "scipy": "scipy" in sys.modules,
                  "numbers": "uncertainties" in sys.modules}))
"""


def test_a_standardization_imports_no_library_under_the_writer_lock_and_no_scipy(
        bench: Cli) -> None:  # noqa: F811
    batch = _make_batch(bench)
    done = subprocess.run([sys.executable, "-c", _SCRIPT, str(bench.db), batch,
                           json.dumps(REPS)], capture_output=True, text=True, check=True)
    seen = json.loads(done.stdout)
    assert seen["numbers"]  # the computation ran (its uncertainty needs this library)
    assert not seen["scipy"]
    libraries = {"scipy", "numpy", "uncertainties", "pandas"}
    assert [m for m in seen["under_lock"] if m.split(".")[0] in libraries] == []
