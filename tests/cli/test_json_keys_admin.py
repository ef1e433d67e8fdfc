"""The JSON keys of the administration commands (users, specs, lots, instruments,
settings, init, backup, labels, exports) are a contract: scripts read them.

Each command's keys are pinned here in their order; a renamed, dropped or added field
of a service's dataclass fails this test before it reaches a user's script.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from tests.cli.test_bench_flow import _days, _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli, is_url

# The commands whose --json keys this file pins (test_json_keys_audit checks the union).
PINNED = {"init", "user list", "user add", "user disable", "user enable", "user unlock",
          "spec list", "spec add", "spec show", "lot add", "lot list", "instrument add",
          "instrument list", "instrument calibrate", "settings", "settings show", "backup",
          "label", "export"}
USER = ["name", "role", "active", "failed_attempts", "locked", "created_at", "created_by"]
SPEC = ["code", "name", "solute", "reaction", "nominal", "unit", "standard", "indicator",
        "min_replicates", "max_rsd_percent", "factor_low", "factor_high",
        "drift_limit_percent", "restandardize_days", "shelf_life_days", "storage", "hazard",
        "cautions", "builtin", "solvent", "expansion_per_c", "expansion_source",
        "expansion_refused", "repeatability_rsd_percent", "repeatability_source"]
LOT = ["code", "material", "purity_percent", "purity_u_percent", "expires", "expired",
       "certificate", "dried_on", "opened_on", "created_by", "density_g_per_ml"]
INSTRUMENT = ["code", "kind", "unit", "due", "overdue", "capacity", "tolerance",
              "readability"]
CALIBRATION = [*INSTRUMENT, "calibrated", "certificate", "previous_due"]
SETTING = ["key", "value", "default", "help", "changed_at", "changed_by"]
INIT = ["database", "created", "from_revision", "to_revision", "backup", "materials_added",
        "specs_added"]
BACKUP = ["database", "backup", "bytes", "events"]
LABEL = ["label", "kind", "code", "file", "size", "sheet", "copies", "run", "factor", "state",
         "font_pt", "notes", "printed_at", "printed_by"]
STALE = ["batch", "label", "printed_at", "printed_by", "file", "shown", "current", "reasons"]
STALE_SHOWN = ["run", "factor", "restandardize_by", "expires"]
STALE_CURRENT = [*STALE_SHOWN, "state"]
EXPORT = ["export", "format", "file", "rows", "columns", "neutralised_cells", "since"]


def keys(doc: Any) -> list[str]:
    assert isinstance(doc, dict), doc
    return list(doc)


def each(docs: Any) -> list[list[str]]:
    assert isinstance(docs, list) and docs, docs
    return [keys(d) for d in docs]


def test_users_specs_lots_instruments_settings_init_keep_their_keys(
        bench: Cli, tmp_path: Path) -> None:  # noqa: F811
    assert keys(bench.json("init", user="ada")) == ["version", *INIT]
    assert each(bench.json("user", "list")) == [USER] * 3
    added = bench.json("user", "add", "eve", "--role", "admin", "--passphrase-stdin",
                       user="ada", input="eve-passphrase-1\nada-passphrase\n")
    assert keys(added) == ["version", *USER] and added["role"] == "admin"
    for verb in ("disable", "enable"):
        done = bench.json("user", verb, "eve", "--reason", "test", "--passphrase-stdin",
                          user="ada", input="ada-passphrase\n")
        assert keys(done) == ["version", *USER] and done["active"] is (verb == "enable")
    bench.refused("settings", "set", "lockout_after", "4", "--reason", "x",
                  "--passphrase-stdin", user="eve", input="not-her-passphrase\n")
    unlocked = bench.json("user", "unlock", "eve", "--reason", "typo", "--passphrase-stdin",
                          user="ada", input="ada-passphrase\n")
    assert keys(unlocked) == ["version", *USER] and unlocked["failed_attempts"] == 0

    assert set(map(tuple, each(bench.json("spec", "list")))) == {tuple(SPEC)}
    spec = bench.json("spec", "add", "NaOH-0.2N", "--solute", "NaOH", "--nominal", "0.2",
                      user="cleo")
    assert keys(spec) == ["version", *SPEC] and spec["builtin"] is False
    assert keys(bench.json("spec", "show", "NaOH-0.2N")) == ["version", *SPEC]

    lot = bench.json("lot", "add", "KHP", "--code", "KHP-0002", "--purity", "99.95",
                     "--expires", _days(300), user="ben")
    assert keys(lot) == ["version", *LOT]
    assert each(bench.json("lot", "list")) == [LOT] * 3

    assert keys(bench.json("instrument", "add", "PIP-1", "--kind", "pipette", "--due",
                           _days(90), user="ben")) == ["version", *INSTRUMENT]
    assert each(bench.json("instrument", "list")) == [INSTRUMENT] * 3
    cal = bench.json("instrument", "calibrate", "BUR-1", "--calibrated", _days(0), "--due",
                     _days(365), "--certificate", "CAL-1 (invented)", user="ben")
    assert keys(cal) == ["version", *CALIBRATION] and cal["previous_due"] == _days(200)

    assert set(map(tuple, each(bench.json("settings")))) == {tuple(SETTING)}
    assert bench.json("settings", "show") == bench.json("settings")

    if not is_url(bench.db):
        copy = bench.json("backup", "-o", str(tmp_path / "copy.db"))
        assert keys(copy) == ["version", *BACKUP] and copy["events"] > 0


def test_labels_and_exports_keep_their_keys(bench: Cli, tmp_path: Path) -> None:  # noqa: F811
    batch = _make_batch(bench)
    first = _standardize(bench, batch)["run"]
    bench.ok("review", first, "--accept", "--passphrase-stdin", user="cleo",
             input="cleo-passphrase\n")
    printed = bench.json("label", batch, "-o", str(tmp_path / "b.pdf"), user="ben")
    assert keys(printed) == ["version", *LABEL] and printed["run"] == first
    lot = bench.json("label", "KHP-0001", "--lot", "-o", str(tmp_path / "l.pdf"), "--sheet",
                     "a4", "--copies", "3", user="ben")
    assert keys(lot) == ["version", *LABEL] and (lot["kind"], lot["sheet"]) == ("lot", "a4")
    assert bench.json("label", "--stale") == []
    second = _standardize(bench, batch)["run"]
    bench.ok("review", second, "--accept", "--passphrase-stdin", user="cleo",
             input="cleo-passphrase\n")
    stale = bench.json("label", "--stale")
    assert each(stale) == [STALE]
    assert keys(stale[0]["shown"]) == STALE_SHOWN and stale[0]["shown"]["run"] == first
    assert keys(stale[0]["current"]) == STALE_CURRENT and stale[0]["current"]["run"] == second
    assert isinstance(stale[0]["reasons"], list) and stale[0]["reasons"]

    for kind, fmt in (("runs", "csv"), ("audit", "xlsx")):
        res = bench.json("export", kind, "--format", fmt, "-o", str(tmp_path / f"x.{fmt}"),
                         "--since", _days(-30))
        assert keys(res) == ["version", *EXPORT]
        assert res["export"] == kind and res["rows"] >= 1
        assert isinstance(res["columns"], list) and res["since"] == _days(-30)
