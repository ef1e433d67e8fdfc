"""Print-line profiles of balances: how the serial line is set up and how a line reads.

The profiles that ship are in ``balance_profiles.toml`` beside this module; a lab adds
or replaces profiles with a file of the same shape (see that file's comments). A
profile is checked when it is loaded: a bad one is one ``InvalidInput`` line naming
the file, the profile and the key.
"""

from __future__ import annotations

import re
import tomllib
from importlib import resources
from pathlib import Path
from typing import Any

import msgspec

from prepbook.errors import InvalidInput

SHIPPED_FILE = "balance_profiles.toml"
PARITIES = ("none", "even", "odd", "mark", "space")
STOP_BITS = (1, 1.5, 2)
DATA_BITS = (5, 6, 7, 8)
_NAME = re.compile(r"^[a-z0-9][a-z0-9-]{0,39}$")


class BalanceProfile(msgspec.Struct, frozen=True):
    """One named profile (the keys of the profile file, checked)."""

    name: str
    description: str
    speed: int
    data_bits: int
    parity: str
    stop_bits: float
    ask: str
    line: re.Pattern[str]
    stable: tuple[str, ...]
    overload: re.Pattern[str]
    print: str
    unstable_mark: str
    overload_line: str
    source: str  # the file it came from ("shipped" for prepbook's own)


def _need(raw: dict[str, Any], key: str, kind: type | tuple[type, ...], where: str) -> Any:
    if key not in raw:
        raise InvalidInput(f"{where}: the key {key!r} is missing")
    value = raw[key]
    if not isinstance(value, kind) or isinstance(value, bool):
        raise InvalidInput(f"{where}: {key} = {value!r} is not of the right kind")
    return value


def _pattern(text: str, key: str, where: str) -> re.Pattern[str]:
    try:
        return re.compile(text)
    except re.error as exc:
        raise InvalidInput(f"{where}: {key} is not a regular expression ({exc})") from None


def _profile(name: str, raw: Any, source: str) -> BalanceProfile:
    where = f"balance profile {name!r} in {source}"
    if not _NAME.match(name):
        raise InvalidInput(f"{where}: a name is lower-case letters, digits and '-'")
    if not isinstance(raw, dict):
        raise InvalidInput(f"{where}: expected a table of keys")
    known = set(BalanceProfile.__struct_fields__) - {"name", "source"}
    unknown = sorted(set(raw) - known)
    if unknown:
        raise InvalidInput(f"{where}: unknown key(s) {', '.join(unknown)}")
    parity = _need(raw, "parity", str, where)
    if parity not in PARITIES:
        raise InvalidInput(f"{where}: parity {parity!r} is not one of {', '.join(PARITIES)}")
    stop_bits = _need(raw, "stop_bits", (int, float), where)
    if stop_bits not in STOP_BITS:
        raise InvalidInput(f"{where}: stop_bits {stop_bits!r} is not 1, 1.5 or 2")
    data_bits = _need(raw, "data_bits", int, where)
    if data_bits not in DATA_BITS:
        raise InvalidInput(f"{where}: data_bits {data_bits!r} is not 5, 6, 7 or 8")
    speed = _need(raw, "speed", int, where)
    if speed <= 0:
        raise InvalidInput(f"{where}: speed {speed!r} must be a positive baud rate")
    line = _pattern(_need(raw, "line", str, where), "line", where)
    if not {"value", "unit"} <= set(line.groupindex):
        raise InvalidInput(f"{where}: line needs the named groups value and unit")
    stable = _need(raw, "stable", list, where)
    if not all(isinstance(m, str) for m in stable):
        raise InvalidInput(f"{where}: stable is a list of marks (strings)")
    template = _need(raw, "print", str, where)
    try:
        template.format(mark="S", value="1.0", signed="+1.0", unit="g")
    except (KeyError, ValueError, IndexError) as exc:
        raise InvalidInput(f"{where}: print is not a usable line pattern ({exc})") from None
    return BalanceProfile(
        name=name, description=str(raw.get("description", "")), speed=speed,
        data_bits=data_bits, parity=parity, stop_bits=float(stop_bits),
        ask=_need(raw, "ask", str, where), line=line, stable=tuple(stable),
        overload=_pattern(_need(raw, "overload", str, where), "overload", where),
        print=template, unstable_mark=_need(raw, "unstable_mark", str, where),
        overload_line=_need(raw, "overload_line", str, where), source=source)


def _parse(text: str, source: str) -> dict[str, BalanceProfile]:
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InvalidInput(f"the balance profiles in {source} are not valid TOML: {exc}") from None
    table = data.get("profile", {})
    if not isinstance(table, dict) or set(data) - {"profile"}:
        raise InvalidInput(f"{source}: expected only [profile.NAME] tables")
    return {name: _profile(name, raw, source) for name, raw in table.items()}


def load_profiles(lab_file: str | Path | None = None) -> dict[str, BalanceProfile]:
    """The shipped profiles, and the lab's own from ``lab_file`` (which win on a name)."""
    text = resources.files("prepbook.devices").joinpath(SHIPPED_FILE).read_text("utf-8")
    profiles = _parse(text, "shipped")
    if lab_file:
        path = Path(lab_file).expanduser()
        try:
            own = path.read_text(encoding="utf-8")
        except (OSError, UnicodeDecodeError) as exc:
            raise InvalidInput(f"cannot read the lab's balance profiles {str(path)!r}: "
                               f"{getattr(exc, 'strerror', None) or exc}") from None
        profiles.update(_parse(own, str(path)))
    return profiles


def find_profile(name: str, lab_file: str | Path | None = None) -> BalanceProfile:
    profiles = load_profiles(lab_file)
    if name not in profiles:
        raise InvalidInput(f"no balance profile {name!r}; known: {', '.join(sorted(profiles))}")
    return profiles[name]
