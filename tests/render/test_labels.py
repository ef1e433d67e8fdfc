"""Bottle labels: every field is in the PDF, the QR code decodes to the code, the text
fits its boxes at every size for every spec in the catalog.

Independent checks: the text is read back with pypdf, the characters' positions with
pypdfium2 (PDFium's own text extraction), and the QR code is decoded by zxing-cpp from
a pypdfium2 rendering; none of them share code with reportlab or qrcode.
"""

from __future__ import annotations

import io
from typing import Any

import pypdfium2 as pdfium
import pytest
import zxingcpp
from msgspec.structs import replace
from pypdf import PdfReader

from prepbook.catalog import loader
from prepbook.errors import InvalidInput
from prepbook.lab.label_content import BatchLabel, Hazard, LotLabel
from prepbook.render import labels, sizes


def batch_data(spec: Any, **over: Any) -> BatchLabel:
    """Invented label content for a catalog spec (demo-style values)."""
    hz = spec.hazard
    data = BatchLabel(
        code=f"{spec.code}-261125-1", spec=spec.code, name=spec.name, unit=spec.unit,
        nominal=spec.nominal, concentration=spec.nominal * 1.00771, factor=1.00771,
        normality=None, run="R261126-1", state="in-service", made_on="2026-11-25",
        made_by="ines", standardized_on="2026-11-26", standardized_by="ines",
        reviewed_by="mara", restandardize_by="2026-12-04",
        expires="2027-02-23", storage=spec.storage, printed_on="2026-12-01",
        printed_by="ines",
        hazard=Hazard(signal_word=hz.signal_word, statements=list(hz.statements),
                      pictograms=list(hz.pictograms)) if hz else Hazard(),
    )
    return replace(data, **over)


LOT = LotLabel(
    code="KHP-LOT-7", name="Potassium hydrogen phthalate", material="KHP",
    formula="KHC8H4O4", purity_percent="99.98", purity_u_percent="0.05",
    certificate="CoA 77 (invented)", opened_on="2026-10-01", dried_on="2026-11-20",
    drying="120 C for 2 h", expires="2028-05-24", expired=False, hazard=Hazard(),
    printed_on="2026-12-01", printed_by="ines",
)


def longest_spec() -> Any:
    return max(loader.specs(), key=lambda s: len(s.name))


def pdf_text(pdf: bytes) -> str:
    return " ".join((p.extract_text() or "") for p in PdfReader(io.BytesIO(pdf)).pages)


def squash(text: str) -> str:
    return " ".join(text.split())


def test_every_field_of_a_batch_label_is_in_the_pdf() -> None:
    spec = loader.find_spec("AgNO3-0.1N")
    data = batch_data(spec)
    pdf, lay = labels.label_pdf(data, sizes.SIZES["100x50mm"])
    assert lay.tier == 0
    text = squash(pdf_text(pdf))
    for expected in [spec.name, "nominal 0.1 N", "1.0077",  # factor, 4 decimals
                     "0.10077 N at 20 °C", data.code, "2026-11-25 by ines", "2026-11-26",
                     "R261126-1", "2026-12-04", "2027-02-23", "WARNING", spec.storage,
                     *spec.hazard.statements, "SDS",
                     "local regulations"]:
        assert squash(expected) in text, expected


def test_a_molar_spec_shows_mol_per_litre() -> None:
    spec = loader.find_spec("EDTA-0.05M")
    text = squash(pdf_text(labels.label_pdf(batch_data(spec), sizes.SIZES["100x50mm"])[0]))
    assert "nominal 0.05 mol/L" in text
    assert f"{0.05 * 1.00771:.6f} mol/L at 20 °C" in text  # 5 significant figures


def test_an_unstandardized_batch_says_so_and_shows_no_factor() -> None:
    spec = loader.find_spec("NaOH-0.1N")
    data = batch_data(spec, factor=None, concentration=None, run=None, standardized_on=None,
                      restandardize_by=None, state="new")
    text = squash(pdf_text(labels.label_pdf(data, sizes.SIZES["70x37mm"])[0]))
    assert "NOT YET STANDARDIZED" in text and "Factor" not in text
    assert "Standardized not yet" in text


def test_every_field_of_a_lot_label_is_in_the_pdf() -> None:
    text = squash(pdf_text(labels.label_pdf(LOT, sizes.SIZES["70x37mm"])[0]))
    for expected in ["PRIMARY STANDARD", "Potassium hydrogen phthalate", "KHP-LOT-7",
                     "99.98 % ± 0.05 %", "CoA 77 (invented)", "Opened 2026-10-01",
                     "Dried 2026-11-20", "Expires 2028-05-24", "120 C for 2 h", "SDS"]:
        assert expected in text, expected


def _decode(pdf: bytes, page: int = 0, scale: float = 4.0) -> list[str]:
    image = pdfium.PdfDocument(pdf)[page].render(scale=scale).to_pil()
    return [r.text for r in zxingcpp.read_barcodes(image)
            if r.format == zxingcpp.BarcodeFormat.QRCode]


@pytest.mark.parametrize("size", list(sizes.SIZES))
def test_the_qr_code_decodes_to_the_batch_code_at_every_size(size: str) -> None:
    data = batch_data(longest_spec())
    pdf, _ = labels.label_pdf(data, sizes.SIZES[size])
    # 300 dpi, a common label-printer resolution.
    assert _decode(pdf, scale=300 / 72) == [data.code]


def test_the_qr_code_of_a_lot_label_decodes_to_the_lot_code() -> None:
    pdf, _ = labels.label_pdf(LOT, sizes.SIZES["62x29mm"])
    assert _decode(pdf, scale=300 / 72) == ["KHP-LOT-7"]


def test_a_sheet_carries_the_copies_and_each_qr_code_decodes() -> None:
    data = batch_data(loader.find_spec("NaOH-0.1N"))
    pdf, _ = labels.label_pdf(data, sizes.SIZES["70x37mm"], copies=20,
                              sheet=sizes.SHEETS["a4"])
    per_sheet = sizes.grid(sizes.SHEETS["a4"], sizes.SIZES["70x37mm"]).per_sheet
    reader = PdfReader(io.BytesIO(pdf))
    assert len(reader.pages) == -(-20 // per_sheet)
    assert pdf_text(pdf).count(data.code) >= 20
    assert _decode(pdf, page=0, scale=2.5) == [data.code] * per_sheet


def test_one_label_per_page_for_copies_without_a_sheet() -> None:
    data = batch_data(loader.find_spec("NaOH-0.1N"))
    pdf, _ = labels.label_pdf(data, sizes.SIZES["62x29mm"], copies=3)
    pages = PdfReader(io.BytesIO(pdf)).pages
    assert len(pages) == 3
    w_mm = float(pages[0].mediabox.width) / 72 * 25.4
    h_mm = float(pages[0].mediabox.height) / 72 * 25.4
    assert (round(w_mm, 2), round(h_mm, 2)) == (62.0, 29.0)


def _char_boxes(pdf: bytes) -> list[tuple[str, tuple[float, float, float, float]]]:
    page = pdfium.PdfDocument(pdf)[0]
    tp = page.get_textpage()
    out = []
    for i in range(tp.count_chars()):
        ch = tp.get_text_range(i, 1)
        if ch.strip():
            out.append((ch, tp.get_charbox(i)))
    return out


def _inside(box: tuple[float, float, float, float], rect: tuple[float, float, float, float],
            slack: float = 0.6) -> bool:
    left, bottom, right, top = box
    x, y, w, h = rect
    return (left >= x - slack and right <= x + w + slack and bottom >= y - slack
            and top <= y + h + slack)


@pytest.mark.parametrize("size", list(sizes.SIZES))
def test_the_longest_spec_name_fits_its_boxes_at_every_size(size: str) -> None:
    """Every character PDFium finds lies inside a text box or the side column, none on
    the QR code, and nothing crosses the label's edge."""
    spec = longest_spec()
    data = batch_data(spec)
    pdf, lay = labels.label_pdf(data, sizes.SIZES[size])
    assert lay.fits and lay.font_pt >= labels.MIN_FONT_PT
    chars = _char_boxes(pdf)
    assert len(chars) > 150
    areas = [*lay.text_boxes, lay.side_box]
    for ch, box in chars:
        assert any(_inside(box, a) for a in areas), (ch, box)
        qx, qy, qs, _ = lay.qr_box
        assert not (box[0] < qx + qs and box[2] > qx and box[1] < qy + qs and box[3] > qy), ch
    # The title is whole on the label, even at the smallest size.
    assert squash(spec.name) in squash(pdf_text(pdf))


def test_the_smallest_size_still_carries_the_hazard_by_code_and_says_so() -> None:
    smallest = min(sizes.SIZES.values(), key=lambda s: s.width_pt * s.height_pt)
    spec = longest_spec()
    pdf, lay = labels.label_pdf(batch_data(spec), smallest)
    text = squash(pdf_text(pdf))
    for statement in spec.hazard.statements:
        assert statement.split()[0] in text  # the H-number
    if lay.tier >= 2:
        assert "full statements in the SDS" in text
        assert any("by code" in n for n in lay.notes)


@pytest.mark.parametrize("spec", [s.code for s in loader.specs()])
def test_every_catalog_spec_fits_the_smallest_size(spec: str) -> None:
    smallest = min(sizes.SIZES.values(), key=lambda s: s.width_pt * s.height_pt)
    _, lay = labels.label_pdf(batch_data(loader.find_spec(spec)), smallest)
    assert lay.fits


def test_text_that_cannot_fit_is_refused_never_clipped() -> None:
    data = batch_data(longest_spec(), storage="Keep cool. " * 200)
    with pytest.raises(InvalidInput, match="does not fit"):
        labels.label_pdf(data, sizes.SIZES["62x29mm"])


def test_copies_must_be_positive() -> None:
    with pytest.raises(InvalidInput):
        labels.label_pdf(LOT, sizes.SIZES["70x37mm"], copies=0)


def test_the_label_is_black_on_white_but_for_the_pictograms_red_borders() -> None:
    """Readable in black and white: every rendered pixel is grey (R = G = B) or a shade
    of the pictograms' red (G = B); with the black border, every one is grey."""
    for colour in (True, False):
        pdf, _ = labels.label_pdf(batch_data(longest_spec()), sizes.SIZES["70x37mm"],
                                  colour=colour)
        image = pdfium.PdfDocument(pdf)[0].render(scale=2).to_pil().convert("RGB")
        colours = image.getcolors(maxcolors=1 << 20) or []
        greys = [r == g == b for _, (r, g, b) in colours]
        assert colours and (all(greys) if not colour else not all(greys))
        assert all(g == b and r >= g for _, (r, g, b) in colours)
