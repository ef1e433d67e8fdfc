"""`prepbook schema`: the JSON Schema (draft 2020-12) of each command's --json document,
made from the record types the document is written from; a document with a key missing
or of the wrong type fails it (jsonschema, the reference validator for Python)."""

from __future__ import annotations

import json
import subprocess
import sys
import typing
from pathlib import Path
from typing import Any

import msgspec
import pytest
from jsonschema import Draft202012Validator, ValidationError

from prepbook import __version__
from prepbook.render import json_schemas
from tests.cli.schema_check import closed, validate_document
from tests.conftest import Cli

DILUTE = ("calc", "dilute", "--stock", "1.0131", "--normality", "0.1", "--volume", "1000")
NORMALITY = ("calc", "normality", "--standard", "KHP", "--rep", "0.8085:39.16",
             "--rep", "0.8116:39.29", "--rep", "0.8596:41.67")


def test_without_a_command_it_lists_the_commands_that_have_a_schema(cli: Cli) -> None:
    listed = cli.ok("schema").stdout.splitlines()
    assert listed == json_schemas.commands()
    assert {"batch show", "status", "calc normality", "audit verify"} <= set(listed)


def test_a_command_prints_its_schema(cli: Cli) -> None:
    shown = json.loads(cli.ok("schema", "batch", "show").stdout)
    assert shown == json_schemas.schema("batch show")
    assert shown["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    assert shown["$id"] == f"urn:prepbook:{__version__}:json:batch-show"
    assert shown["version"] == __version__
    # The document is an object: its keys are written out in place, `version` first.
    assert shown["type"] == "object" and "BatchRecord" not in shown["$defs"]
    assert shown["required"][0] == "version"
    assert {"batch", "runs", "assays"} <= set(shown["required"])
    assert shown["properties"]["runs"]["items"] == {"$ref": "#/$defs/RunRecord"}


def _roots(schema: dict[str, Any]) -> list[dict[str, Any]]:
    """The document shapes a schema allows (one, or the branches of its anyOf)."""
    return list(schema["anyOf"]) if "anyOf" in schema else [schema]


@pytest.mark.parametrize("command", json_schemas.commands())
def test_every_object_document_requires_the_version_that_wrote_it(command: str) -> None:
    schema = json_schemas.schema(command)
    roots = _roots(schema)
    for root in roots:
        assert root["type"] in ("object", "array"), root
        if root["type"] == "object":
            assert root["required"][0] == "version" and list(root["properties"])[0] == "version"
            assert root["properties"]["version"]["type"] == "string"
            # An object document without `version`, or with a number there, fails.
            validator = Draft202012Validator({**schema, **root})
            assert "'version' is a required property" in \
                [e.message for e in validator.iter_errors({})]
            assert "1 is not of type 'string'" in \
                [e.message for e in validator.iter_errors({"version": 1})]
        else:  # `status` and the other lists stay lists: no version inside
            assert "version" not in json.dumps(root.get("items", {}).get("properties", {}))


def test_a_field_named_version_is_refused_rather_than_overwritten(
        monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]) -> None:
    """The instrument connection's record number was `version` before 0.1.0 was released:
    it is `connection_version`, and a document field of that name cannot come back."""
    from prepbook.cli import output

    with pytest.raises(TypeError, match="version"):
        output.emit_json({"balance": "BAL-1", "version": 2})
    assert capsys.readouterr().out == ""

    class Versioned(msgspec.Struct, frozen=True):
        balance: str
        version: int

    monkeypatch.setitem(json_schemas.DOCUMENTS, "instrument connect",
                        (__name__ + ":Versioned",))
    monkeypatch.setattr(sys.modules[__name__], "Versioned", Versioned, raising=False)
    with pytest.raises(TypeError, match="Versioned has a field 'version'"):
        json_schemas.schema("instrument connect")


def test_emit_json_puts_version_first_in_objects_only(
        capsys: pytest.CaptureFixture[str]) -> None:
    from prepbook.cli import output

    output.emit_json({"b": 1, "a": float("nan")})
    assert capsys.readouterr().out == \
        f'{{\n  "version": "{__version__}",\n  "b": 1,\n  "a": null\n}}\n'
    output.emit_json([{"b": 1}])
    assert json.loads(capsys.readouterr().out) == [{"b": 1}]


@pytest.mark.parametrize("command", json_schemas.commands())
def test_every_schema_is_a_valid_draft_2020_12_schema(command: str) -> None:
    Draft202012Validator.check_schema(json_schemas.schema(command))


def test_a_missing_key_or_a_wrong_type_fails_validation(cli: Cli) -> None:
    document = cli.json(*DILUTE)
    validate_document(DILUTE, document)
    schema = json_schemas.schema("calc dilute")
    Draft202012Validator(schema).validate(document)
    for broken in ({k: v for k, v in document.items() if k != "stock_ml"},
                   {**document, "stock_ml": "98.7"},
                   {**document, "volume_ml": None}):
        with pytest.raises(ValidationError):
            Draft202012Validator(schema).validate(broken)
    # Deeper down: a budget line of `calc normality` without its value, a replicate's
    # outlier flag as text.
    document = cli.json(*NORMALITY)
    schema = json_schemas.schema("calc normality")
    Draft202012Validator(schema).validate(document)
    line = {k: v for k, v in document["budget"][0].items() if k != "value"}
    with pytest.raises(ValidationError, match="'value' is a required property"):
        Draft202012Validator(schema).validate({**document, "budget": [line]})
    replicate = {**document["replicates"][0], "outlier": "no"}
    with pytest.raises(ValidationError, match="'no' is not of type 'boolean'"):
        Draft202012Validator(schema).validate({**document, "replicates": [replicate]})


def test_published_schemas_allow_new_keys_and_the_tests_do_not(cli: Cli) -> None:
    document = {**cli.json(*DILUTE), "added_later": 1}
    schema = json_schemas.schema("calc dilute")
    Draft202012Validator(schema).validate(document)  # DESIGN section 4: add freely
    with pytest.raises(ValidationError, match="added_later"):
        Draft202012Validator(closed(schema)).validate(document)


def test_all_to_a_folder_writes_one_file_each_and_never_over_one(cli: Cli,
                                                                  tmp_path: Path) -> None:
    out = tmp_path / "schemas"
    out.mkdir()
    result = cli.ok("schema", "--all", "--out", str(out))
    assert result.stdout.strip() == f"wrote {len(json_schemas.commands())} schemas to {out}"
    files = sorted(p.name for p in out.iterdir())
    assert files == sorted(f"{c.replace(' ', '-')}.schema.json" for c in json_schemas.commands())
    assert json.loads((out / "audit-verify.schema.json").read_text(encoding="utf-8")) == \
        json_schemas.schema("audit verify")
    # One file there already: nothing is written, not even the files that are not there.
    again = tmp_path / "again"
    again.mkdir()
    (again / "status.schema.json").write_text("kept", encoding="utf-8")
    refused = cli.refused("schema", "--all", "--out", str(again))
    assert "status.schema.json already exists" in refused.stderr
    assert len(refused.stderr.splitlines()) == 1
    assert [p.name for p in again.iterdir()] == ["status.schema.json"]
    assert (again / "status.schema.json").read_text(encoding="utf-8") == "kept"
    cli.ok("schema", "--all", "--out", str(again), "--replace")
    assert json.loads((again / "status.schema.json").read_text(encoding="utf-8")) == \
        json_schemas.schema("status")
    assert len(list(again.iterdir())) == len(files)
    one = tmp_path / "one"
    one.mkdir()
    cli.ok("schema", "trend", "--out", str(one))
    assert [p.name for p in one.iterdir()] == ["trend.schema.json"]


def test_all_prints_every_schema_by_command(cli: Cli) -> None:
    shown = json.loads(cli.ok("schema", "--all").stdout)
    assert list(shown) == json_schemas.commands()
    assert shown["calc salt"] == json_schemas.schema("calc salt")


@pytest.mark.parametrize(("args", "words"), [
    (("schema", "batch", "nope"), "no --json document for 'batch nope'"),
    (("schema", "status", "--all"), "not both"),
    (("schema", "--out", "x"), "--out needs a command or --all"),
    (("schema", "status", "--out", "missing-folder"), "does not exist"),
])
def test_bad_requests_are_one_line_and_write_nothing(cli: Cli, tmp_path: Path,
                                                     monkeypatch: pytest.MonkeyPatch,
                                                     args: tuple[str, ...], words: str) -> None:
    monkeypatch.chdir(tmp_path)
    result = cli.refused(*args)
    assert words in result.stderr and len(result.stderr.splitlines()) == 1
    assert result.stdout == "" and list(tmp_path.iterdir()) == []


def _reached(kind: Any, seen: set[type]) -> None:
    """Every record type a type's document holds, at any depth."""
    for inner in typing.get_args(kind):
        _reached(inner, seen)
    if isinstance(kind, type) and issubclass(kind, msgspec.Struct) and kind not in seen:
        seen.add(kind)
        for hint in typing.get_type_hints(kind).values():
            _reached(hint, seen)


def test_every_record_written_its_own_way_is_described() -> None:
    """A record with a ``to_json()`` writes a shape of its own: its schema must say
    how (``json_schemas.RESHAPED``), else the schema would describe its fields."""
    for command in json_schemas.commands():
        json_schemas.schema(command)  # binds the names the services import for mypy only
    seen: set[type] = set()
    for refs in json_schemas.DOCUMENTS.values():
        for ref in refs:
            _reached(json_schemas.load(ref), seen)
    own_way = {k.__name__ for k in seen if hasattr(k, "to_json")}
    assert own_way, "no record writes its own JSON: the walk found nothing"
    assert own_way <= set(json_schemas.RESHAPED), own_way - set(json_schemas.RESHAPED)


def test_the_schema_code_loads_only_when_asked() -> None:
    """Start-up: a command other than `schema` does not import the schemas (msgspec it
    does: the records are msgspec Structs)."""
    code = ("import sys\nfrom typer.testing import CliRunner\n"
            "from prepbook.cli.app import app\n"
            f"r = CliRunner().invoke(app, {list(DILUTE) + ['--json']!r})\n"
            "assert r.exit_code == 0, r.output\n"
            "print([m for m in ('prepbook.render.json_schemas', "
            "'prepbook.cli.schema') if m in sys.modules])\n")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          check=True, timeout=120)
    assert proc.stdout.strip().splitlines()[-1] == "[]"
