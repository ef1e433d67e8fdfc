"""A verify that waits for the test's word: the audit view's stand-in for a long one.

The audit view runs its verifier as ``python -m MODULE`` in another process, where a
test's monkeypatching does not reach; the test names this module instead, and a folder
in the environment (inherited by the child): the child writes its process id to
``started`` in it, waits until ``release`` appears, then verifies for real.
"""

from __future__ import annotations

import os
import time
from pathlib import Path

from prepbook.tui.apart import Outcome, answer, verify_database

FOLDER_ENV = "PREPBOOK_TEST_HELD_VERIFY"


def held_verify(url: str) -> Outcome:
    folder = Path(os.environ[FOLDER_ENV])
    (folder / "started").write_text(str(os.getpid()), encoding="utf-8")
    deadline = time.monotonic() + 60
    while not (folder / "release").exists():
        if time.monotonic() > deadline:
            return None, "the test never released the verify"
        time.sleep(0.01)
    return verify_database(url)


if __name__ == "__main__":
    answer(held_verify)
