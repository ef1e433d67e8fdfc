"""Every document the JSON-keys tests read (``cli.json`` in ``test_json_keys_*.py``) is
also validated against its command's published schema (``prepbook schema``): the keys
those tests pin and the schemas cannot drift apart."""

from __future__ import annotations

from typing import Any

import pytest

from tests.cli.schema_check import validate_document
from tests.conftest import Cli


@pytest.fixture(autouse=True)
def _json_documents_match_their_schemas(request: pytest.FixtureRequest,
                                        monkeypatch: pytest.MonkeyPatch) -> None:
    if not request.node.module.__name__.rpartition(".")[2].startswith("test_json_keys_"):
        return
    read = Cli.json

    def checked(self: Cli, *args: str, **kw: Any) -> Any:
        document = read(self, *args, **kw)
        validate_document(args, document)
        return document

    monkeypatch.setattr(Cli, "json", checked)
