"""The board names an instrument's calibration warning once, in a section of its own
with the batches that depend on the instrument, not under every batch that used it
(nor twice under a batch whose preparation and standardization both used it)."""

from __future__ import annotations

from tests.cli.test_bench_flow import REPS, _at, _days, bench  # noqa: F401
from tests.conftest import Cli

WARNING = f"balance BAL-9 calibration due {_days(3)} (in 3 days)"


def _lab(bench: Cli) -> tuple[str, str]:  # noqa: F811
    """Two batches weighed on BAL-9 (due in 3 days), the first also standardized on it."""
    bench.ok("instrument", "add", "BAL-9", "--kind", "balance", "--due", _days(3),
             "--readability", "0.0001", "--tolerance", "0.0002", user="ben")
    made = [bench.json("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass",
                       "4.1", "--balance", "BAL-9", "--at", _at(-2, "08:30"),
                       user="ben")["batch"] for _ in range(2)]
    args = ["standardize", made[0], "--lot", "KHP-0001", "--balance", "BAL-9", "--burette",
            "BUR-1", "--at", _at(-1)]
    for r in REPS:
        args += ["--rep", r]
    run = bench.json(*args, user="ben")
    bench.ok("review", run["run"], "--accept", "--passphrase-stdin", user="cleo",
             input="cleo-passphrase\n")
    return made[0], made[1]


def test_an_instrument_warning_is_on_the_board_once(bench: Cli) -> None:  # noqa: F811
    first, second = _lab(bench)
    board = bench.json("status")
    by_code = {item["batch"]: item for item in board}
    # --json: each batch names the instrument by code; its warning is not repeated
    assert by_code[first]["instruments"] == ["BAL-9"] == by_code[second]["instruments"]
    assert not any("BAL-9" in w for item in board for w in item["warnings"])
    text = bench.ok("status").stdout
    assert text.count("BAL-9") == 1 and WARNING in text
    section = text.split("Instruments", 1)[1]
    assert WARNING in section and first in section and second in section
    # the board's count of warnings still counts the instrument
    assert all(line.rstrip().endswith("1") for line in text.splitlines()
               if line.strip().startswith(second))


def test_one_batch_names_its_instrument_warning_once(bench: Cli) -> None:  # noqa: F811
    first, _ = _lab(bench)
    warnings = bench.json("batch", "show", first)["warnings"]
    assert warnings.count(WARNING) == 1  # its flask and its run both used BAL-9
