"""Lab settings (admin, signed) and recording uses of a batch."""

from __future__ import annotations

from tests.cli.test_bench_flow import _at, _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli, row_counts


def test_only_a_signed_admin_changes_a_setting(bench: Cli) -> None:  # noqa: F811
    before = row_counts(bench.db)
    bench.refused("settings", "set", "buoyancy", "on", "--reason", "x", "--passphrase-stdin",
                  user="ben", input="ben-passphrase\n")
    bench.refused("settings", "set", "buoyancy", "maybe", "--reason", "x", "--passphrase-stdin",
                  user="ada", input="ada-passphrase\n")
    assert row_counts(bench.db) == before
    # A wrong passphrase: refused; only the failed attempt is recorded.
    bench.refused("settings", "set", "buoyancy", "on", "--reason", "x", "--passphrase-stdin",
                  user="ada", input="wrong-passphrase\n")
    after = row_counts(bench.db)
    assert after["audit_events"] == before["audit_events"] + 1
    assert after["settings"] == before["settings"]
    # Without --passphrase-stdin and no terminal to ask at: refused, not guessed.
    bench.refused("settings", "set", "buoyancy", "on", "--reason", "lab decision 12",
                  user="ada", input="ada-passphrase\n")
    bench.ok("settings", "set", "buoyancy", "on", "--reason", "lab decision 12",
             "--passphrase-stdin", user="ada", input="ada-passphrase\n")
    rows = {r["key"]: r for r in bench.json("settings")}
    assert rows["buoyancy"]["value"] == "on" and rows["buoyancy"]["changed_by"] == "ada"
    assert bench.json("audit", "verify")["ok"] is True


def test_buoyancy_setting_raises_the_normality_by_the_nist_correction(bench: Cli) -> None:  # noqa: F811
    """NIST IR 6969 SOP 2 with KHP 1.636 g/cm3: true mass = W (1 - 0.0012/8) / (1 - 0.0012/1.636),
    so N rises by that same ratio."""
    plain = _standardize(bench, _make_batch(bench))
    bench.ok("settings", "set", "buoyancy", "on", "--reason", "r", "--passphrase-stdin",
             user="ada", input="ada-passphrase\n")
    corrected = _standardize(bench, _make_batch(bench))
    ratio = (1 - 0.0012 / 8.0) / (1 - 0.0012 / 1.636)
    assert abs(corrected["normality"] / plain["normality"] - ratio) < 1e-9


def test_uses_only_of_a_batch_in_service(bench: Cli) -> None:  # noqa: F811
    batch = _make_batch(bench)
    before = row_counts(bench.db)
    result = bench.refused("use", batch, "--volume", "25", "--purpose", "assay", user="ben")
    assert "new" in result.stderr
    assert row_counts(bench.db) == before
    run = _standardize(bench, batch)
    bench.ok("review", run["run"], "--accept", "--passphrase-stdin", user="cleo",
             input="cleo-passphrase\n")
    use = bench.json("use", batch, "--volume", "25.0", "--purpose", "assay of lot 7",
                     user="ben")
    assert use["volume_ml"] == "25.0"
    shown = bench.json("batch", "show", batch)
    assert shown["uses"][0]["purpose"] == "assay of lot 7"
