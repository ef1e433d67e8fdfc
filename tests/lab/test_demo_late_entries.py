"""The demo enters invented history all at once: every backdated entry says so, so the
demo builds at any hour of the day, however late the lab's late-entry limit falls."""

from __future__ import annotations

from datetime import timedelta
from pathlib import Path

import pytest


def test_the_demo_builds_when_every_backdated_entry_counts_as_late(
        tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    from prepbook.lab import common, demo

    # A limit of zero hours: any entry dated before now needs its reason. (Before the
    # fix, the balance-weighed batch made three days back at 08:40 was refused each day
    # after 08:40 UTC.)
    monkeypatch.setattr(common, "late_after", lambda _session: timedelta(0))
    lab = demo.build(tmp_path / "demo.db")
    assert lab.batches >= 10 and lab.runs > 0
