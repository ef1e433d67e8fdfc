"""Validating a ``--json`` document against its command's schema, as a test does: objects
closed to keys the schema does not name (the published schemas stay open to keys a later
version adds; here an undeclared key is a schema that fell behind its command)."""

from __future__ import annotations

import copy
from collections.abc import Sequence
from functools import cache
from typing import Any

from prepbook import __version__
from prepbook.render import json_schemas


def command_of(args: Sequence[str]) -> str:
    """The command a CLI argument list runs (the longest one with a schema)."""
    for n in (2, 1):
        name = " ".join(args[:n])
        if name in json_schemas.DOCUMENTS:
            return name
    raise AssertionError(f"no JSON schema for prepbook {' '.join(args)}")


def closed(schema: dict[str, Any]) -> dict[str, Any]:
    """``schema`` with every object that lists its properties closed to other keys."""
    out = copy.deepcopy(schema)

    def close(node: Any) -> None:
        if isinstance(node, dict):
            if "properties" in node:
                node["additionalProperties"] = False
            for value in node.values():
                close(value)
        elif isinstance(node, list):
            for value in node:
                close(value)

    close(out)
    return out


@cache
def validator(command: str) -> Any:
    from jsonschema import Draft202012Validator

    schema = closed(json_schemas.schema(command))
    Draft202012Validator.check_schema(schema)
    return Draft202012Validator(schema)


def validate_document(args: Sequence[str], document: Any) -> None:
    """Raise ``jsonschema.ValidationError`` unless ``document`` fits its command's schema;
    a document that is an object must begin with ``version``, the version of prepbook
    that wrote it."""
    validator(command_of(args)).validate(document)
    if isinstance(document, dict):
        assert next(iter(document)) == "version", list(document)
        assert document["version"] == __version__, document["version"]
