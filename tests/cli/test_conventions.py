"""What users expect of a command-line tool: --version, shell completion, a configuration
file with a stated precedence, -v/-q, and a typed package with a buildable pyproject."""

from __future__ import annotations

import json
import logging
import os
import sqlite3
import subprocess
import sys
import tomllib
from importlib.metadata import version
from pathlib import Path

import pytest
from sqlalchemy.exc import OperationalError
from typer.testing import CliRunner, Result

from prepbook.cli.app import app

ROOT = Path(__file__).resolve().parents[2]


def run(*args: str, env: dict[str, str] | None = None, input: str | None = None) -> Result:
    return CliRunner().invoke(app, list(args), env={"COLUMNS": "100", **(env or {})},
                              input=input, prog_name="prepbook")


def one_line_error(result: Result, *words: str) -> None:
    assert result.exit_code == 1, (result.stdout, result.stderr)
    assert result.stdout == ""
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("prepbook: "), result.stderr
    for word in words:
        assert word in lines[0]


@pytest.fixture
def config_file(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """The file PREPBOOK_CONFIG names (conftest points it under tmp_path already)."""
    path = tmp_path / "conf" / "config.toml"
    path.parent.mkdir()
    monkeypatch.setenv("PREPBOOK_CONFIG", str(path))
    return path


def settings(result: Result) -> dict[str, dict[str, object]]:
    assert result.exit_code == 0, result.stderr
    return {s["name"]: s for s in json.loads(result.stdout)["settings"]}


# --version -----------------------------------------------------------------------------

def test_version_prints_the_installed_distributions_version() -> None:
    result = run("--version")
    assert result.exit_code == 0
    assert result.stdout == f"prepbook {version('prepbook')}\n"
    assert result.stderr == ""


# Shell completion ----------------------------------------------------------------------

def _own_process(*args: str) -> subprocess.CompletedProcess[str]:
    """Completion in a process of its own, as a shell runs it: Typer's completion keeps
    state between in-process runs, which made these tests depend on the ones before."""
    # The shell is named the way a shell names itself to a program it runs: $SHELL.
    return subprocess.run([sys.executable, "-m", "prepbook", *args], capture_output=True,
                          text=True, timeout=120, env={**os.environ, "SHELL": "/bin/bash"})


def test_completion_script_is_offered_for_bash() -> None:
    result = _own_process("--show-completion")
    assert result.returncode == 0, result.stderr
    assert "_PREPBOOK_COMPLETE=complete_bash" in result.stdout
    assert "complete " in result.stdout and "prepbook" in result.stdout


def test_completion_is_installed_under_home(tmp_path: Path) -> None:
    result = _own_process("--install-completion")
    assert result.returncode == 0, result.stderr
    home = tmp_path / "home"  # conftest's HOME
    assert "_PREPBOOK_COMPLETE" in (home / ".bash_completions" / "prepbook.sh").read_text()
    assert ".bash_completions/prepbook.sh" in (home / ".bashrc").read_text()


@pytest.mark.parametrize(("words", "expected"), [
    ("prepbook ba", {"batch", "backup"}),
    ("prepbook config p", {"path"}),
    ("prepbook calc norm", {"normality"}),
])
def test_completion_completes_commands_of_the_lazy_root(words: str, expected: set[str]) -> None:
    result = run(env={"_PREPBOOK_COMPLETE": "complete_bash", "COMP_WORDS": words,
                      "COMP_CWORD": str(len(words.split()) - 1)})
    assert result.exit_code == 0, result.stderr
    assert set(result.stdout.split()) == expected


# The configuration file ----------------------------------------------------------------

def test_help_states_the_precedence() -> None:
    text = " ".join(run("--help").stdout.split())
    assert ("Each setting is taken from the first of: a command-line option, an environment "
            "variable, the configuration file") in text
    assert "config" in text and "--version" in text and "-v, --verbose" in text


def test_without_a_file_the_database_is_prepbook_db_here(config_file: Path) -> None:
    shown = settings(run("config", "show", "--json"))
    assert shown["database"] == {"name": "database", "value": "prepbook.db",
                                 "source": "default", "origin": None}
    assert shown["timezone"]["value"] is None and shown["timezone"]["source"] == "default"


def test_show_names_where_each_setting_came_from(config_file: Path, tmp_path: Path) -> None:
    config_file.write_text('database = "lab.db"\ntimezone = "Europe/Vienna"\n'
                           'witness_folder = "/srv/witness"\n[display]\nwidth = 120\n'
                           'color = false\n', encoding="utf-8")
    # File only: a relative path is taken from the file's folder.
    shown = settings(run("config", "show", "--json"))
    assert shown["database"]["value"] == str(config_file.parent / "lab.db")
    assert shown["database"]["source"] == "file"
    assert shown["database"]["origin"] == str(config_file)
    assert shown["timezone"]["value"] == "Europe/Vienna"
    assert shown["display.width"]["value"] == 120 and shown["display.color"]["value"] is False
    assert Path(str(shown["witness_folder"]["value"])) == Path("/srv/witness")
    # The environment beats the file; an option beats the environment.
    env = {"PREPBOOK_DB": "env.db", "PREPBOOK_TIMEZONE": "America/Chicago"}
    shown = settings(run("config", "show", "--json", env=env))
    assert (shown["database"]["value"], shown["database"]["source"]) == ("env.db", "environment")
    assert shown["timezone"]["source"] == "environment"
    assert shown["timezone"]["origin"] == "PREPBOOK_TIMEZONE"
    shown = settings(run("--db", "opt.db", "config", "show", "--json", env=env))
    assert (shown["database"]["value"], shown["database"]["source"]) == ("opt.db", "option")
    assert shown["database"]["origin"] == "--db"


def test_show_as_a_table(config_file: Path) -> None:
    config_file.write_text('timezone = "Europe/Vienna"\n', encoding="utf-8")
    result = run("config", "show")
    assert result.exit_code == 0
    assert f"configuration file: {config_file}" in result.stdout
    rows = {line.split()[0]: line.split()[1:] for line in result.stdout.splitlines()
            if line.strip() and line.split()[0] in ("database", "timezone")}
    assert rows == {"database": ["prepbook.db", "default"], "timezone": ["Europe/Vienna", "file"]}


def test_a_command_opens_the_database_the_file_names(config_file: Path, tmp_path: Path,
                                                     monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    config_file.write_text('database = "from-file.db"\n', encoding="utf-8")
    result = run("init")
    assert result.exit_code == 0, result.stderr
    assert (config_file.parent / "from-file.db").is_file()
    assert not (tmp_path / "prepbook.db").exists()


def test_path_prints_the_file_prepbook_config_names(config_file: Path) -> None:
    result = run("config", "path")
    assert result.exit_code == 0
    assert result.stdout == f"{config_file}\n"
    assert "no file there yet" in result.stderr
    quiet = run("-q", "config", "path")
    assert quiet.stdout == f"{config_file}\n" and quiet.stderr == ""


@pytest.mark.skipif(sys.platform != "linux", reason="the XDG folder is Linux's convention")
def test_path_defaults_to_the_platforms_configuration_folder(
        tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("PREPBOOK_CONFIG")
    monkeypatch.setenv("XDG_CONFIG_HOME", str(tmp_path / "xdg"))
    result = run("config", "path")
    assert result.stdout == f"{tmp_path / 'xdg' / 'prepbook' / 'config.toml'}\n"


@pytest.mark.parametrize(("text", "words"), [
    ("database = \n", ("not valid TOML", "line 1")),
    ("databse = \"lab.db\"\n", ("unknown setting 'databse'", "known: database")),
    ("[display]\nfont = \"big\"\n", ("unknown setting 'display.font'",)),
    ('timezone = "Mars/Olympus"\n', ("'Mars/Olympus' is not an IANA time zone",)),
    ('timezone = "../../etc/passwd"\n', ("is not an IANA time zone",)),
    ("[display]\nwidth = 5\n", ("display.width", "40 to 1000")),
    ("database = 12\n", ("database must be a non-empty text",)),
])
def test_a_bad_file_is_one_line_and_exit_1(config_file: Path, tmp_path: Path,
                                           monkeypatch: pytest.MonkeyPatch, text: str,
                                           words: tuple[str, ...]) -> None:
    monkeypatch.chdir(tmp_path)
    config_file.write_text(text, encoding="utf-8")
    one_line_error(run("config", "show"), str(config_file), *words)
    one_line_error(run("init"), str(config_file), *words)
    assert not list(tmp_path.glob("*.db"))  # nothing written


def test_a_bad_environment_value_is_one_line(config_file: Path) -> None:
    one_line_error(run("config", "show", env={"PREPBOOK_TIMEZONE": "Nowhere/Town"}),
                   "PREPBOOK_TIMEZONE", "Nowhere/Town")


# -v and -q -----------------------------------------------------------------------------

def test_verbose_logs_the_command_and_the_database_on_stderr(tmp_path: Path) -> None:
    loud = run("-v", "--db", str(tmp_path / "a.db"), "init")
    plain = run("--db", str(tmp_path / "b.db"), "init")
    assert loud.exit_code == 0 and plain.exit_code == 0
    assert loud.stdout == plain.stdout.replace("b.db", "a.db")  # stdout unchanged by -v
    assert "prepbook: command started: prepbook init" in loud.stderr
    assert f"prepbook: database {tmp_path / 'a.db'} (from option --db)" in loud.stderr
    assert plain.stderr == ""


def test_verbose_keeps_json_on_stdout_clean(config_file: Path) -> None:
    plain = run("config", "show", "--json")
    loud = run("--verbose", "config", "show", "--json")
    assert loud.stdout == plain.stdout
    json.loads(loud.stdout)
    assert "command started: prepbook config show" in loud.stderr


def test_verbose_logs_each_write_conflict_retry(cli, monkeypatch: pytest.MonkeyPatch) -> None:
    from prepbook.lab import people
    from prepbook.store import retry

    cli.ok("init")
    original = people.add_user
    locked = [OperationalError("BEGIN IMMEDIATE", {},
                               sqlite3.OperationalError("database is locked"))] * 2

    def add_user(*args: object, **kwargs: object) -> object:
        if locked:
            raise locked.pop()
        return original(*args, **kwargs)  # type: ignore[arg-type]

    monkeypatch.setattr(people, "add_user", retry.on_conflict(add_user))
    monkeypatch.setattr(retry.time, "sleep", lambda _s: None)
    result = cli("-v", "user", "add", "ada", "--role", "admin", "--passphrase-stdin", "--json",
                 user="ada", input="ada-passphrase\n")
    assert result.exit_code == 0, result.stderr
    assert json.loads(result.stdout)["name"] == "ada"
    conflicts = [line for line in result.stderr.splitlines() if "write conflict" in line]
    assert len(conflicts) == 2
    assert "attempt 1 of 5: database is locked" in conflicts[0]
    assert "attempt 2 of 5" in conflicts[1]
    # Without -v the same retries say nothing, and the logger is left as it was.
    assert logging.getLogger("prepbook").handlers == []


def test_quiet_and_verbose_together_is_one_line() -> None:
    one_line_error(run("-v", "-q", "config", "path"), "cannot be used together")


# The package ---------------------------------------------------------------------------

def test_the_package_is_marked_typed_and_ships_the_marker() -> None:
    assert (ROOT / "prepbook" / "py.typed").is_file()
    project = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    assert "py.typed" in project["tool"]["setuptools"]["package-data"]["prepbook"]


def test_build_requires_a_setuptools_that_reads_pep_639_license_fields() -> None:
    # setuptools 76.1 refuses `license = "MIT"` with `license-files`; 77.0.1 builds the
    # wheel (both checked by a build without isolation; 77.0.0 was withdrawn).
    project = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    assert isinstance(project["project"]["license"], str) and project["project"]["license-files"]
    floor = next(r for r in project["build-system"]["requires"] if r.startswith("setuptools"))
    assert floor == "setuptools>=77.0.1"


def test_the_readmes_example_file_is_read_as_written(config_file: Path) -> None:
    import re

    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    example = re.search(r"```toml\n(.*?)```", readme, re.S)
    assert example, "README shows no configuration file"
    config_file.write_text(example.group(1), encoding="utf-8")
    shown = settings(run("config", "show", "--json"))
    assert {name for name, s in shown.items() if s["source"] == "file"} == set(shown)


def test_every_package_of_the_source_tree_is_installed() -> None:
    # A package left out of the list works in a checkout and fails once installed
    # (prepbook.store.audit was: `prepbook init` from a wheel raised ImportError).
    project = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    listed = set(project["tool"]["setuptools"]["packages"])
    in_tree = {".".join(p.parent.relative_to(ROOT).parts)
               for p in (ROOT / "prepbook").rglob("__init__.py")}
    assert in_tree <= listed, sorted(in_tree - listed)
