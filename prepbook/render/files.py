"""Writing an output file whole or not at all.

The content goes to a temporary file in the target's own folder and is moved
over the target with ``os.replace`` only once it is complete, so a failure
(an error while drawing, a full disk, an interrupted run) never leaves a
partial file behind. An existing file is replaced only when asked.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Callable, Iterator
from pathlib import Path

from prepbook.errors import InvalidInput


def check_target(path: Path, *, replace: bool) -> Path:
    """The absolute target path, refused if its folder is missing or it exists unasked."""
    target = absolute(path)
    try:
        if target.is_dir():
            raise InvalidInput(f"{path} is a folder; give a file name")
        if not target.parent.is_dir():
            raise InvalidInput(f"cannot write {path}: folder {target.parent} does not exist")
        if not os.access(target.parent, os.W_OK | os.X_OK):
            raise InvalidInput(f"cannot write {path}: folder {target.parent} is not writable")
        exists = target.exists()
    except OSError as exc:  # a name too long for the file system, for one
        raise InvalidInput(f"cannot write {path}: {exc.strerror or exc}") from None
    if exists and not replace:
        raise InvalidInput(f"{path} already exists; pass --replace to overwrite it")
    return target


@contextlib.contextmanager
def staged(path: Path, *, replace: bool) -> Iterator[tuple[Path, Callable[[], None]]]:
    """A temporary path next to ``path`` and a ``commit()`` that moves it into place.

    Leaving the block without calling ``commit()`` (or with an exception) removes
    the temporary file; the target is untouched.
    """
    target = check_target(path, replace=replace)
    try:
        fd, tmp_name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part",
                                        dir=target.parent)
    except OSError as exc:
        raise InvalidInput(f"cannot write {path}: {exc.strerror or exc}") from None
    os.close(fd)
    tmp = Path(tmp_name)
    done = False

    def commit() -> None:
        nonlocal done
        if target.exists() and not replace:
            raise InvalidInput(f"{path} already exists; pass --replace to overwrite it")
        try:
            # mkstemp makes the file private (0600); give it the mode a new file would get.
            umask = os.umask(0)
            os.umask(umask)
            os.chmod(tmp, 0o666 & ~umask)
            os.replace(tmp, target)
        except OSError as exc:
            raise InvalidInput(f"cannot write {path}: {exc.strerror or exc}") from None
        done = True

    try:
        yield tmp, commit
    finally:
        if not done:
            with contextlib.suppress(FileNotFoundError):
                tmp.unlink()


def write_bytes(path: Path, data: bytes, *, replace: bool) -> Path:
    """Write ``data`` to ``path`` whole or not at all; returns the absolute path."""
    with staged(path, replace=replace) as (tmp, commit):
        try:
            tmp.write_bytes(data)
        except OSError as exc:
            raise InvalidInput(f"cannot write {path}: {exc.strerror or exc}") from None
        commit()
    return absolute(path)


def absolute(path: Path) -> Path:
    target = path.expanduser()
    return target if target.is_absolute() else Path.cwd() / target
