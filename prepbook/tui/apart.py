"""Work the terminal app hands to a process of its own: a verify of the whole trail.

Why a process, not a thread: on a large trail verify is seconds of pure Python (hashing,
decoding, comparing rows). In a thread it shares the interpreter's lock with the screen:
the screen still answers keys in about 10 ms, but the verify itself took 8.9-9.4 s on the
ten-year database; in its own process, on another core, 6.3-6.5 s
(tests/benchmarks/tui_bench.py).

The child is ``python -m prepbook.tui.apart``, the same on Linux, macOS and Windows. It
reads the database's address from its standard input (never its command line, where
anyone on the machine could read a server's password) and writes the outcome to its
standard output as JSON; its error output is kept from the screen and shown as one line
if it fails. :meth:`Apart.stop` ends it at once: leaving the audit view or the app does
not wait for a verify nobody will read. (``multiprocessing`` would be the obvious tool,
but its helper process needs a real error stream, which Textual replaces while it runs.)
"""

from __future__ import annotations

import subprocess
import sys
import threading
from collections.abc import Callable

import msgspec

from prepbook.lab import auditing

Outcome = tuple[auditing.audit.VerifyReport | None, str | None]
"""The report, or None and the one line that says why there is none."""

VERIFY = "prepbook.tui.apart"
"""The module the child runs (``python -m``)."""


def verify_database(url: str) -> Outcome:
    """``auditing.verify`` of the database at ``url``."""
    from prepbook.errors import PrepbookError
    from prepbook.lab.database import open_database

    try:
        db = open_database(url)
    except PrepbookError as exc:
        return None, str(exc)
    try:
        return auditing.verify(db), None
    except PrepbookError as exc:
        return None, str(exc)
    finally:
        db.dispose()


def answer(work: Callable[[str], Outcome]) -> None:
    """The child's side: the address from standard input, the outcome to standard output."""
    url = sys.stdin.readline().rstrip("\n")
    sys.stdout.buffer.write(msgspec.json.encode(work(url)))
    sys.stdout.flush()


class Apart:
    """One run of ``python -m module`` given ``url``; ``done(outcome)`` is called on a
    thread of its own when the child ends. The caller hands it on to its screen."""

    def __init__(self, module: str, url: str, done: Callable[[Outcome], object]) -> None:
        self._stopped = False
        self._child = subprocess.Popen([sys.executable, "-m", module], stdin=subprocess.PIPE,
                                       stdout=subprocess.PIPE, stderr=subprocess.PIPE)
        threading.Thread(target=self._wait, args=(url, done), daemon=True).start()

    def _wait(self, url: str, done: Callable[[Outcome], object]) -> None:
        out, err = self._child.communicate(url.encode("utf-8") + b"\n")
        if self._stopped:
            return
        if self._child.returncode == 0:
            try:
                done(msgspec.json.decode(out, type=Outcome))
                return
            except msgspec.DecodeError as exc:
                why = f"its answer could not be read ({exc})"
        else:
            lines = err.decode("utf-8", "replace").strip().splitlines()
            why = f"exit {self._child.returncode}" + (f": {lines[-1]}" if lines else "")
        done((None, f"the verify process stopped ({why})"))

    def stop(self) -> None:
        """End the child now, finished or not."""
        self._stopped = True
        if self._child.poll() is None:
            self._child.kill()


if __name__ == "__main__":
    answer(verify_database)
