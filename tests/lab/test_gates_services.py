"""The refusals of issue 14's entry and review half, on the services directly: the
terminal app calls them without the command line's own checks, so each must refuse
before it writes anything (every table's row count unchanged)."""

from __future__ import annotations

from collections.abc import Callable, Iterator
from typing import Any

import pytest

from prepbook.errors import InvalidInput, NotFound, Refused
from prepbook.lab import batches, reviews, revoking, runs
from prepbook.store.engine import open_database
from tests.cli.test_bench_flow import REPS, _at, _make_batch, bench  # noqa: F401
from tests.conftest import Cli, row_counts

SWAPPED = ["39.16:0.8085", "39.29:0.8116", "41.67:0.8596"]
DIRECT = {"lot": "KHP-0001", "balance": "BAL-1", "burette": "BUR-1", "temperature": "21"}


@pytest.fixture
def lab(bench: Cli) -> Iterator[tuple[Cli, Any, str]]:  # noqa: F811
    db = open_database(str(bench.db))
    try:
        yield bench, db, _make_batch(bench)
    finally:
        db.dispose()


def _unchanged(cli: Cli, call: Callable[[], object], error: type[Exception], said: str) -> None:
    before = row_counts(cli.db)
    with pytest.raises(error, match=said):
        call()
    assert row_counts(cli.db) == before


def test_the_services_refuse_implausible_readings(lab: tuple[Cli, Any, str]) -> None:
    cli, db, batch = lab
    for record in (True, False):
        _unchanged(cli, lambda r=record: runs.standardize(  # type: ignore[misc]
            db, actor="ben", batch=batch, replicates=SWAPPED, record=r, **DIRECT),
            InvalidInput, "look swapped")
    _unchanged(cli, lambda: runs.standardize(db, actor="ben", batch=batch,
                                             replicates=["808.5:39.16"], **DIRECT),
               InvalidInput, "was it in mg")


def test_review_refuses_before_writing(lab: tuple[Cli, Any, str]) -> None:
    cli, db, batch = lab
    sign = {"actor": "cleo", "passphrase": "cleo-passphrase"}
    _unchanged(cli, lambda: reviews.review(db, run="R-1", accept=True, reason=None, **sign),
               NotFound, "no run with code")
    failed = runs.standardize(db, actor="ben", batch=batch, replicates=REPS[:1],
                              at=_at(-1), **DIRECT)
    assert failed.verdict == "fail"
    _unchanged(cli, lambda: reviews.review(db, run=str(failed.run), accept=True, reason=None,
                                           **sign), Refused, "cannot be accepted")
    # a rejection without a reason: refused by the service itself, not only the CLI
    _unchanged(cli, lambda: reviews.review(db, run=str(failed.run), accept=False, reason=" ",
                                           **sign), InvalidInput, "needs a --reason")
    # the wrong passphrase is not even asked about: the refusal comes first
    _unchanged(cli, lambda: reviews.review(db, actor="cleo", run=str(failed.run), accept=True,
                                           reason=None, passphrase="wrong"),
               Refused, "cannot be accepted")
    assert reviews.review(db, run=str(failed.run), accept=False, reason="one replicate",
                          **sign).status == "rejected"


def test_use_and_revoke_refuse_before_writing(lab: tuple[Cli, Any, str]) -> None:
    cli, db, batch = lab
    done = runs.standardize(db, actor="ben", batch=batch, replicates=REPS, at=_at(-1), **DIRECT)
    reviews.review(db, actor="cleo", run=str(done.run), accept=True, reason=None,
                   passphrase="cleo-passphrase")
    _unchanged(cli, lambda: batches.use_batch(db, actor="ben", code=batch, volume="2500",
                                              purpose="assay"), Refused, "more than remains")
    _unchanged(cli, lambda: batches.use_batch(db, actor="ben", code=batch, volume="10",
                                              purpose=None), InvalidInput, "needs a --purpose")
    _unchanged(cli, lambda: revoking.revoke(db, actor="cleo", run=str(done.run), reason=None,
                                            passphrase="cleo-passphrase"),
               InvalidInput, "needs a --reason")
    _unchanged(cli, lambda: revoking.revoke(db, actor="ben", run=str(done.run), reason="x",
                                            passphrase="ben-passphrase"),
               Refused, "only a reviewer or admin")
    out = revoking.revoke(db, actor="cleo", run=str(done.run), reason="wrong lot",
                          passphrase="cleo-passphrase")
    assert out.status == "revoked" and out.falls_back_to is None and out.state == "new"
