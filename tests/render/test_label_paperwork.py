"""What a label carries besides its text: the GHS pictograms drawn as red-bordered
diamonds (the UN GHS frame; at least 10 mm a side where the stock allows, the least the
EU CLP, Annex I table 1.3, asks for containers up to 3 L), who standardized and who
reviewed, values never parted from their units, and the PDF/A-2b paperwork.

Independent checks: the pages are rendered by PDFium (pypdfium2) and measured on the
pixels (scipy.ndimage counts the diamonds); text and metadata are read back with pypdf.
"""

from __future__ import annotations

import io
import math
import re
from typing import Any
from xml.etree import ElementTree

import numpy as np
import pypdfium2 as pdfium
import pytest
from pypdf import PdfReader
from scipy import ndimage

from prepbook.catalog import loader
from prepbook.render import labels, pictograms, sizes
from tests.render.test_labels import LOT, batch_data, longest_spec, pdf_text, squash

DPI = 300


def _pixels(pdf: bytes, page: int = 0) -> np.ndarray:
    image = pdfium.PdfDocument(pdf)[page].render(scale=DPI / 72).to_pil().convert("RGB")
    return np.asarray(image).astype(int)


def _red(rgb: np.ndarray) -> np.ndarray:
    r, g, b = rgb[..., 0], rgb[..., 1], rgb[..., 2]
    return (r > 180) & (g < 90) & (b < 90)


def _diamonds(rgb: np.ndarray) -> list[tuple[float, float]]:
    """Width and height in mm of the inside of each red ring on the page (rings of
    pictograms side by side may touch; their insides never do)."""
    red = _red(rgb)
    found, count = ndimage.label(ndimage.binary_fill_holes(red) & ~red)
    boxes = ndimage.find_objects(found)
    return [((b[1].stop - b[1].start) * 25.4 / DPI, (b[0].stop - b[0].start) * 25.4 / DPI)
            for b in boxes if b is not None and (b[0].stop - b[0].start) > 20]


def test_a_label_draws_each_pictogram_as_a_red_diamond_of_at_least_10_mm() -> None:
    spec = loader.find_spec("AgNO3-0.1N")  # corrosion and environment
    pdf, lay = labels.label_pdf(batch_data(spec), sizes.SIZES["100x50mm"])
    assert lay.pictograms == ("GHS05", "GHS09") and lay.pictogram_side_mm >= 10
    rings = _diamonds(_pixels(pdf))
    assert len(rings) == 2
    inside = math.sqrt(2) * (1 - 2 * pictograms.BORDER)  # across the white, per mm of side
    for w, h in rings:  # a square set on its point spans its diagonal both ways
        assert w == pytest.approx(h, abs=0.3) and w >= 10 * inside - 0.3
    text = squash(pdf_text(pdf))
    assert "GHS05" not in text and "corrosion" not in text  # drawn, not written
    assert all(squash(s) in text for s in spec.hazard.statements)


def test_the_black_border_variant_has_no_red() -> None:
    spec = loader.find_spec("HCl-1N")
    pdf, _ = labels.label_pdf(batch_data(spec), sizes.SIZES["70x37mm"], colour=False)
    assert not _red(_pixels(pdf)).any()


def test_a_label_without_pictograms_draws_no_diamond() -> None:
    spec = next(s for s in loader.specs() if s.hazard and not s.hazard.pictograms)
    pdf, lay = labels.label_pdf(batch_data(spec), sizes.SIZES["70x37mm"])
    assert lay.pictograms == () and _diamonds(_pixels(pdf)) == []


def _symbol(code: str) -> np.ndarray:
    from reportlab.pdfgen.canvas import Canvas

    buffer = io.BytesIO()
    canvas = Canvas(buffer, pagesize=(60, 60))
    pictograms.draw(canvas, code, 0, 0, 40)
    canvas.save()
    rgb = _pixels(buffer.getvalue())
    return (rgb.sum(axis=2) < 200)  # black


def test_the_nine_symbols_are_drawn_and_differ() -> None:
    drawn = {code: _symbol(code) for code in pictograms.SYMBOLS}
    assert set(drawn) == {f"GHS0{i}" for i in range(1, 10)}
    for code, black in drawn.items():
        assert black.mean() > 0.015, code  # a real black symbol inside the frame
    codes = list(drawn)
    for i, a in enumerate(codes):
        for b in codes[i + 1:]:
            assert (drawn[a] != drawn[b]).mean() > 0.02, (a, b)


def test_every_pictogram_the_catalog_uses_has_a_symbol() -> None:
    used = {pictograms.code_of(p) for s in loader.specs() if s.hazard
            for p in s.hazard.pictograms}
    used |= {pictograms.code_of(p) for m in loader.materials() if m.hazard
             for p in m.hazard.pictograms}
    assert used and used <= set(pictograms.SYMBOLS)


@pytest.mark.parametrize("size", ["100x50mm", "4x2in"])
def test_large_stock_carries_full_size_pictograms_for_every_spec(size: str) -> None:
    for spec in loader.specs():
        lay = labels.layout(batch_data(spec), sizes.SIZES[size])
        assert not lay.pictograms or lay.pictogram_side_mm >= 10, spec.code


@pytest.mark.parametrize("size", list(sizes.SIZES))
def test_a_lot_with_five_pictograms_fits_every_size(size: str) -> None:
    from msgspec.structs import replace

    from prepbook.lab.label_content import Hazard

    most = max((m for m in loader.materials() if m.hazard),
               key=lambda m: len(m.hazard.pictograms) if m.hazard else 0)
    assert most.hazard is not None
    lot = replace(LOT, name=most.name, material=most.code, formula=most.formula,
                  hazard=Hazard(signal_word=most.hazard.signal_word,
                                     statements=list(most.hazard.statements),
                                     pictograms=list(most.hazard.pictograms)))
    pdf, lay = labels.label_pdf(lot, sizes.SIZES[size])
    assert len(lay.pictograms) == len(most.hazard.pictograms) >= 4
    assert len(_diamonds(_pixels(pdf))) == len(lay.pictograms)
    assert lay.pictogram_side_mm >= pictograms.SIDES_MM[-1]


def test_standardized_names_who_recorded_and_who_reviewed() -> None:
    data = batch_data(loader.find_spec("NaOH-0.1N"))
    text = squash(pdf_text(labels.label_pdf(data, sizes.SIZES["100x50mm"])[0]))
    assert "Standardized 2026-11-26 by ines, reviewed by mara (R261126-1)" in text
    unreviewed = batch_data(loader.find_spec("NaOH-0.1N"), reviewed_by=None)
    text = squash(pdf_text(labels.label_pdf(unreviewed, sizes.SIZES["100x50mm"])[0]))
    assert "Standardized 2026-11-26 by ines, no review recorded" in text


BROKEN = re.compile(r"(nominal\s*\n|\d\s*\n\s*(N|mol/L)\b)")


@pytest.mark.parametrize("size", list(sizes.SIZES))
@pytest.mark.parametrize("sheet", [None, "a4"])
def test_values_never_part_from_their_units(size: str, sheet: str | None) -> None:
    for spec in (longest_spec(), loader.find_spec("AgNO3-0.1N"),
                 loader.find_spec("EDTA-0.05M")):
        pdf, _ = labels.label_pdf(batch_data(spec), sizes.SIZES[size],
                                  sheet=sizes.SHEETS[sheet] if sheet else None)
        page = PdfReader(io.BytesIO(pdf)).pages[0].extract_text() or ""
        assert not BROKEN.search(page.replace("\xa0", " ")), (spec.code, page)


def fonts_of(pdf: bytes) -> list[tuple[str, bool]]:
    """(base font, embedded) of every font any page or form uses."""
    found: dict[str, bool] = {}

    def walk(resources: Any) -> None:
        resources = resources.get_object() if resources is not None else {}
        for font in (resources.get("/Font") or {}).values():
            font = font.get_object()
            fonts = [d.get_object() for d in font.get("/DescendantFonts", [])] or [font]
            for f in fonts:
                desc = f.get("/FontDescriptor")
                desc = desc.get_object() if desc is not None else {}
                found[str(font["/BaseFont"])] = any(k in desc for k in
                                                    ("/FontFile", "/FontFile2", "/FontFile3"))
        for xobject in (resources.get("/XObject") or {}).values():
            walk(xobject.get_object().get("/Resources"))

    for page in PdfReader(io.BytesIO(pdf)).pages:
        walk(page.get("/Resources"))
    return sorted(found.items())


def assert_pdf_a(pdf: bytes, title: str) -> None:
    """Every font embedded; the XMP claims PDF/A-2b and agrees with the document
    information; an sRGB (three-component) output intent."""
    fonts = fonts_of(pdf)
    assert fonts and all(embedded for _, embedded in fonts), fonts
    reader = PdfReader(io.BytesIO(pdf))
    xmp = reader.xmp_metadata
    assert xmp is not None
    pdfaid = "{http://www.aiim.org/pdfa/ns/id/}"
    root = ElementTree.fromstring(xmp.stream.get_data())
    assert [e.text for e in root.iter(f"{pdfaid}part")] == ["2"]
    assert [e.text for e in root.iter(f"{pdfaid}conformance")] == ["B"]
    assert xmp.dc_title == {"x-default": title} and reader.metadata.title == title
    intents = reader.trailer["/Root"]["/OutputIntents"]
    assert len(intents) == 1
    intent = intents[0].get_object()
    assert intent["/S"] == "/GTS_PDFA1"
    icc = intent["/DestOutputProfile"].get_object()
    assert icc["/N"] == 3 and icc.get_data()[36:40] == b"acsp"  # an ICC profile
    assert reader.trailer.get("/ID") is not None


@pytest.mark.parametrize("size", list(sizes.SIZES))
def test_labels_are_pdf_a_with_embedded_fonts(size: str) -> None:
    data = batch_data(longest_spec())
    pdf, _ = labels.label_pdf(data, sizes.SIZES[size])
    assert_pdf_a(pdf, f"prepbook label {data.code}")


def test_a_sheet_of_labels_is_pdf_a_too() -> None:
    pdf, _ = labels.label_pdf(LOT, sizes.SIZES["62x29mm"], copies=3,
                              sheet=sizes.SHEETS["letter"])
    assert_pdf_a(pdf, f"prepbook label {LOT.code}")
