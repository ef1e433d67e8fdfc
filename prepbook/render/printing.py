"""Sending a finished PDF to the operating system's print system.

On Linux and macOS the file goes to CUPS with ``lp`` (or the BSD ``lpr`` where there is
no ``lp``), to the default printer unless one is named; on Windows to the default
printer through the shell's "print" verb of the file's associated program. The file
stays where it was written: printing is a copy of it, never instead of it.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

from prepbook.errors import InvalidInput

TIMEOUT_S = 60  # a print spooler answers in well under a minute: common practice, no source


def windows() -> bool:
    """Whether the label goes through the Windows shell's "print" verb (not lp/lpr)."""
    return sys.platform == "win32"


def command(file: Path, printer: str | None = None) -> list[str]:
    """The command that queues ``file`` on ``printer`` (default: the system's default
    printer); InvalidInput with one line if the system has no print command."""
    lp = shutil.which("lp")
    if lp:
        return [lp, *(["-d", printer] if printer else []), "--", str(file)]
    lpr = shutil.which("lpr")
    if lpr:
        return [lpr, *(["-P", printer] if printer else []), str(file)]
    raise InvalidInput(f"no print command found (lp or lpr); {file} is written: print it "
                       "from there")


def check(printer: str | None = None) -> None:
    """InvalidInput with one line, before anything is written, if printing cannot work."""
    if windows():
        if printer:  # the print verb has no printer to name: refuse rather than misprint
            raise InvalidInput("--printer cannot choose a printer on Windows, where the "
                               "label goes to the default printer: leave out --printer, or "
                               "make that printer the default")
        return
    if not (shutil.which("lp") or shutil.which("lpr")):
        raise InvalidInput("no print command found (lp or lpr): install CUPS, or leave out "
                           "--print and print the PDF file yourself")


def send(file: Path, printer: str | None = None) -> str:
    """Queue ``file`` for printing; returns what the print system said (its job line)."""
    check(printer)
    if windows():
        try:
            os.startfile(file, "print")  # type: ignore[attr-defined]  # Windows only
        except OSError as exc:
            raise InvalidInput(f"could not print {file}: {exc.strerror or exc}") from None
        return "sent to the default printer"
    argv = command(file, printer)
    try:
        done = subprocess.run(argv, capture_output=True, text=True, timeout=TIMEOUT_S,
                              check=False)
    except (OSError, subprocess.TimeoutExpired) as exc:
        raise InvalidInput(f"could not print {file}: {exc}") from None
    said = " ".join((done.stdout or done.stderr or "").split())
    if done.returncode != 0:
        raise InvalidInput(f"the printer refused {file}: {said or f'exit {done.returncode}'}")
    return said or "sent to the printer"
