"""Labels and reports as archival PDF: embedded fonts and PDF/A-2b identification.

Every glyph on a label or a report is drawn with DejaVu Sans Condensed, a TrueType
font under the Bitstream Vera licence (an open licence; the DejaVu changes are public
domain) shipped in ``prepbook/render/fonts`` with its licence text; reportlab embeds a
subset of it. No text uses the PDF standard fonts, which are never embedded.

``pdf_a`` turns reportlab's output into PDF/A-2b as far as can be done without a
validator: it adds the XMP metadata (title, creator, producer, dates, the PDF/A part
and conformance) and an sRGB output intent (an ICC profile made by LittleCMS from its
built-in sRGB definition, in ``fonts/sRGB.icc``), through pikepdf.

reportlab and pikepdf are imported only inside the functions.
"""

from __future__ import annotations

from functools import cache
from importlib import resources
from typing import Final

REGULAR: Final = "PrepbookSans"
BOLD: Final = "PrepbookSans-Bold"
ITALIC: Final = "PrepbookSans-Oblique"
BOLD_ITALIC: Final = "PrepbookSans-BoldOblique"

_FILES = {
    REGULAR: "DejaVuSansCondensed.ttf",
    BOLD: "DejaVuSansCondensed-Bold.ttf",
    ITALIC: "DejaVuSansCondensed-Oblique.ttf",
    BOLD_ITALIC: "DejaVuSansCondensed-BoldOblique.ttf",
}


def _data(name: str) -> bytes:
    return resources.files("prepbook.render").joinpath("fonts", name).read_bytes()


@cache
def register_fonts() -> str:
    """Register the shipped TrueType faces with reportlab (once) and return the family
    name, so that ``<b>`` and ``<i>`` in a Paragraph pick the bold and oblique faces."""
    import io

    from reportlab.lib.fonts import addMapping
    from reportlab.pdfbase import pdfmetrics
    from reportlab.pdfbase.ttfonts import TTFont

    for name, file in _FILES.items():
        pdfmetrics.registerFont(TTFont(name, io.BytesIO(_data(file))))
    for bold, italic, face in ((0, 0, REGULAR), (1, 0, BOLD), (0, 1, ITALIC),
                               (1, 1, BOLD_ITALIC)):
        addMapping(REGULAR, bold, italic, face)
    return REGULAR


def pdf_a(pdf: bytes, *, title: str, subject: str) -> bytes:
    """``pdf`` (from reportlab, fonts embedded) with the XMP metadata and the sRGB
    output intent of PDF/A-2b. The output is deterministic for the same input."""
    import io

    import pikepdf

    with pikepdf.open(io.BytesIO(pdf)) as doc:
        icc = doc.make_stream(_data("sRGB.icc"))
        icc.N = 3
        doc.Root.OutputIntents = pikepdf.Array([pikepdf.Dictionary(
            Type=pikepdf.Name.OutputIntent, S=pikepdf.Name.GTS_PDFA1,
            OutputConditionIdentifier=pikepdf.String("sRGB"),
            Info=pikepdf.String("sRGB IEC61966-2.1"),
            RegistryName=pikepdf.String("http://www.color.org"),
            DestOutputProfile=icc)])
        if "/Trapped" in doc.docinfo:  # no XMP equivalent in PDF/A-2b; left out of both
            del doc.docinfo["/Trapped"]
        doc.docinfo.Author = pikepdf.String("prepbook")
        with doc.open_metadata(set_pikepdf_as_editor=False) as meta:
            meta.load_from_docinfo(doc.docinfo)
            meta["dc:title"] = title
            meta["dc:description"] = subject
            meta["xmp:CreatorTool"] = "prepbook"
            meta["pdf:Producer"] = "prepbook (reportlab, pikepdf)"
            meta["pdfaid:part"] = "2"
            meta["pdfaid:conformance"] = "B"
        out = io.BytesIO()
        doc.save(out, deterministic_id=True, fix_metadata_version=False)
        return out.getvalue()
