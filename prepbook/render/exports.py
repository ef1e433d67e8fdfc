"""Writing one tidy table as CSV or XLSX, with formula-like text made inert.

A spreadsheet reads a cell that starts with ``=``, ``+``, ``-``, ``@``, a tab or a
carriage return as a formula (the "CSV injection" risk described by OWASP).
XLSX numbers carry 16 significant digits (the openpyxl writer's format, a relative
difference below 1e-15 from the stored double); CSV carries every float exactly
(``repr``), so use CSV when a value must read back bit for bit.

Every *text* cell that starts so gets a leading apostrophe in both formats, so
it is shown as typed and never evaluated; numbers are left as numbers. The
apostrophe is visible in the cell: the export says exactly what was changed.

pandas (and openpyxl for XLSX) are imported inside the functions.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

from prepbook.errors import InvalidInput

FORMATS = ("csv", "xlsx")
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


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
    df = frame(columns, rows)
    with files.staged(path, replace=replace) as (tmp, commit):
        try:
            if fmt == "csv":
                # pandas prints floats to 16 significant digits, which can drop the last
                # one; repr() is the shortest text that reads back as the same float.
                exact = df.map(_exact)
                exact.to_csv(tmp, index=False, encoding="utf-8", lineterminator="\n")
            else:
                _write_xlsx(df, tmp, sheet)
        except OSError as exc:
            raise InvalidInput(f"cannot write {path}: {exc.strerror or exc}") from None
        commit()
    return files.absolute(path)


def _exact(value: Any) -> Any:
    if isinstance(value, float):
        return None if value != value else repr(value)  # NaN is pandas' empty cell
    return value


def _write_xlsx(df: Any, tmp: Path, sheet: str) -> None:
    import pandas as pd

    with pd.ExcelWriter(tmp, engine="openpyxl") as writer:
        df.to_excel(writer, sheet_name=sheet[:31], index=False)
        ws = writer.sheets[sheet[:31]]
        ws.freeze_panes = "A2"
        for cells in ws.iter_rows():
            for cell in cells:
                # openpyxl would store a string beginning with "=" as a formula;
                # every string cell is stored as text (neutralise() already made it inert).
                if isinstance(cell.value, str):
                    cell.data_type = "s"
        for i, name in enumerate(df.columns, start=1):
            width = max([len(str(name))] + [len(str(v)) for v in df.iloc[:200, i - 1]])
            ws.column_dimensions[ws.cell(row=1, column=i).column_letter].width = \
                min(60, width + 2)
