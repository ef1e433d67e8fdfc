"""An XLSX export keeps each value's type: readings and computed values are number cells,
times and dates are date cells; CSV keeps the readings as typed and the times in ISO
8601 with their zone. Read back with openpyxl, the cells' data types are checked."""

from __future__ import annotations

import csv
from datetime import date, datetime
from pathlib import Path

import openpyxl

from prepbook.inputs import Reading
from prepbook.render.exports import write_table

COLUMNS = ["run", "temperature_c", "blank_ml", "titrant_volume_ml", "normality_eq_per_l",
           "position", "performed_at_utc", "expires_date", "note"]
ROWS = [["R1", Reading("21.0", 21.0), Reading("0", 0.0), Reading("39.10", 39.1),
         0.10106484691562491, 1, datetime(2026, 9, 17, 10, 5), date(2026, 12, 15),
         "=1+1"],
        ["R2", Reading("1.5e-3", 0.0015), None, Reading("25", 25.0), None, 2, None, None,
         None]]


def _cells(path: Path) -> list[dict[str, openpyxl.cell.cell.Cell]]:
    ws = openpyxl.load_workbook(path).active
    header = [c.value for c in ws[1]]
    return [dict(zip(header, row, strict=True)) for row in ws.iter_rows(min_row=2)]


def test_xlsx_numbers_are_number_cells_shown_as_typed(tmp_path: Path) -> None:
    out = write_table(tmp_path / "runs.xlsx", "xlsx", "runs", COLUMNS, ROWS)
    first, second = _cells(out)
    for name, value, shown in (("temperature_c", 21.0, "0.0"), ("blank_ml", 0, "0"),
                               ("titrant_volume_ml", 39.1, "0.00")):
        assert first[name].data_type == "n", name
        assert first[name].value == value and first[name].number_format == shown, name
    assert second["temperature_c"].value == 0.0015
    assert second["temperature_c"].number_format == "0.0000"
    # A computed value: the unrounded float (16 significant digits, see the module).
    assert first["normality_eq_per_l"].data_type == "n"
    assert abs(first["normality_eq_per_l"].value - 0.10106484691562491) < 1e-16
    assert first["position"].data_type == "n" and first["position"].value == 1
    # Times and dates are date cells, shown in ISO 8601 order.
    assert first["performed_at_utc"].data_type == "d"
    assert first["performed_at_utc"].value == datetime(2026, 9, 17, 10, 5)
    assert first["performed_at_utc"].number_format == "yyyy-mm-dd hh:mm:ss"
    assert first["expires_date"].data_type == "d"
    assert first["expires_date"].value.date() == date(2026, 12, 15)
    assert first["expires_date"].number_format == "yyyy-mm-dd"
    # Text stays text, made inert; an empty value is an empty cell.
    assert first["note"].data_type == "s" and first["note"].value == "'=1+1"
    assert second["blank_ml"].value is None and second["performed_at_utc"].value is None


def test_csv_keeps_readings_as_typed_and_times_with_their_zone(tmp_path: Path) -> None:
    out = write_table(tmp_path / "runs.csv", "csv", "runs", COLUMNS, ROWS)
    with out.open(encoding="utf-8", newline="") as f:
        first, second = list(csv.DictReader(f))
    assert (first["temperature_c"], first["blank_ml"], first["titrant_volume_ml"]) == \
        ("21.0", "0", "39.10")
    assert second["temperature_c"] == "1.5e-3"
    assert first["performed_at_utc"] == "2026-09-17T10:05:00Z"
    assert first["expires_date"] == "2026-12-15"
    assert float(first["normality_eq_per_l"]) == 0.10106484691562491
    assert first["note"] == "'=1+1"
