"""Curve files as meters export them: a preamble, either column order, separators and
decimal commas; and the property that the column order does not change the endpoints."""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from prepbook.chem.curve_files import read_curve, read_curve_file
from prepbook.chem.curves import read_curve_csv
from prepbook.chem.inflections import find_endpoints
from prepbook.errors import InvalidInput
from tests.chem.model_curves import CARBONATE, CASES, STEP_PATTERNS, curve

PREAMBLE = ("Instrument;Titrator 7\nSample;soda ash lot 42\nOperator;AB\n"
            "Date;2026-12-01 09:12\nTemperature (C);21,5\n\n")


def test_preamble_is_skipped_and_counted() -> None:
    text = PREAMBLE + "Volume (mL);pH;Time (s)\n0,00;11,32;0\n0,10;11,28;4\n0,25;11,21;9\n"
    got = read_curve(text)
    assert got.volumes_ml == (0.0, 0.1, 0.25)
    assert got.readings == (11.32, 11.28, 11.21)
    assert (got.kind, got.header_line, got.preamble_lines) == ("pH", 7, 6)


def test_ph_column_first_is_named_by_its_header() -> None:
    text = "pH,Volume (mL)\n7.00,0.00\n7.52,1.00\n8.10,2.00\n"
    got = read_curve(text)
    assert (got.volumes_ml, got.readings, got.kind) == ((0.0, 1.0, 2.0), (7.0, 7.52, 8.1),
                                                        "pH")
    assert (got.volume_column, got.reading_column) == (2, 1)
    assert read_curve_csv(text) == ([0.0, 1.0, 2.0], [7.0, 7.52, 8.1], "pH")


@pytest.mark.parametrize("header", ["E (mV)\tV (mL)", "E\tvolume", "Potential\tmL"])
def test_potential_columns_are_mv(header: str) -> None:
    text = header + "\n245,3\t0,00\n231,0\t0,50\n"
    got = read_curve(text)
    assert (got.volumes_ml, got.readings, got.kind) == ((0.0, 0.5), (245.3, 231.0), "mV")


def test_quoted_decimal_comma_in_a_comma_file() -> None:
    assert read_curve('volume,pH\n"0,5","7,25"\n"1,0","7,90"\n').readings == (7.25, 7.9)


def test_one_named_column_takes_the_other_as_its_partner() -> None:
    assert read_curve("reading,V\n7,0\n8,1\n").volumes_ml == (0.0, 1.0)
    assert read_curve("t,pH\n0,7\n1,8\n").readings == (7.0, 8.0)


def test_file_on_disk_and_files_it_cannot_read(tmp_path: Path) -> None:
    good = tmp_path / "curve.csv"
    good.write_bytes("Ger\u00e4t;X\nVolumen mL;pH\n0,0;7,0\n1,0;7,5\n".encode("latin-1"))
    assert read_curve_file(good).readings == (7.0, 7.5)
    with pytest.raises(InvalidInput, match="cannot read the curve file") as missing:
        read_curve_file(tmp_path / "absent.csv")
    assert "\n" not in str(missing.value)
    binary = tmp_path / "curve.xlsx"
    binary.write_bytes(b"PK\x03\x04\x00\x00binary")
    with pytest.raises(InvalidInput, match="is not text"):
        read_curve_file(binary)


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("Instrument: X\n", "line 1: the header needs two columns"),
        ("Sample;A\nvolume;pH\n0;7\n1;abc\n", "line 4: pH 'abc' is not a number"),
        ("pH,volume\n7,0\n7.2,-1\n", "line 3: volume -1 mL is negative"),
        ("pH,volume\n7,1\n7.2,1\n", "line 3: volume 1 mL does not exceed"),
        ("mV,volume\n7,1\n7.2\n", "line 3: expected volume and mV, found 1 value"),
    ],
)
def test_refusals_name_the_line(text: str, message: str) -> None:
    with pytest.raises(InvalidInput, match=message):
        read_curve(text)


def _file(volumes: list[float], ph: list[float], *, ph_first: bool, separator: str,
          preamble: str) -> str:
    comma = separator != ","
    def cell(x: float) -> str:
        text = repr(x)
        return text.replace(".", ",") if comma else text
    head = ("pH", "volume_ml") if ph_first else ("volume_ml", "pH")
    rows = [separator.join(head)]
    for v, p in zip(volumes, ph, strict=True):
        pair = (cell(p), cell(v)) if ph_first else (cell(v), cell(p))
        rows.append(separator.join(pair))
    return preamble + "\n".join(rows) + "\n"


@settings(max_examples=25, deadline=None)
@given(
    case=st.sampled_from(CASES),
    pattern=st.sampled_from(STEP_PATTERNS),
    noise=st.sampled_from([0.0, 0.005, 0.01]),
    seed=st.integers(0, 1000),
    separator=st.sampled_from([",", ";", "\t"]),
    preamble=st.sampled_from(["", PREAMBLE, "# exported\nMeter\tM1\n"]),
)
def test_reversing_the_column_order_gives_the_same_endpoints(  # type: ignore[no-untyped-def]
        case, pattern, noise, seed, separator, preamble) -> None:
    volumes, ph = curve(case, pattern, noise, seed)
    forward = read_curve(_file(volumes, ph, ph_first=False, separator=separator,
                               preamble=preamble))
    reverse = read_curve(_file(volumes, ph, ph_first=True, separator=separator,
                               preamble=preamble))
    assert forward.volumes_ml == reverse.volumes_ml == tuple(volumes)
    assert forward.readings == reverse.readings == tuple(ph)
    a = find_endpoints(forward.volumes_ml, forward.readings, sample_ml=case.sample_ml)
    b = find_endpoints(reverse.volumes_ml, reverse.readings, sample_ml=case.sample_ml)
    assert a.inflections == b.inflections
    assert len(a.inflections) == len(case.equivalence_ml)


def test_carbonate_file_with_a_preamble_gives_both_endpoints() -> None:
    volumes, ph = curve(CARBONATE, STEP_PATTERNS[0], 0.01, 5)
    got = read_curve(_file(volumes, ph, ph_first=True, separator=";", preamble=PREAMBLE))
    found = find_endpoints(got.volumes_ml, got.readings).inflections
    assert [round(item.volume_ml, 1) for item in found] == [20.6, 41.3]
