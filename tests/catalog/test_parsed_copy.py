"""The parsed copy of the catalog (``prepbook/catalog/data/parsed.json``) holds exactly
what tomllib gives for the data files, is used only while it was made from their
current bytes, and never hides an edit.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from prepbook.catalog import loader, parsed_copy, refresh

DATA = loader.data_directory()


@pytest.fixture
def data_dir(tmp_path: Path) -> Path:
    target = tmp_path / "data"
    shutil.copytree(DATA, target)
    return target


def _no_toml_parsing(monkeypatch: pytest.MonkeyPatch) -> None:
    def refuse(raw: object) -> dict:
        raise AssertionError("the TOML files were parsed")

    monkeypatch.setattr(parsed_copy, "parse_files", refuse)


def test_the_shipped_copy_is_current() -> None:
    # On failure run `python -m prepbook.catalog.refresh`.
    assert (DATA / loader.PARSED_COPY).read_text(encoding="utf-8") == refresh.render_parsed()


def test_the_copy_equals_tomllib_in_value_and_order() -> None:
    raw = parsed_copy.read_raw(DATA)
    copy = json.loads((DATA / loader.PARSED_COPY).read_bytes())
    # json.dumps keeps insertion order, so this compares the tables' key order too.
    assert json.dumps(copy["files"]) == json.dumps(parsed_copy.parse_files(raw))


def test_the_packaged_catalog_is_read_from_the_copy(monkeypatch: pytest.MonkeyPatch) -> None:
    _no_toml_parsing(monkeypatch)
    catalog = loader.load_catalog()
    assert catalog.find_material("KHP").formula == "KHC8H4O4"
    assert catalog == loader.catalog()


def test_an_edited_file_is_read_from_its_toml(data_dir: Path) -> None:
    path = data_dir / "materials.toml"
    text = path.read_text(encoding="utf-8")
    assert 'name = "potassium hydrogen phthalate"' in text
    path.write_text(text.replace('name = "potassium hydrogen phthalate"',
                                 'name = "potassium hydrogen phthalate (edited)"', 1),
                    encoding="utf-8")
    assert loader.load_catalog(data_dir).find_material("KHP").name == (
        "potassium hydrogen phthalate (edited)")


def test_an_edit_keeping_the_length_is_seen(data_dir: Path) -> None:
    path = data_dir / "materials.toml"
    raw = path.read_bytes()
    edited = raw.replace(b'name = "potassium hydrogen phthalate"',
                         b'name = "potassium hydrogen phthalatX"', 1)
    assert len(edited) == len(raw) and edited != raw
    path.write_bytes(edited)
    assert loader.load_catalog(data_dir).find_material("KHP").name.endswith("phthalatX")


@pytest.mark.parametrize("content", [b"", b"{not json", b"[]", b'{"digest": "x", "files": {}}',
                                     b'{"files": {}}'], ids=["empty", "broken", "list",
                                                             "stale", "no-digest"])
def test_an_unusable_copy_is_ignored(data_dir: Path, content: bytes) -> None:
    (data_dir / loader.PARSED_COPY).write_bytes(content)
    assert loader.load_catalog(data_dir) == loader.catalog()


def test_a_missing_copy_is_not_needed(data_dir: Path) -> None:
    (data_dir / loader.PARSED_COPY).unlink()
    assert loader.load_catalog(data_dir) == loader.catalog()


def test_a_copy_with_a_file_missing_is_ignored(data_dir: Path) -> None:
    copy = json.loads((data_dir / loader.PARSED_COPY).read_bytes())
    del copy["files"]["indicators.toml"]
    (data_dir / loader.PARSED_COPY).write_text(json.dumps(copy), encoding="utf-8")
    assert loader.load_catalog(data_dir) == loader.catalog()
