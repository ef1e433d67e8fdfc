"""A label print as a file: which stock, how many copies, where it goes, and the
delivery that draws the PDF and moves it into place once the print is recorded.

The command line and the terminal app both hand ``LabelJob.deliver`` to the service
``lab.labels.print_label``, which calls it inside the transaction that records the print.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING

import msgspec

from prepbook.errors import InvalidInput
from prepbook.render import files, sizes

if TYPE_CHECKING:
    from prepbook.lab.label_content import LabelContent
    from prepbook.render.labels import LabelLayout


class LabelJob(msgspec.Struct, frozen=True):
    """One print run: the stock (and sheet), the copies and the checked target file."""

    size: sizes.LabelSize
    sheet: sizes.Sheet | None
    copies: int
    target: Path
    replace: bool
    colour: bool = True  # False: the pictograms' borders black, for printers without colour

    @property
    def file(self) -> str:
        return str(files.absolute(self.target))

    @property
    def sheet_name(self) -> str | None:
        return self.sheet.name if self.sheet else None

    def deliver(self, content: LabelContent, record: Callable[[], None]) -> LabelLayout:
        """Draw ``content``, write it beside the target, record, then move it in place:
        a failure anywhere leaves no file and (raised inside the transaction) no row."""
        from prepbook.render import labels as drawing

        pdf, layout = drawing.label_pdf(content, self.size, copies=self.copies,
                                        sheet=self.sheet, colour=self.colour)
        with files.staged(self.target, replace=self.replace) as (tmp, commit):
            tmp.write_bytes(pdf)
            record()
            commit()  # the last step of the transaction: a failed move rolls the row back
        return layout


def label_job(output: str | None, default_name: str, *, size: str | None = None,
              copies: int = 1, sheet: str | None = None, replace: bool = False,
              colour: bool = True) -> LabelJob:
    """Check the stock, sheet and target file of a label print before anything is drawn."""
    target = Path(output) if output else Path(default_name)
    if target.suffix.lower() != ".pdf":
        raise InvalidInput(f"{target} should end in .pdf")
    files.check_target(target, replace=replace)
    return LabelJob(size=sizes.find_size(size or sizes.DEFAULT_SIZE),
                    sheet=sizes.find_sheet(sheet) if sheet else None,
                    copies=copies, target=target, replace=replace, colour=colour)
