"""The user's configuration file and where each setting comes from.

The file is TOML, in the platform's configuration folder (``platformdirs``:
``~/.config/prepbook/config.toml`` on Linux, ``~/Library/Application Support/prepbook/``
on macOS, ``%LOCALAPPDATA%\\prepbook\\`` on Windows), or wherever ``PREPBOOK_CONFIG``
names::

    database = "/srv/lab/prepbook.db"    # a file path or an SQLAlchemy URL
    timezone = "Europe/Vienna"           # the lab's IANA time zone
    witness_folder = "/srv/lab/witness"
    signing_key_file = "/etc/prepbook/checkpoint.key"

    [display]
    width = 100                          # columns for tables
    color = false

Each setting is taken from the first of: a command-line option, an environment
variable, the file, the default. A relative path in the file is relative to the
file's folder, so the file means the same wherever the command is run. Reading the
file is pure: this module imports nothing of storage, services or the edges.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any, Literal

import msgspec

from prepbook.errors import InvalidInput

CONFIG_ENV = "PREPBOOK_CONFIG"
DEFAULT_DB = "prepbook.db"

Source = Literal["option", "environment", "file", "default"]


class Setting(msgspec.Struct, frozen=True):
    """One setting's value and where it came from (``origin``: the option, variable
    or file that gave it; empty for a default)."""

    name: str
    value: str | int | bool | None
    source: Source
    origin: str = ""


def _text(name: str, value: Any) -> str:
    if not isinstance(value, str) or not value.strip():
        raise InvalidInput(f"{name} must be a non-empty text, not {value!r}")
    return value


def _timezone(name: str, value: Any) -> str:
    from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

    text = _text(name, value)
    try:
        ZoneInfo(text)
    except (ZoneInfoNotFoundError, ValueError):
        raise InvalidInput(f"{name} {text!r} is not an IANA time zone name "
                           "(such as Europe/Vienna or America/Chicago)") from None
    return text


def _width(name: str, value: Any) -> int:
    if isinstance(value, str) and value.strip().isdigit():
        value = int(value)
    if isinstance(value, bool) or not isinstance(value, int) or not 40 <= value <= 1000:
        raise InvalidInput(f"{name} must be a whole number of columns from 40 to 1000, "
                           f"not {value!r}")
    return value


_TRUE, _FALSE = ("1", "true", "yes", "on"), ("0", "false", "no", "off")


def _flag(name: str, value: Any) -> bool:
    if isinstance(value, str) and value.strip().lower() in _TRUE + _FALSE:
        return value.strip().lower() in _TRUE
    if not isinstance(value, bool):
        raise InvalidInput(f"{name} must be true or false, not {value!r}")
    return value


class _Spec(msgspec.Struct, frozen=True):
    env: str
    parse: Callable[[str, Any], str | int | bool]
    default: str | None
    path: bool = False  # relative to the file's folder when given in the file


# The settings in the order `config show` lists them; a dotted name is a key of a table.
SPECS: dict[str, _Spec] = {
    "database": _Spec("PREPBOOK_DB", _text, DEFAULT_DB, path=True),
    "timezone": _Spec("PREPBOOK_TIMEZONE", _timezone, None),
    "witness_folder": _Spec("PREPBOOK_WITNESS_FOLDER", _text, None, path=True),
    "signing_key_file": _Spec("PREPBOOK_SIGNING_KEY_FILE", _text, None, path=True),
    "witness_database": _Spec("PREPBOOK_WITNESS_DATABASE", _text, None),
    "audit_keyring": _Spec("PREPBOOK_AUDIT_KEYRING", _text, None, path=True),
    "display.width": _Spec("PREPBOOK_DISPLAY_WIDTH", _width, None),
    "display.color": _Spec("PREPBOOK_DISPLAY_COLOR", _flag, None),
    "balance_profiles": _Spec("PREPBOOK_BALANCE_PROFILES", _text, None, path=True),
}


def config_path() -> Path:
    """The configuration file: ``PREPBOOK_CONFIG`` if set, else ``config.toml`` in the
    platform's configuration folder for prepbook (whether or not it exists)."""
    named = os.environ.get(CONFIG_ENV)
    if named:
        return Path(named).expanduser()
    from platformdirs import user_config_path

    return user_config_path("prepbook", appauthor=False) / "config.toml"


def _flatten(table: Mapping[str, Any], prefix: str = "") -> dict[str, Any]:
    flat: dict[str, Any] = {}
    for key, value in table.items():
        name = f"{prefix}{key}"
        if isinstance(value, dict) and any(s.startswith(f"{name}.") for s in SPECS):
            flat |= _flatten(value, f"{name}.")
        else:
            flat[name] = value
    return flat


def read_file(path: Path) -> dict[str, str | int | bool]:
    """The settings the file gives, validated; empty when it does not exist.
    A malformed file, an unknown key or a bad value is an ``InvalidInput``."""
    import tomllib

    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        return {}
    except tomllib.TOMLDecodeError as exc:
        raise InvalidInput(f"configuration file {path} is not valid TOML: {exc}") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InvalidInput(f"configuration file {path} cannot be read: {exc}") from None
    settings: dict[str, str | int | bool] = {}
    for name, value in _flatten(data).items():
        spec = SPECS.get(name)
        if spec is None:
            raise InvalidInput(f"configuration file {path}: unknown setting {name!r} "
                               f"(known: {', '.join(SPECS)})")
        try:
            parsed = spec.parse(name, value)
        except InvalidInput as exc:
            raise InvalidInput(f"configuration file {path}: {exc}") from None
        if spec.path and isinstance(parsed, str) and "://" not in parsed:
            parsed = str(path.parent / Path(parsed).expanduser())  # an absolute one stays
        settings[name] = parsed
    return settings


def resolve(given: Mapping[str, Setting] | None = None) -> list[Setting]:
    """Every setting with its value and source: ``given`` (from options, already
    resolved by the command line) first, then the environment, the file, the default."""
    given = given or {}
    path = config_path()
    from_file: dict[str, str | int | bool] | None = None
    settings = []
    for name, spec in SPECS.items():
        if name in given:
            settings.append(given[name])
            continue
        env = os.environ.get(spec.env)
        if env:
            settings.append(Setting(name, spec.parse(spec.env, env), "environment", spec.env))
            continue
        if from_file is None:
            from_file = read_file(path)
        if name in from_file:
            settings.append(Setting(name, from_file[name], "file", str(path)))
        else:
            settings.append(Setting(name, spec.default, "default"))
    return settings


def setting(name: str, given: Mapping[str, Setting] | None = None) -> Setting:
    """One setting, resolved as :func:`resolve` does (the file is read only if needed)."""
    if given and name in given:
        return given[name]
    return next(s for s in resolve(given) if s.name == name)
