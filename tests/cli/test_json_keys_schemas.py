"""Every --json command has a published schema, and the documents the JSON-keys tests
read validate against it: ``tests/cli/conftest.py`` validates each document that a
``test_json_keys_*.py`` file reads with ``cli.json``; the two documents read another way
(`demo`, `config show`) are validated here."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from jsonschema import ValidationError
from typer.testing import CliRunner

from prepbook.cli.app import app
from prepbook.render import json_schemas
from tests.cli import schema_check
from tests.cli.test_json_keys_audit import _json_commands
from tests.conftest import Cli

# `prepbook schema` prints schemas, not a --json document: this file pins no command.
PINNED: set[str] = set()

DILUTE = ("calc", "dilute", "--stock", "1.0131", "--normality", "0.1", "--volume", "1000")


def test_every_json_command_has_a_schema_and_every_schema_a_command() -> None:
    assert set(json_schemas.commands()) == set(_json_commands())


@pytest.mark.parametrize("args", [("demo", "--json"), ("config", "show", "--json")])
def test_documents_read_without_cli_json_validate(tmp_path: Path, args: tuple[str, ...]) -> None:
    env = {"COLUMNS": "120", "PREPBOOK_CONFIG": str(tmp_path / "config.toml")}
    full = [*args, "--db", str(tmp_path / "d.db")] if args[0] == "demo" else list(args)
    result = CliRunner().invoke(app, full, env=env)
    assert result.exit_code == 0, result.output
    schema_check.validate_document(args, json.loads(result.stdout))


def test_cli_json_here_is_validated_against_the_schema(cli: Cli,
                                                       monkeypatch: pytest.MonkeyPatch) -> None:
    """The check in conftest.py runs: `calc dilute` read as if its schema were `calc
    adjust`'s fails, the real one passes."""
    assert cli.json(*DILUTE)["stock_ml"] > 0
    monkeypatch.setitem(json_schemas.DOCUMENTS, "calc dilute",
                        json_schemas.DOCUMENTS["calc adjust"])
    schema_check.validator.cache_clear()
    try:
        with pytest.raises(ValidationError):
            cli.json(*DILUTE)
    finally:
        schema_check.validator.cache_clear()
