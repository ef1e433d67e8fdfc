"""Session files: the tokens of this operating-system account's login sessions.

One file per database and person, in a folder only the owner may enter
(PREPBOOK_SESSION_DIR, else the platform's user state folder, ``platformdirs``), each
file readable by its owner alone. A file of another owner, or one that group or others
may read, is refused. The file holds only the random token; who may use it, and until
when, the database decides (``prepbook.lab.sessions.live``).
"""

from __future__ import annotations

import hashlib
import json
import os
import stat
from pathlib import Path
from typing import Any

from prepbook.errors import Refused

DIR_ENV = "PREPBOOK_SESSION_DIR"


def folder() -> Path:
    given = os.environ.get(DIR_ENV)
    if given:
        return Path(given).expanduser()
    from platformdirs import user_state_path

    return user_state_path("prepbook", appauthor=False) / "sessions"


def _digest(text: str) -> str:
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:24]


def _path(db: Any, name: str) -> Path:
    from prepbook.lab.sessions import database_identity

    return folder() / f"{_digest(database_identity(db.url))}-{_digest(name)}.json"


def _private(path: Path) -> bool:
    """True unless the file belongs to another account or group/others may read it
    (POSIX; on Windows the profile folder is the owner's own)."""
    if os.name != "posix":
        return True
    info = path.stat()
    return info.st_uid == os.getuid() and not info.st_mode & (stat.S_IRWXG | stat.S_IRWXO)


def save(db: Any, name: str, token: str) -> Path:
    """Keep ``token`` for ``name`` on ``db``, in a file only this account can read."""
    from prepbook.lab.sessions import database_identity

    where = folder()
    where.mkdir(mode=0o700, parents=True, exist_ok=True)
    path = _path(db, name)
    text = json.dumps({"database": database_identity(db.url), "user": name, "token": token})
    temporary = path.with_suffix(".tmp")
    temporary.unlink(missing_ok=True)
    fd = os.open(temporary, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    with os.fdopen(fd, "w", encoding="utf-8") as out:
        out.write(text)
    os.replace(temporary, path)
    return path


def _read(path: Path) -> dict[str, Any] | None:
    try:
        private = _private(path)
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not private:
        raise Refused(f"the session file {path} belongs to another account or others may "
                      "read it; delete it and log in again")
    return data if isinstance(data, dict) else None


def held(db: Any) -> dict[str, str]:
    """Person -> token of every session file of this account for ``db``."""
    from prepbook.lab.sessions import database_identity

    where = folder()
    if not where.is_dir():
        return {}
    prefix = _digest(database_identity(db.url)) + "-"
    out: dict[str, str] = {}
    for path in sorted(where.glob(f"{prefix}*.json")):
        data = _read(path)
        if data is None:
            continue
        name, token = data.get("user"), data.get("token")
        if isinstance(name, str) and isinstance(token, str) and path == _path(db, name):
            out[name] = token
    return out


def forget(db: Any, name: str) -> bool:
    """Delete ``name``'s session file for ``db``; False if there was none."""
    path = _path(db, name)
    if path.exists():
        path.unlink()
        return True
    return False
