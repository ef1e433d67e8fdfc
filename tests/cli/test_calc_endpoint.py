"""`calc endpoint` on curves computed from the equilibrium model, whose equivalence
volumes are known from stoichiometry alone (tests/chem/model_curves.py): sodium
carbonate, 0.04126 mol/L in 50 mL, titrated with 0.1 mol/L HCl, endpoints at
0.04126 x 50 / 0.1 = 20.630 mL and twice that, 41.260 mL; 0.01 pH of noise."""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.chem.model_curves import CARBONATE, STEP_PATTERNS, curve
from tests.conftest import Cli

FIRST, SECOND = CARBONATE.equivalence_ml  # 20.630 mL, 41.260 mL


def _meter_export(path: Path, pattern: str = STEP_PATTERNS[0], *, ph_first: bool = True) -> Path:
    """A meter's export: metadata above the header, pH before volume, ';' and decimal
    commas."""
    volumes, ph = curve(CARBONATE, pattern, 0.01, seed=3)
    lines = ["Instrument;pH meter", "Sample;Na2CO3 lot 7", "Operator;ben",
             "pH;Volume (mL)" if ph_first else "Volume (mL);pH"]
    for v, p in zip(volumes, ph, strict=True):
        cells = (f"{p:.3f}", f"{v:.3f}") if ph_first else (f"{v:.3f}", f"{p:.3f}")
        lines.append(";".join(cells).replace(".", ","))
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def test_every_endpoint_of_a_meter_export_with_its_uncertainty(cli: Cli, tmp_path: Path) -> None:
    f = _meter_export(tmp_path / "carbonate.csv")
    table = cli.ok("calc", "endpoint", str(f), "--sample-ml", "50").stdout
    assert "3 preamble line(s) above the header skipped" in table
    out = cli.json("calc", "endpoint", str(f), "--sample-ml", "50")
    found = [e["volume_ml"] for e in out["endpoints"]]
    assert found == pytest.approx([FIRST, SECOND], abs=0.1)
    assert [e["index"] for e in out["endpoints"]] == [1, 2]
    assert all(0 < e["u_ml"] < 0.1 for e in out["endpoints"])
    assert out["equivalence_ml"] == out["endpoints"][-1]["volume_ml"]
    assert out["u_ml"] == out["endpoints"][-1]["u_ml"]
    assert (out["volume_column"], out["reading_column"], out["preamble_lines"]) == (2, 1, 3)
    for e in out["endpoints"]:  # both listed in the table, with their uncertainty
        assert f"{e['volume_ml']:.3f}" in table and f"{e['u_ml']:.3f}" in table


def test_column_order_does_not_change_the_endpoints(cli: Cli, tmp_path: Path) -> None:
    one = cli.json("calc", "endpoint", str(_meter_export(tmp_path / "a.csv")))
    other = cli.json("calc", "endpoint", str(_meter_export(tmp_path / "b.csv", ph_first=False)))
    assert one["endpoints"] == other["endpoints"]


def test_uneven_steps(cli: Cli, tmp_path: Path) -> None:
    f = _meter_export(tmp_path / "uneven.csv", STEP_PATTERNS[1])
    out = cli.json("calc", "endpoint", str(f))
    assert [e["volume_ml"] for e in out["endpoints"]] == pytest.approx([FIRST, SECOND], abs=0.1)


@pytest.mark.parametrize("window", [["--from", "15", "--to", "30"], ["--between", "15:30"]])
def test_a_volume_window_keeps_the_endpoints_inside_it(cli: Cli, tmp_path: Path,
                                                      window: list[str]) -> None:
    f = _meter_export(tmp_path / "carbonate.csv")
    out = cli.json("calc", "endpoint", str(f), *window)
    assert [e["volume_ml"] for e in out["endpoints"]] == pytest.approx([FIRST], abs=0.1)
    assert out["window_ml"] == [15, 30]
    assert out["gran_ml"] is None  # Gran's functions hold over the whole curve only
    after = cli.json("calc", "endpoint", str(f), "--from", "30")  # open to the last volume
    assert [e["volume_ml"] for e in after["endpoints"]] == pytest.approx([SECOND], abs=0.1)
    table = cli.ok("calc", "endpoint", str(f), *window).stdout
    assert "Endpoints between 15 and 30 mL" in table


def test_gran_beside_the_last_endpoint_says_when_they_disagree(cli: Cli,
                                                              tmp_path: Path) -> None:
    """With the true 50 mL in the vessel Gran's line after the second endpoint meets the
    inflection; told 500 mL (a slipped zero), its function (V0 + V) 10^-pH bends and
    its intercept moves about 0.3 mL, beyond the tolerance (0.5 % of the volume)."""
    f = _meter_export(tmp_path / "carbonate.csv")
    right = cli.ok("calc", "endpoint", str(f), "--sample-ml", "50").stdout
    assert "Gran estimate" in right and ": agree" in right and "DISAGREE" not in right
    out = cli.json("calc", "endpoint", str(f), "--sample-ml", "50")
    assert out["gran_ml"] == pytest.approx(SECOND, abs=0.1) and out["gran_agrees"] is True
    assert out["gran_points"] > 0
    wrong = cli.ok("calc", "endpoint", str(f), "--sample-ml", "500").stdout
    assert "DISAGREE" in wrong and "disagree by" in wrong
    assert cli.json("calc", "endpoint", str(f), "--sample-ml", "500")["gran_agrees"] is False


@pytest.mark.parametrize(
    ("args", "word"),
    [
        (["--from", "30", "--to", "15"], "must be below"),
        (["--from", "15", "--between", "15:30"], "not both"),
        (["--from", "20.1", "--to", "20.3"], "widen it"),
        (["--to", "abc"], "window to"),
        (["--smoothing", "0"], "smoothing"),
    ],
)
def test_bad_windows_are_refused(cli: Cli, tmp_path: Path, args: list[str], word: str) -> None:
    f = _meter_export(tmp_path / "carbonate.csv")
    assert word in cli.refused("calc", "endpoint", str(f), *args).stderr
