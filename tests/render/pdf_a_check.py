"""What a PDF/A-2b file must show that can be read without a validator.

No PDF/A validator installs from the registries this project uses (PyPI, Debian, npm:
veraPDF is a Java application from Maven), so the tests read the files themselves with
pikepdf, apart from the pypdf reading in ``test_label_paperwork``. ``problems`` lists
every departure it finds from ISO 19005-2 (PDF/A-2), level b, among the requirements a
reader of the file can check: the clause numbers beside each are from memory.

What it cannot show: glyphs that a font lacks, colour in images, and the many rules only a
full validator walks. It is a check of the structure, not a validation.
"""

from __future__ import annotations

import io
import re
from datetime import datetime
from typing import Any
from xml.etree import ElementTree

import pikepdf
from pikepdf.models.metadata import decode_pdf_date

RDF = "http://www.w3.org/1999/02/22-rdf-syntax-ns#"
PDFAID = "http://www.aiim.org/pdfa/ns/id/"
# XMP schemas that need no extension schema in the file (6.6.2.3.1): those of the XMP
# specification of 2004, and the PDF/A identification.
PREDEFINED = {
    "http://purl.org/dc/elements/1.1/", "http://ns.adobe.com/xap/1.0/",
    "http://ns.adobe.com/xap/1.0/rights/", "http://ns.adobe.com/xap/1.0/mm/",
    "http://ns.adobe.com/xap/1.0/bj/", "http://ns.adobe.com/xap/1.0/t/pg/",
    "http://ns.adobe.com/xmp/1.0/DynamicMedia/", "http://ns.adobe.com/pdf/1.3/",
    "http://ns.adobe.com/photoshop/1.0/", "http://ns.adobe.com/camera-raw-settings/1.0/",
    "http://ns.adobe.com/tiff/1.0/", "http://ns.adobe.com/exif/1.0/",
    "http://ns.adobe.com/exif/1.0/aux/", PDFAID,
}
# Actions a PDF/A file may not hold (6.5.1), and the standard blend modes (6.2.10).
FORBIDDEN_ACTIONS = {"/Launch", "/Sound", "/Movie", "/ResetForm", "/ImportData", "/Hide",
                     "/JavaScript", "/SetOCGState", "/Rendition", "/Trans", "/GoTo3DView"}
BLEND_MODES = {"/Normal", "/Compatible", "/Multiply", "/Screen", "/Overlay", "/Darken",
               "/Lighten", "/ColorDodge", "/ColorBurn", "/HardLight", "/SoftLight",
               "/Difference", "/Exclusion", "/Hue", "/Saturation", "/Color", "/Luminosity"}
ICC_COMPONENTS = {b"GRAY": 1, b"RGB ": 3, b"CMYK": 4}
# docinfo entry -> the XMP property it must agree with (6.6.3), and how it is read there.
DOCINFO_XMP = {"/Title": "dc:title", "/Author": "dc:creator", "/Subject": "dc:description",
               "/Creator": "xmp:CreatorTool", "/Producer": "pdf:Producer",
               "/Keywords": "pdf:Keywords", "/CreationDate": "xmp:CreateDate",
               "/ModDate": "xmp:ModifyDate"}


def problems(pdf: bytes) -> list[str]:
    """Every departure from PDF/A-2b found in ``pdf``, one line each (none: [])."""
    found: list[str] = []
    head = pdf[:pdf.find(b"\n", pdf.find(b"\n") + 1)].split(b"\n")
    if not re.fullmatch(rb"%PDF-1\.[0-7]\r?", head[0]):
        found.append(f"header {head[0]!r} is not %PDF-1.0 to %PDF-1.7 (6.1.2)")
    if len(head) < 2 or not head[1].startswith(b"%") or \
            sum(b > 127 for b in head[1][1:]) < 4:
        found.append("no binary comment after the header (6.1.2)")
    try:
        doc = pikepdf.open(io.BytesIO(pdf))
    except pikepdf.PasswordError:
        return [*found, "encrypted (6.1.3)"]
    with doc:
        if doc.is_encrypted or "/Encrypt" in doc.trailer:
            found.append("encrypted (6.1.3)")
        if "/ID" not in doc.trailer:
            found.append("no file identifier /ID in the trailer (6.1.3)")
        found += _objects(doc)
        found += metadata_problems(doc)
        found += _output_intent(doc)
        found += _content(doc)
    return found


def _objects(doc: pikepdf.Pdf) -> list[str]:
    """Streams, fonts, actions, annotations and transparency, object by object."""
    found: list[str] = []
    for obj in doc.objects:
        if not isinstance(obj, pikepdf.Dictionary | pikepdf.Stream):
            continue
        if isinstance(obj, pikepdf.Stream):
            if {"/F", "/FFilter", "/FDecodeParms"} & set(obj.keys()):
                found.append("a stream held in an external file (6.1.7.1)")
            if "/LZWDecode" in _names(obj.get("/Filter")):
                found.append("an LZW-compressed stream (6.1.7.2)")
        kind = obj.get("/Type")
        if kind == "/Font" and obj.get("/Subtype") not in ("/Type0", "/Type3"):
            descriptor = obj.get("/FontDescriptor")
            if descriptor is None or not {"/FontFile", "/FontFile2", "/FontFile3"} & set(
                    descriptor.keys()):
                found.append(f"font {obj.get('/BaseFont')} is not embedded (6.2.11.4.1)")
        if "/JS" in obj or obj.get("/S") in FORBIDDEN_ACTIONS:
            found.append(f"a forbidden action {obj.get('/S')} (6.5.1)")
        if "/AA" in obj and kind in ("/Catalog", "/Page", "/Pages"):
            found.append(f"additional actions /AA on the {kind} (6.5.2)")
        if kind == "/Annot" and obj.get("/Subtype") != "/Popup":
            flags = int(obj.get("/F", 0))
            if not flags & 4 or flags & (1 | 2 | 32 | 256):
                found.append(f"annotation {obj.get('/Subtype')} not set to print (6.3.2)")
        if obj.get("/Subtype") == "/PS" or "/OPI" in obj:
            found.append("a PostScript XObject or OPI (6.2.9)")
        if obj.get("/Interpolate") is True:
            found.append("an image with /Interpolate true (6.2.8)")
        modes = _names(obj.get("/BM"))
        if any(m not in BLEND_MODES for m in modes):
            found.append(f"a blend mode outside ISO 32000-1: {modes} (6.2.10)")
    tree = doc.Root.get("/Names")
    if tree is not None and ("/EmbeddedFiles" in tree or "/JavaScript" in tree):
        found.append("embedded files or document JavaScript in the name tree (6.8, 6.5.1)")
    if "/OpenAction" in doc.Root and doc.Root.OpenAction.get("/S") in FORBIDDEN_ACTIONS:
        found.append("a forbidden open action (6.5.1)")
    return found


def _names(value: Any) -> list[str]:
    """A name, or an array of names (a stream's filters, a blend mode), as a list."""
    if value is None:
        return []
    return [str(v) for v in value] if isinstance(value, pikepdf.Array) else [str(value)]


def _xmp_value(root: ElementTree.Element, prefix: str, local: str) -> str | None:
    uri = {"dc": "http://purl.org/dc/elements/1.1/", "xmp": "http://ns.adobe.com/xap/1.0/",
           "pdf": "http://ns.adobe.com/pdf/1.3/"}[prefix]
    for element in root.iter(f"{{{uri}}}{local}"):
        items = [li.text or "" for li in element.iter(f"{{{RDF}}}li")]
        return "; ".join(items) if items else (element.text or "")
    return None


def _same(docinfo: str, xmp: str, key: str) -> bool:
    if key in ("/CreationDate", "/ModDate"):
        return decode_pdf_date(docinfo) == datetime.fromisoformat(xmp)
    return docinfo == xmp


def metadata_problems(doc: pikepdf.Pdf) -> list[str]:
    """The XMP stream: unfiltered, its packet header, pdfaid 2/B, only predefined
    schemas, and agreeing with the document information dictionary."""
    meta = doc.Root.get("/Metadata")
    if meta is None:
        return ["no XMP metadata stream in the catalog (6.6.2.1)"]
    found: list[str] = []
    if meta.get("/Type") != "/Metadata" or meta.get("/Subtype") != "/XML":
        found.append("the metadata stream is not /Type /Metadata /Subtype /XML (6.6.2.1)")
    if "/Filter" in meta:
        found.append("the metadata stream is compressed (6.6.2.1)")
    data = meta.read_bytes()
    packet = re.match(rb"<\?xpacket ([^?]*)\?>", data)
    if packet is None or b"bytes=" in packet.group(1) or b"encoding=" in packet.group(1):
        found.append("the XMP packet header is missing or has bytes/encoding (6.6.2.1)")
    root = ElementTree.fromstring(data)
    part = [e.text for e in root.iter(f"{{{PDFAID}}}part")]
    conformance = [e.text for e in root.iter(f"{{{PDFAID}}}conformance")]
    if (part, conformance) != (["2"], ["B"]):
        found.append(f"pdfaid part {part} conformance {conformance}, not 2 and B (6.6.4)")
    for description in root.iter(f"{{{RDF}}}Description"):
        for prop in description:
            uri = prop.tag[1:].split("}")[0]
            if uri not in PREDEFINED:
                found.append(f"XMP schema {uri} has no extension schema (6.6.2.3.1)")
    for key, value in doc.docinfo.items():
        wanted = DOCINFO_XMP.get(str(key))
        if wanted is None:
            continue
        prefix, local = wanted.split(":")
        xmp = _xmp_value(root, prefix, local)
        if xmp is None or not _same(str(value), xmp, str(key)):
            found.append(f"docinfo {key} {str(value)!r} and XMP {wanted} {xmp!r} differ "
                         "(6.6.3)")
    return found


def _output_intent(doc: pikepdf.Pdf) -> list[str]:
    """One PDF/A output intent whose DestOutputProfile is a sound ICC output or display
    profile of major version 4 or lower, with /N its number of components."""
    intents = [i for i in doc.Root.get("/OutputIntents", []) if i.get("/S") == "/GTS_PDFA1"]
    if not intents:
        return ["no GTS_PDFA1 output intent (6.2.3)"]
    profiles = {bytes(i.DestOutputProfile.read_bytes()) for i in intents
                if "/DestOutputProfile" in i}
    if len(profiles) != 1:
        return [f"{len(profiles)} different DestOutputProfiles, one expected (6.2.3)"]
    icc = profiles.pop()
    stream = intents[0].DestOutputProfile
    found: list[str] = []
    if len(icc) < 132 or icc[36:40] != b"acsp" or \
            int.from_bytes(icc[:4], "big") != len(icc):
        return ["the DestOutputProfile is not a whole ICC profile (6.2.3)"]
    if icc[12:16] not in (b"prtr", b"mntr"):
        found.append(f"ICC device class {icc[12:16]!r}: an output or display profile is "
                     "needed (6.2.3)")
    if icc[8] > 4:
        found.append(f"ICC profile version {icc[8]}: PDF/A-2 admits up to 4 (6.2.3)")
    if ICC_COMPONENTS.get(bytes(icc[16:20])) != int(stream.get("/N", 0)):
        found.append(f"/N {stream.get('/N')} does not match the profile's colour space "
                     f"{icc[16:20]!r}")
    return found


def _content(doc: pikepdf.Pdf) -> list[str]:
    """With an RGB output intent no content may paint in DeviceCMYK (6.2.4.3)."""
    found: list[str] = []
    streams: list[Any] = list(doc.pages)
    streams += [o for o in doc.objects
                if isinstance(o, pikepdf.Stream) and o.get("/Subtype") == "/Form"]
    for stream in streams:
        ops = {str(i.operator) for i in pikepdf.parse_content_stream(stream)}
        if ops & {"k", "K"}:
            found.append("content painted in DeviceCMYK (k/K) under an RGB output intent "
                         "(6.2.4.3)")
    if any(o == pikepdf.Name.DeviceCMYK for obj in doc.objects
           if isinstance(obj, pikepdf.Dictionary | pikepdf.Array) for o in _values(obj)):
        found.append("a DeviceCMYK colour space under an RGB output intent (6.2.4.3)")
    return found


def _values(obj: Any) -> list[Any]:
    return list(obj.values()) if isinstance(obj, pikepdf.Dictionary) else list(obj)
