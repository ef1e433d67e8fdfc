"""`prepbook --help` and `prepbook calc normality` stay light: they import no database,
migration, table or PDF library, no Rich and no pydantic; `--help` imports no command
module, and `calc normality` takes the standard's molar mass from the precomputed table
instead of importing periodictable (their speed is measured by
tests/benchmarks/bench.py; this checks the imports, not the time)."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

HEAVY = ("sqlalchemy", "alembic", "pandas", "reportlab",
         # uncertainties would load it (chem.uncertainty._ufloat keeps it out).
         "numpy",
         # Typer 0.29 imports pydantic to convert every parameter: pyproject keeps it below.
         "pydantic",
         # Plain-text help (rich_markup_mode=None) and JSON output draw nothing.
         "rich")

# Run the real entry point in a fresh interpreter and report what it imported.
_WRAPPER = r"""
import json, sys
sys.argv = ["prepbook", *json.loads(sys.argv[1])]
try:
    from prepbook.cli import main
    main()
except SystemExit:
    pass
finally:
    sys.stdout.flush()
    import gc
    print("\n@@FROZEN@@" + str(gc.get_freeze_count()), file=sys.stderr)
    print("\n@@MODULES@@" + json.dumps(sorted(sys.modules)), file=sys.stderr)
"""


def _run(args: list[str]) -> tuple[set[str], str]:
    result = subprocess.run([sys.executable, "-c", _WRAPPER, json.dumps(args)],
                            capture_output=True, text=True, check=True,
                            env={"PATH": "", "COLUMNS": "100", "PREPBOOK_USER": "ada"})
    marker = result.stderr.rsplit("@@MODULES@@", 1)[1]
    return set(json.loads(marker)), result.stdout


@pytest.mark.parametrize("args", [
    ["--help"],
    ["calc", "normality", "--standard", "KHP", "--titrant", "NaOH",
     "--rep", "0.8123:39.80", "--rep", "0.8201:40.20", "--rep", "0.8150:39.93", "--json"],
], ids=["help", "calc-normality"])
def test_light_commands_import_no_heavy_library(args: list[str]) -> None:
    loaded, out = _run(args)
    # The command really ran: its help, or the computed normality.
    assert "Usage" in out or json.loads(out)["normality"] > 0
    heavy = sorted(m for m in loaded if m.split(".")[0] in HEAVY)
    assert heavy == [], f"prepbook {' '.join(args[:2])} imported {heavy[:5]}"


def test_the_check_sees_a_heavy_import() -> None:
    # A command that opens a database must show up as importing SQLAlchemy, or the
    # check above could never fail.
    loaded, _ = _run(["--db", "/nonexistent/prepbook-test.db", "status"])
    assert "sqlalchemy" in loaded


def test_help_imports_no_command_module_and_no_catalog() -> None:
    loaded, out = _run(["--help"])
    assert "calc" in out and "batch" in out  # the listing is there, from the static table
    prepbook = sorted(m for m in loaded if m.startswith("prepbook"))
    assert prepbook == ["prepbook", "prepbook.cli", "prepbook.cli.app", "prepbook.cli.context",
                        "prepbook.config", "prepbook.errors"]
    # The configuration file is read only by a command that needs a setting.
    assert not {"platformdirs", "tomllib", "zoneinfo", "logging"} & loaded


def test_calc_normality_imports_only_its_own_command_module_and_no_periodictable() -> None:
    loaded, out = _run(["calc", "normality", "--standard", "KHP", "--titrant", "NaOH",
                        "--rep", "0.8123:39.80", "--json"])
    assert json.loads(out)["standard"]["molar_mass_g_per_mol"] > 0
    commands = sorted(m for m in loaded if m.startswith("prepbook.cli."))
    assert commands == ["prepbook.cli.app", "prepbook.cli.calc", "prepbook.cli.context",
                        "prepbook.cli.output"]
    assert not {"periodictable", "pyparsing"} & {m.split(".")[0] for m in loaded}
    assert not {"platformdirs", "tomllib"} & loaded  # no setting needed, no file read


def test_calc_normality_builds_no_sample_model_and_reads_no_clock() -> None:
    """What a standardization does not use stays unloaded: the analytes and ions of sample
    titrations (built when first asked for, ``catalog.samples``), the lab's clock with its
    time zones (needed only to parse a date) and the Unicode names (only for an error)."""
    loaded, out = _run(["calc", "normality", "--standard", "KHP", "--titrant", "NaOH",
                        "--rep", "0.8123:39.80", "--json"])
    assert json.loads(out)["normality"] > 0
    assert "prepbook.catalog.loader" in loaded  # the catalog was loaded, so this means something
    unused = {"prepbook.catalog.sample_models", "prepbook.catalog.samples", "prepbook.clock",
              "zoneinfo", "unicodedata"}  # unicodedata names a foreign digit in an error
    assert sorted(unused & loaded) == []


def test_the_check_sees_the_sample_models_of_a_sample_command() -> None:
    # A sample titration builds them (or the check above could never fail).
    loaded, out = _run(["calc", "sample", "--analyte", "chloride", "--titrant", "AgNO3",
                        "--normality", "0.1", "--rep", "12.5", "--aliquot", "25", "--json"])
    assert json.loads(out)
    assert "prepbook.catalog.sample_models" in loaded


def test_the_check_sees_a_command_module() -> None:
    # Running a group's command loads that group's module (or the checks above prove nothing).
    loaded, _ = _run(["--db", "/nonexistent/prepbook-test.db", "lot", "list"])
    assert "prepbook.cli.lots" in loaded


def _frozen_at_exit(args: list[str]) -> int:
    result = subprocess.run([sys.executable, "-c", _WRAPPER, json.dumps(args)],
                            capture_output=True, text=True, check=True,
                            env={"PATH": "", "COLUMNS": "100", "PREPBOOK_USER": "ada"})
    return int(result.stderr.split("@@FROZEN@@", 1)[1].split()[0])


def test_a_command_without_a_database_skips_the_last_collection() -> None:
    assert _frozen_at_exit(["calc", "normality", "--standard", "KHP",
                            "--rep", "0.8123:39.80", "--json"]) > 0
    assert _frozen_at_exit(["--help"]) > 0


def test_a_command_that_opened_a_database_is_collected_at_exit(tmp_path) -> None:
    # Its connections must close properly (SQLite folds its log into the file then).
    assert _frozen_at_exit(["--db", str(tmp_path / "none.db"), "status"]) == 0
