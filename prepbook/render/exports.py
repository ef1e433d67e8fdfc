"""Writing one tidy table as CSV or XLSX, with formula-like text made inert.

A spreadsheet reads a cell that starts with ``=``, ``+``, ``-``, ``@``, a tab or a
carriage return as a formula (the "CSV injection" risk described by OWASP).
XLSX numbers carry 16 significant digits (the openpyxl writer's format, a relative
difference below 1e-15 from the stored double); CSV carries every float exactly
(``repr``), so use CSV when a value must read back bit for bit.

Every *text* cell that starts so gets a leading apostrophe in both formats, so
it is shown as typed and never evaluated; numbers are left as numbers. The
apostrophe is visible in the cell: the export says exactly what was changed.

Cells keep their type. A reading (``prepbook.inputs.Reading``: a value as typed) is
its text in CSV and a number in XLSX, shown with as many decimals as were typed
(``25.10`` is the number 25.1 shown ``25.10``). A time (naive UTC) is ISO 8601 with
its zone in CSV (``2026-09-12T08:30:00Z``) and a date-time cell in XLSX (the column
name says ``_utc``); a date is ``YYYY-MM-DD`` in CSV and a date cell in XLSX.

pandas (and openpyxl for XLSX) are imported inside the functions.
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import date, datetime
from decimal import Decimal
from pathlib import Path
from typing import Any

from prepbook.errors import InvalidInput
from prepbook.inputs import Reading

FORMATS = ("csv", "xlsx")
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
XLSX_TIME = "yyyy-mm-dd hh:mm:ss"
XLSX_DATE = "yyyy-mm-dd"


def neutralise(value: Any) -> Any:
    """A text value made inert for a spreadsheet; anything else unchanged."""
    if isinstance(value, str) and value.startswith(FORMULA_STARTS):
        return "'" + value
    return value


def frame(columns: Sequence[str], rows: Sequence[Sequence[Any]]) -> Any:
    """A pandas DataFrame of ``rows`` with every text cell neutralised."""
    import pandas as pd

    clean = [[neutralise(v) for v in row] for row in rows]
    return pd.DataFrame(clean, columns=list(columns))


def check_format(path: Path, fmt: str) -> None:
    """Refuse an unknown format, or a file name that does not end in it."""
    if fmt not in FORMATS:
        raise InvalidInput(f"unknown format {fmt!r}; one of {', '.join(FORMATS)}")
    if path.suffix.lower() != f".{fmt}":
        raise InvalidInput(f"{path} should end in .{fmt} for --format {fmt}")


def write_table(path: Path, fmt: str, sheet: str, columns: Sequence[str],
                rows: Sequence[Sequence[Any]], *, replace: bool = False) -> Path:
    """Write the table to ``path`` (whole or not at all); returns the absolute path."""
    from prepbook.render import files

    check_format(path, fmt)
    df = frame(columns, [[_csv_cell(v) if fmt == "csv" else _xlsx_cell(v) for v in row]
                         for row in rows])
    with files.staged(path, replace=replace) as (tmp, commit):
        try:
            if fmt == "csv":
                # pandas prints floats to 16 significant digits, which can drop the last
                # one; repr() is the shortest text that reads back as the same float.
                exact = df.map(_exact)
                exact.to_csv(tmp, index=False, encoding="utf-8", lineterminator="\n")
            else:
                _write_xlsx(df, tmp, sheet, _number_formats(rows))
        except OSError as exc:
            raise InvalidInput(f"cannot write {path}: {exc.strerror or exc}") from None
        commit()
    return files.absolute(path)


def _exact(value: Any) -> Any:
    if isinstance(value, float):
        return None if value != value else repr(value)  # NaN is pandas' empty cell
    return value


def _csv_cell(value: Any) -> Any:
    if isinstance(value, Reading):
        return value.text
    if isinstance(value, datetime):
        return value.isoformat() + "Z"
    if isinstance(value, date):
        return value.isoformat()
    return value


def _xlsx_cell(value: Any) -> Any:
    return value.value if isinstance(value, Reading) else value


def _number_formats(rows: Sequence[Sequence[Any]]) -> dict[tuple[int, int], str]:
    """The display format of each cell that needs one, by (row, column) from 0: a
    reading with its typed decimals, a time, a date."""
    found: dict[tuple[int, int], str] = {}
    for i, row in enumerate(rows):
        for j, value in enumerate(row):
            if isinstance(value, Reading):
                places = -int(Decimal(value.text).as_tuple().exponent)
                found[i, j] = "0." + "0" * places if places > 0 else "0"
            elif isinstance(value, datetime):
                found[i, j] = XLSX_TIME
            elif isinstance(value, date):
                found[i, j] = XLSX_DATE
    return found


def _write_xlsx(df: Any, tmp: Path, sheet: str, formats: dict[tuple[int, int], str]) -> None:
    import pandas as pd

    with pd.ExcelWriter(tmp, engine="openpyxl", datetime_format=XLSX_TIME,
                        date_format=XLSX_DATE) as writer:
        df.to_excel(writer, sheet_name=sheet[:31], index=False)
        ws = writer.sheets[sheet[:31]]
        ws.freeze_panes = "A2"
        for cells in ws.iter_rows():
            for cell in cells:
                # openpyxl would store a string beginning with "=" as a formula;
                # every string cell is stored as text (neutralise() already made it inert).
                if isinstance(cell.value, str):
                    cell.data_type = "s"
        for (i, j), shown in formats.items():
            ws.cell(row=i + 2, column=j + 1).number_format = shown
        for i, name in enumerate(df.columns, start=1):
            width = max([len(str(name))] + [len(str(v)) for v in df.iloc[:200, i - 1]])
            ws.column_dimensions[ws.cell(row=1, column=i).column_letter].width = \
                min(60, width + 2)
