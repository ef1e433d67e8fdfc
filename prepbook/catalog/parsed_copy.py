"""Reading the data files: their bytes, their TOML, and the parsed copy beside them.

``data/parsed.json`` holds the data files as tomllib parses them, with each file's
length and CRC-32. tomllib is pure Python, and parsing the files costs more than
``calc normality`` computes; JSON is parsed in C. The copy is used only while the
digest it records equals the digest of the files as they are now, so an edited file (a
chemist's correction, a test's altered copy) is always read from its TOML, and a
missing, unreadable or stale copy is simply not used: it costs time, never a wrong
value. ``python -m prepbook.catalog.refresh`` rewrites it;
``tests/catalog/test_parsed_copy.py`` fails while it is stale.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from typing import Any

from prepbook.catalog.models import CatalogDataError

#: The data files, in the order they are read and digested.
FILES = ("ghs.toml", "materials.toml", "reagents.toml", "indicators.toml", "specs.toml",
         "analytes.toml", "ions.toml")

#: The data files as parsed, beside them: ``{"digest": ..., "files": {name: parsed}}``.
PARSED_COPY = "parsed.json"


def data_directory(directory: Path | None = None) -> Path:
    """Where the data files are: the package's own (package data) by default."""
    return Path(__file__).with_name("data") if directory is None else Path(directory)


def read_raw(base: Path) -> dict[str, bytes]:
    """Each data file's bytes; a missing file is refused."""
    raw: dict[str, bytes] = {}
    for name in FILES:
        try:
            raw[name] = (base / name).read_bytes()
        except FileNotFoundError as exc:
            raise CatalogDataError(f"catalog file {name} is missing ({exc})") from exc
    return raw


def files_digest(raw: Mapping[str, bytes]) -> str:
    """Each data file's name, length and CRC-32, in their fixed order.

    Enough to tell an edited file from the one the parsed copy was made from (a chance
    edit keeping both length and CRC is about one in four billion); it is no guard
    against tampering, and needs none: whoever can edit these files can edit the copy.
    zlib is loaded at start-up anyway; hashlib would cost more than the whole check.
    """
    import zlib

    return ";".join(f"{name}:{len(raw[name])}:{zlib.crc32(raw[name]):08x}" for name in FILES)


def read_parsed_copy(base: Path, raw: Mapping[str, bytes]) -> dict[str, Any] | None:
    """The parsed copy's files when it was made from exactly these bytes, else None."""
    import json

    try:
        stored = json.loads((base / PARSED_COPY).read_bytes())
    except (OSError, ValueError):
        return None
    if not isinstance(stored, dict) or stored.get("digest") != files_digest(raw):
        return None
    files = stored.get("files")
    if not isinstance(files, dict) or set(files) != set(FILES):
        return None
    return files


def parse_files(raw: Mapping[str, bytes]) -> dict[str, Any]:
    """The data files parsed from their TOML text (what the parsed copy must equal)."""
    import tomllib

    data: dict[str, Any] = {}
    for name in FILES:
        try:
            # Newlines as a text-mode read gives them (\r\n and \r become \n).
            text = raw[name].decode("utf-8").replace("\r\n", "\n").replace("\r", "\n")
            data[name] = tomllib.loads(text)
        except UnicodeDecodeError as exc:
            raise CatalogDataError(f"catalog file {name} is not UTF-8 text: {exc}") from exc
        except tomllib.TOMLDecodeError as exc:
            raise CatalogDataError(f"catalog file {name} is not valid TOML: {exc}") from exc
    return data


def read_files(directory: Path | None = None) -> dict[str, Any]:
    """The data files as parsed (keyed by file name): from the copy while it is current."""
    base = data_directory(directory)
    raw = read_raw(base)
    parsed = read_parsed_copy(base, raw)
    return parsed if parsed is not None else parse_files(raw)
