"""Labels and reports as PDF/A-2b, read with pikepdf (``pdf_a_check``): every label
stock and sheet, colour and black-bordered, batch and lot, passes every check; and each
check fails on a file spoiled in the one way it looks for, so none of them passes
whatever it is given. The report is checked through the command in
tests/cli/test_report_pdf_a.py. No validator checks these files (none installs here)."""

from __future__ import annotations

import io
import re
import zlib
from collections.abc import Callable
from importlib import resources

import pikepdf
import pytest

from prepbook.render import labels, sizes
from tests.render.pdf_a_check import metadata_problems, problems
from tests.render.test_labels import LOT, batch_data, longest_spec


def _label(colour: bool = True) -> bytes:
    pdf, _ = labels.label_pdf(batch_data(longest_spec()), sizes.SIZES["70x37mm"],
                              colour=colour)
    return pdf


@pytest.mark.parametrize("size", list(sizes.SIZES))
def test_every_label_stock_passes_the_pdf_a_checks(size: str) -> None:
    pdf, _ = labels.label_pdf(batch_data(longest_spec()), sizes.SIZES[size])
    assert problems(pdf) == []


@pytest.mark.parametrize("sheet", list(sizes.SHEETS))
def test_sheets_lot_labels_and_black_borders_pass_too(sheet: str) -> None:
    lot, _ = labels.label_pdf(LOT, sizes.SIZES["62x29mm"], copies=3,
                              sheet=sizes.SHEETS[sheet], outline=True)
    assert problems(lot) == []
    assert problems(_label(colour=False)) == []


def test_the_output_intent_profile_is_an_icc_v4_display_profile() -> None:
    """The shipped sRGB profile is ICC version 4 (LittleCMS writes 4.4). PDF/A-2
    (ISO 19005-2) rests on ISO 32000-1, which admits ICC.1:2004-10 profiles (version 4),
    so an ICC v4 output intent is allowed there (PDF/A-1 allowed version 2 only). The
    minor version 4.4 is later than the 4.2 of ICC.1:2004-10; its tags are all of 4.2
    (below) and the checks on the major version only: from memory."""
    icc = resources.files("prepbook.render").joinpath("fonts", "sRGB.icc").read_bytes()
    assert (icc[8], icc[9] >> 4) == (4, 4)
    assert (icc[12:16], icc[16:20], icc[20:24]) == (b"mntr", b"RGB ", b"XYZ ")
    count = int.from_bytes(icc[128:132], "big")
    tags = {icc[132 + 12 * i:136 + 12 * i] for i in range(count)}
    assert tags == {b"desc", b"cprt", b"wtpt", b"chad", b"rXYZ", b"gXYZ", b"bXYZ", b"rTRC",
                    b"gTRC", b"bTRC", b"chrm"}  # every one defined in ICC.1:2004-10
    with pikepdf.open(io.BytesIO(_label())) as doc:
        profile = doc.Root.OutputIntents[0].DestOutputProfile
        assert profile.read_bytes() == icc and int(profile.N) == 3


def _spoil(change: Callable[[pikepdf.Pdf], None], **save: object) -> bytes:
    with pikepdf.open(io.BytesIO(_label())) as doc:
        change(doc)
        out = io.BytesIO()
        doc.save(out, **save)  # type: ignore[arg-type]
        return out.getvalue()


def _font(doc: pikepdf.Pdf) -> None:
    page = doc.pages[0]
    page.Resources.Font.F99 = doc.make_indirect(pikepdf.Dictionary(
        Type=pikepdf.Name.Font, Subtype=pikepdf.Name.Type1, BaseFont=pikepdf.Name.Helvetica))


def _javascript(doc: pikepdf.Pdf) -> None:
    doc.Root.OpenAction = doc.make_indirect(pikepdf.Dictionary(
        S=pikepdf.Name.JavaScript, JS=pikepdf.String("app.alert('x')")))


def _pdfaid(doc: pikepdf.Pdf) -> None:
    with doc.open_metadata(set_pikepdf_as_editor=False) as meta:
        meta["pdfaid:part"] = "1"


def _title(doc: pikepdf.Pdf) -> None:
    doc.docinfo.Title = pikepdf.String("another title")


def _icc(version: int) -> Callable[[pikepdf.Pdf], None]:
    def change(doc: pikepdf.Pdf) -> None:
        profile = doc.Root.OutputIntents[0].DestOutputProfile
        data = bytearray(profile.read_bytes())
        data[8] = version
        profile.write(bytes(data))
    return change


def _no_intent(doc: pikepdf.Pdf) -> None:
    del doc.Root.OutputIntents


def _cmyk(doc: pikepdf.Pdf) -> None:
    doc.pages[0].contents_add(doc.make_stream(b"0 0 0 1 k 0 0 5 5 re f"))


def _blend(doc: pikepdf.Pdf) -> None:
    doc.pages[0].Resources.ExtGState = pikepdf.Dictionary(G9=doc.make_indirect(
        pikepdf.Dictionary(Type=pikepdf.Name.ExtGState, BM=pikepdf.Name("/Glow"))))


@pytest.mark.parametrize(("change", "save", "expected"), [
    (_font, {}, "font /Helvetica is not embedded"),
    (_javascript, {}, "a forbidden action /JavaScript"),
    (_pdfaid, {}, "pdfaid part ['1'] conformance ['B'], not 2 and B"),
    (_title, {}, "docinfo /Title 'another title' and XMP dc:title"),
    (_icc(5), {}, "ICC profile version 5: PDF/A-2 admits up to 4"),
    (_no_intent, {}, "no GTS_PDFA1 output intent"),
    (_cmyk, {}, "content painted in DeviceCMYK"),
    (_blend, {}, "a blend mode outside ISO 32000-1"),
    (lambda doc: None, {"encryption": pikepdf.Encryption(owner="o", user="")}, "encrypted"),
    (lambda doc: None, {"static_id": True, "fix_metadata_version": False}, None),
], ids=["font", "javascript", "pdfaid", "title", "icc5", "no-intent", "cmyk", "blend",
        "encrypted", "unchanged"])
def test_each_check_finds_the_fault_it_looks_for(
        change: Callable[[pikepdf.Pdf], None], save: dict[str, object],
        expected: str | None) -> None:
    found = problems(_spoil(change, **save))
    if expected is None:  # saved again by pikepdf, nothing changed: still clean
        assert found == []
    else:
        assert any(line.startswith(expected) for line in found), found


def test_compressed_xmp_is_found() -> None:
    """qpdf writes the XMP uncompressed whatever it is told, so the fault is made in
    memory and the metadata check reads it there."""
    with pikepdf.open(io.BytesIO(_label())) as doc:
        assert metadata_problems(doc) == []
        meta = doc.Root.Metadata
        meta.write(zlib.compress(meta.read_bytes()), filter=pikepdf.Name.FlateDecode)
        assert metadata_problems(doc) == ["the metadata stream is compressed (6.6.2.1)"]


def test_a_plain_pdf_with_a_newer_header_fails_at_once() -> None:
    pdf = re.sub(rb"^%PDF-1\.\d", b"%PDF-2.0", _label())
    assert problems(pdf)[0].startswith("header b'%PDF-2.0'")
