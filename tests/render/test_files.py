"""Output files: a name the file system refuses is one clear refusal, not a traceback."""

from __future__ import annotations

from pathlib import Path

import pytest

from prepbook.errors import InvalidInput
from prepbook.render import exports, files


def test_a_name_too_long_for_the_file_system_is_refused_cleanly(tmp_path: Path) -> None:
    # Linux and macOS allow 255 bytes per name (NAME_MAX); 5,000 is over any limit.
    target = tmp_path / ("0" * 5000 + ".pdf")
    with pytest.raises(InvalidInput, match="cannot write"):
        files.check_target(target, replace=False)
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize(("name", "fmt", "words"), [
    ("x.csv", "json", "unknown format"),
    ("x.xlsx", "csv", "should end in .csv"),
    ("0" * 5000, "csv", "should end in .csv"),
])
def test_a_format_and_file_name_that_disagree_are_refused(tmp_path: Path, name: str,
                                                          fmt: str, words: str) -> None:
    with pytest.raises(InvalidInput, match=words):
        exports.check_format(tmp_path / name, fmt)
