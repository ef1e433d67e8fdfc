"""The batch traceability report as PDF (reportlab platypus, charts from reportlab.graphics).

Pure: it draws the ``ReportData`` that ``prepbook.lab.reports.gather`` returns. Values are
shown rounded for reading, and the report says so: the record keeps them whole
(``prepbook export runs``). Black on white with rules and type weight, so a
photocopy reads the same as the original.
"""

from __future__ import annotations

import io
from pathlib import Path
from typing import TYPE_CHECKING, Any

import msgspec

from prepbook.clock import LabClock
from prepbook.errors import InvalidInput
from prepbook.render import archival, files
from prepbook.render.numbers import significant
from prepbook.render.report_chart import control_chart, curve_chart
from prepbook.text import for_pdf

if TYPE_CHECKING:
    from prepbook.lab.batch_records import RunRecord
    from prepbook.lab.replicate_sources import RunReadings
    from prepbook.lab.reports import ReportData

PAPERS = ("a4", "letter")

STATUS_WORDS = {"accepted": "accepted", "rejected": "REJECTED",
                "awaiting-review": "awaiting review"}


class WrittenReport(msgspec.Struct, frozen=True):
    """Where a report was written and what it shows (``prepbook report --json``)."""

    batch: str
    file: str
    pages: int
    runs: int
    head_hash: str | None
    audit_ok: bool
    printed_at: str


def checked_target(output: str, *, paper: str, replace: bool) -> Path:
    """The PDF file to write, checked before anything is gathered: its name, the paper
    size and that it may be written (an existing file only with ``replace``)."""
    target = Path(output)
    if target.suffix.lower() != ".pdf":
        raise InvalidInput(f"{target} should end in .pdf")
    if paper not in PAPERS:
        raise InvalidInput(f"unknown paper {paper!r}; one of {', '.join(PAPERS)}")
    files.check_target(target, replace=replace)
    return target


def write_report(data: ReportData, target: Path, *, paper: str = "a4",
                 replace: bool = False, clk: LabClock | None = None) -> WrittenReport:
    """Draw the report of ``data`` and write it to ``target`` (see ``checked_target``);
    times in the lab's time zone (``clk``; UTC without it)."""
    pdf, pages = report_pdf(data, paper=paper, clk=clk)
    path = files.write_bytes(target, pdf, replace=replace)
    return WrittenReport(batch=data.batch.batch, file=str(path), pages=pages,
                         runs=len(data.batch.runs), head_hash=data.audit.head_hash,
                         audit_ok=data.audit.ok, printed_at=data.printed_at)


def _num(value: float | None, digits: int = 5) -> str:
    return "-" if value is None else significant(value, digits)


def _fixed(value: float | None, decimals: int) -> str:
    return "-" if value is None else f"{value:.{decimals}f}"


def _text(value: Any) -> str:
    return "-" if value is None or value == "" else str(value)


class _Styles:
    def __init__(self) -> None:
        from reportlab.lib.styles import ParagraphStyle

        archival.register_fonts()
        base = dict(fontName=archival.REGULAR, fontSize=8.5, leading=10.5)
        self.body = ParagraphStyle("body", **base)
        self.small = ParagraphStyle("small", fontName=archival.REGULAR, fontSize=7.5, leading=9)
        self.cell = ParagraphStyle("cell", fontName=archival.REGULAR, fontSize=7.5, leading=9)
        self.cell_bold = ParagraphStyle("cellb", fontName=archival.BOLD, fontSize=7.5,
                                        leading=9)
        self.title = ParagraphStyle("title", fontName=archival.BOLD, fontSize=16,
                                    leading=19, spaceAfter=2)
        self.subtitle = ParagraphStyle("subtitle", fontName=archival.REGULAR, fontSize=10.5,
                                       leading=13, spaceAfter=6)
        self.h1 = ParagraphStyle("h1", fontName=archival.BOLD, fontSize=11.5, leading=14,
                                 spaceBefore=10, spaceAfter=4)
        self.h2 = ParagraphStyle("h2", fontName=archival.BOLD, fontSize=9.5, leading=12,
                                 spaceBefore=7, spaceAfter=3)


def _p(text: Any, style: Any) -> Any:
    from reportlab.platypus import Paragraph

    return Paragraph(for_pdf(_text(text)), style)


def _cell(value: Any, st: _Styles) -> Any:
    return _p(value, st.cell) if isinstance(value, str | int | float | type(None)) else value


def _table(header: list[str], rows: list[list[Any]], widths: list[float], st: _Styles) -> Any:
    """A ruled table with a bold header row repeated on each page it runs onto."""
    from reportlab.lib import colors
    from reportlab.platypus import Table, TableStyle

    data = [[_p(h, st.cell_bold) for h in header]] + [[_cell(c, st) for c in r] for r in rows]
    table = Table(data, colWidths=widths, repeatRows=1, hAlign="LEFT")
    style = [
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("FONTNAME", (0, 0), (-1, -1), archival.REGULAR),  # the embedded font, even unused
        ("LEFTPADDING", (0, 0), (-1, -1), 3),
        ("RIGHTPADDING", (0, 0), (-1, -1), 3),
        ("TOPPADDING", (0, 0), (-1, -1), 1.5),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 1.5),
        ("LINEABOVE", (0, 0), (-1, 0), 0.8, colors.black),
        ("LINEBELOW", (0, 0), (-1, 0), 0.8, colors.black),
        ("LINEBELOW", (0, -1), (-1, -1), 0.5, colors.black),
    ]
    # Every other row a light grey, which still reads on a monochrome copy.
    for i in range(2, len(data), 2):
        style.append(("BACKGROUND", (0, i), (-1, i), colors.Color(0.93, 0.93, 0.93)))
    table.setStyle(TableStyle(style))
    return table


def _pairs(rows: list[list[Any]], width: float, st: _Styles) -> Any:
    """Field names in bold on the left, values on the right, a rule above and below."""
    from reportlab.lib import colors
    from reportlab.platypus import Table, TableStyle

    data = [[_p(k, st.cell_bold), _cell(v, st)] for k, v in rows]
    table = Table(data, colWidths=[0.2 * width, 0.8 * width], hAlign="LEFT")
    table.setStyle(TableStyle([
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("FONTNAME", (0, 0), (-1, -1), archival.REGULAR),  # the embedded font, even unused
        ("LEFTPADDING", (0, 0), (-1, -1), 3),
        ("RIGHTPADDING", (0, 0), (-1, -1), 3),
        ("TOPPADDING", (0, 0), (-1, -1), 1.5),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 1.5),
        ("LINEABOVE", (0, 0), (-1, 0), 0.5, colors.black),
        ("LINEBELOW", (0, -1), (-1, -1), 0.5, colors.black),
    ]))
    return table


def _run_section(run: RunRecord, unit_word: str, st: _Styles, width: float,
                 readings: RunReadings | None, clk: LabClock) -> list[Any]:
    from reportlab.platypus import KeepTogether, Spacer

    out: list[Any] = []
    status = STATUS_WORDS.get(run.status, run.status)
    out.append(_p(f"Standardization {run.run}: {status}", st.h2))
    against = (f"lot {run.lot} ({run.lot_certificate or 'no certificate recorded'})"
               if run.lot else f"batch {run.reference_batch}")
    conditions = [
        ["Method", f"{run.method} against {against}"],
        ["Performed", f"{clk.shown(run.performed_at)} by {run.analyst} (recorded "
                      f"{clk.shown(run.recorded_at)}"
                      f"{', LATE ENTRY' if clk.late(run.performed_at, run.recorded_at) else ''})"],
        ["Instruments", f"balance {_text(run.balance)}, burette {_text(run.burette)}"],
        ["Conditions", f"temperature {_text(run.temperature_c)} °C, blank "
                       f"{_text(run.blank_ml)} mL, indicator {_text(run.indicator)}"],
    ]
    out.append(_pairs(conditions, width, st))
    out.append(Spacer(1, 4))
    amount = "mass of standard (g)" if run.method == "direct" else "aliquot (mL)"
    reps = []
    for r in run.replicates or ():
        flags = []
        if not r.current:
            flags.append("superseded")
        if r.excluded:
            flags.append("excluded")
        if r.outlier:
            flags.append("outlier (Grubbs)")
        reps.append([f"{r.position}.{r.version}", r.amount, r.volume_ml,
                     _num(r.normality, 6), ", ".join(flags) or "-", _text(r.reason),
                     f"{r.recorded_by}, {clk.shown(r.recorded_at)}"])
    out.append(_table(["#.v", amount, "titrant (mL)", "N (eq/L)", "flags", "reason",
                       "recorded by, at"], reps,
                      [w * width for w in (0.06, 0.15, 0.1, 0.11, 0.14, 0.2, 0.24)], st))
    out.extend(_readings_section(readings, st, width, clk))
    out.append(Spacer(1, 4))
    stats = (f"mean N {_num(run.normality, 6)} eq/L at {_text(run.temperature_c)} °C; "
             f"{_num(run.normality_20c, 6)} eq/L at 20 °C; factor "
             f"{_fixed(run.factor, 5)}; s {_num(run.sd, 3)} eq/L; RSD "
             f"{_num(run.rsd_percent, 3)} %; u {_num(run.u, 3)} eq/L; U "
             f"{_num(run.U, 3)} eq/L (k = {_text(run.k)}); verdict "
             f"{_text(run.verdict)}")
    out.append(_p("Statistics: " + stats, st.body))
    if run.checks:
        out.append(Spacer(1, 3))
        out.append(_table(
            ["check", "result", "detail (source)"],
            [[c["name"], ("pass" if c["passed"] else ("FAIL" if c["severity"] == "fail"
                                                      else "warning")), c["message"]]
             for c in run.checks],
            [0.16 * width, 0.09 * width, 0.75 * width], st))
    if run.budget:
        out.append(Spacer(1, 3))
        budget = [[f"{b['quantity']} ({b['symbol']})", _num(b["value"], 6), b["unit"],
                   "missing" if b.get("missing") else _num(b["u"], 3),
                   _num(b["u_relative"], 3), _num(b["contribution"], 3),
                   _fixed(b["share_percent"], 1)] for b in run.budget]
        out.append(KeepTogether([
            _p("Uncertainty budget (GUM first-order propagation, EURACHEM/CITAC CG4)",
               st.small),
            _table(["quantity", "value", "unit", "u", "u relative", "contribution (eq/L)",
                    "share %"], budget,
                   [w * width for w in (0.3, 0.13, 0.08, 0.12, 0.12, 0.15, 0.1)], st)]))
        if run.repeatability is not None:
            out.append(_p(run.budget_basis(), st.small))
    reviews = [[rv.decision, rv.reviewer, clk.shown(rv.signed_at), _text(rv.reason)]
               for rv in run.reviews]
    out.append(Spacer(1, 3))
    if reviews:
        out.append(_table(["review", "signed by", "signed at", "reason"], reviews,
                          [w * width for w in (0.12, 0.18, 0.22, 0.48)], st))
    else:
        out.append(_p("Review: not yet signed.", st.body))
    return out


def _readings_section(readings: RunReadings | None, st: _Styles, width: float,
                      clk: LabClock) -> list[Any]:
    """Which readings came from an instrument, and each stored curve with its endpoint."""
    from reportlab.platypus import KeepTogether, Spacer, Table

    if readings is None or not readings.from_instruments:
        return []
    rows = [[f"{r.position}.{r.version}",
             f"balance {r.balance}, read {clk.shown(r.read_at)}" if r.amount_source == "balance"
             else "typed",
             _text(r.raw), "curve endpoint" if r.volume_source == "curve" else "typed"]
            for r in readings.sources]
    out: list[Any] = [Spacer(1, 4), _p("Where the readings came from", st.small),
                      _table(["#.v", "mass or aliquot", "line the balance printed (as "
                              "received)", "titrant volume"], rows,
                             [w * width for w in (0.06, 0.34, 0.4, 0.2)], st)]
    typed = {r.position: float(r.volume_ml_text) for r in readings.sources
             if r.volume_source == "typed"}  # the latest version of each position wins
    charts = []
    for c in readings.curves:
        caption = (f"replicate {c.position}: {c.file_name} ({c.size_bytes} bytes, sha256 "
                   f"{c.sha256[:12]}...)")
        charts.append(curve_chart(c.curve, width * 0.49, caption, typed.get(c.position)))
    if charts:
        pairs = [charts[i:i + 2] + [""] * (2 - len(charts[i:i + 2]))
                 for i in range(0, len(charts), 2)]
        out.append(Spacer(1, 4))
        out.append(KeepTogether([_p("Recorded titration curves: dashed, the endpoint "
                                    "prepbook found; dotted, a volume typed instead", st.small),
                                 Table(pairs, colWidths=[width * 0.5] * 2, hAlign="LEFT",
                                       style=[("FONTNAME", (0, 0), (-1, -1),
                                               archival.REGULAR)])]))
    return out


def report_pdf(data: ReportData, *, paper: str = "a4",
               clk: LabClock | None = None) -> tuple[bytes, int]:
    """The report's PDF bytes and its page count; times in ``clk``'s zone (else UTC)."""
    from reportlab.lib.pagesizes import A4, LETTER
    from reportlab.lib.units import mm

    clk = clk or LabClock()
    st = _Styles()
    pagesize = A4 if paper == "a4" else LETTER
    margin = 16 * mm
    width = pagesize[0] - 2 * margin
    win = data.window
    unit_word = "mol/L" if win.unit == "M" else "N"

    def make_story() -> list[Any]:
        return _story(data, st, width, unit_word, clk)

    return _build(data, make_story, pagesize, margin, clk)


def _story(data: ReportData, st: _Styles, width: float, unit_word: str,
           clk: LabClock) -> list[Any]:
    from reportlab.platypus import Spacer

    b = data.batch
    win = data.window
    audit = data.audit
    story: list[Any] = []
    story.append(_p(f"Batch record: {b.batch}", st.title))
    story.append(_p(f"{b.spec_name} (spec {b.spec})", st.subtitle))
    hz = b.hazard or {}
    current = (f"{_num(b.factor and win.nominal * b.factor)} {unit_word} at 20 °C, "
               f"factor {_fixed(b.factor, 4)}" if b.factor else "no accepted result")
    summary = [
        ["State", b.state],
        ["Nominal", f"{win.nominal:g} {unit_word}; acceptance window factor "
                    f"{win.factor_low:g} to {win.factor_high:g}, RSD at most "
                    f"{win.max_rsd_percent:g} %"],
        ["Current", current],
        ["Restandardize by", _text(b.restandardize_by)],
        ["Expires", _text(b.expires)],
        ["Storage", _text(b.storage)],
        ["Hazard", (f"{hz.get('signal_word') or 'no signal word'}; "
                    f"{', '.join(hz.get('pictograms') or []) or 'no pictogram'}; "
                    f"{' '.join(hz.get('statements') or []) or 'no hazard statement'}")],
        ["Warnings", "; ".join(b.warnings) or "none"],
    ]
    if b.retired:
        r = b.retired
        summary.append(["Retired", f"{clk.shown(r.at)} by {r.by}: {_text(r.reason)}"])
    story.append(_pairs(summary, width, st))

    story.append(_p("Preparation", st.h1))
    p = b.preparation
    how = {"solid": f"{_text(p.solute_mass_g)} g of solute"
                    + (f" from lot {p.solute_lot}" if p.solute_lot else ""),
           "concentrate": f"{_text(p.concentrate_volume_ml)} mL of concentrated reagent",
           "dilution": f"{_text(p.aliquot_ml)} mL of batch {_text(p.from_batch)}"}
    prep = [
        ["Made", f"{clk.shown(p.made_at)} by {p.made_by} (recorded {clk.shown(p.recorded_at)}"
                 f"{', LATE ENTRY' if clk.late(p.made_at, p.recorded_at) else ''})"],
        ["From", f"{how.get(p.method, p.method)}, made up to {p.volume_ml} mL"],
        ["Instruments", f"flask {_text(p.flask)}, balance {_text(p.balance)}"],
        ["Theoretical", f"{_num(p.theoretical_normality, 5)} eq/L from how it was made"],
        ["Notes", _text(p.notes)],
        ["Diluted into", ", ".join(b.diluted_into) or "-"],
    ]
    story.append(_pairs(prep, width, st))

    story.append(_p("Control chart", st.h1))
    if data.chart:
        story.append(control_chart(data, width))
        if len(data.chart) > 1:
            story.append(control_chart(data, width, detail=True))
    else:
        story.append(_p("No standardization yet.", st.body))

    story.append(_p(f"Standardizations ({len(b.runs)})", st.h1))
    if not b.runs:
        story.append(_p("None recorded.", st.body))
    for run in b.runs:
        story.extend(_run_section(run, unit_word, st, width, data.readings.get(run.run), clk))

    story.append(_p("Corrections and reasons", st.h1))
    if data.corrections:
        story.append(_table(["audit #", "at", "by", "action", "record", "reason"],
                            [[e.seq, clk.shown(e.at), e.actor, e.action, e.record, e.reason]
                             for e in data.corrections],
                            [w * width for w in (0.07, 0.21, 0.1, 0.14, 0.12, 0.36)], st))
    else:
        story.append(_p("No record of this batch was changed with a reason.", st.body))

    story.append(_p("Uses", st.h1))
    if b.uses:
        story.append(_table(["at", "by", "volume (mL)", "purpose"],
                            [[clk.shown(u.at), u.by, _text(u.volume_ml), _text(u.purpose)]
                             for u in b.uses],
                            [w * width for w in (0.2, 0.15, 0.12, 0.53)], st))
    else:
        story.append(_p("No use recorded.", st.body))

    story.extend(_assay_section(data, st, width, clk))

    story.append(_p("Labels printed", st.h1))
    if data.labels:
        story.append(_table(["printed", "by", "showed run", "factor", "size", "copies"],
                            [[clk.shown(lp["printed_at"]), lp["printed_by"], _text(lp["run"]),
                              _fixed(lp["factor"], 4), lp["size"], lp["copies"]]
                             for lp in data.labels],
                            [w * width for w in (0.22, 0.14, 0.16, 0.14, 0.2, 0.14)], st))
    else:
        story.append(_p("No label printed.", st.body))

    story.append(_p("Audit trail", st.h1))
    audit = data.audit
    verdict = ("verified: the hash chain is intact and every record matches its last "
               "audited state" if audit.ok else
               f"NOT VERIFIED: {len(audit.problems)} problem(s): "
               + "; ".join(audit.problems[:10]))
    story.append(_p(f"{audit.events} events; {verdict}. Head hash "
                    f"{audit.head_hash or '-'}.", st.body))
    story.append(_p(f"Checkpoint {audit.checkpoint or '-'} (prepbook audit verify "
                    "--checkpoint CODE checks the trail still holds it)", st.body))
    story.append(Spacer(1, 8))
    story.append(_p("Figures are rounded for reading; the record keeps every value unrounded "
                    "(prepbook export). Safety: follow the substance's safety data sheet, local "
                    "regulations and the laboratory's own procedures.", st.small))
    return story


def _limit(low: str | None, high: str | None) -> str:
    return f"{low or '-'} to {high or '-'}" if low or high else "-"


def _assay_section(data: ReportData, st: _Styles, width: float, clk: LabClock) -> list[Any]:
    """The sample results made with the batch, and those its titrant's changed value
    puts in question (recomputed on reading; the recorded results stay as they were)."""
    story: list[Any] = [_p(f"Assays ({len(data.assays)})", st.h1)]
    if not data.assays:
        return [*story, _p("No sample titrated with this batch.", st.body)]
    story.append(_table(
        ["assay", "sample", "analyte", "at", "run", "titrant (eq/L)", "result", "limit"],
        [[a.assay, _text(a.sample), _text(a.analyte), clk.shown(a.performed_at), a.run,
          _num(a.titrant_normality, 5),
          f"{_num(a.result, 5)} {a.unit}", _limit(a.limit_low, a.limit_high)]
         for a in data.assays],
        [w * width for w in (0.12, 0.12, 0.14, 0.16, 0.11, 0.11, 0.14, 0.1)], st))
    story.append(_p(f"Impact on the results ({len(data.impact)})", st.h1))
    if not data.impact:
        story.append(_p("No result is impacted: every standardization used stands, "
                        "uncorrected, and no later one drifted beyond the limit.", st.body))
        return story
    rows = []
    for r in data.impact:
        now = (f"{_num(r.after, 5)} {r.unit}" if r.after is not None else
               f"{_num(r.after_low, 5)} to {_num(r.after_high, 5)} {r.unit}"
               if r.after_low is not None else "unknown")
        crosses = "-" if r.crosses_limit is None else ("CROSSES" if r.crosses_limit else "no")
        rows.append([r.assay, _text(r.sample), f"{_num(r.before, 5)} {r.unit}", now,
                     "-" if r.change_percent is None else f"{r.change_percent:+.2f} %",
                     crosses, _text(r.reason)])
    story.append(_table(["assay", "sample", "recorded", "now", "change", "limit", "why"],
                        rows, [w * width for w in (0.11, 0.13, 0.14, 0.17, 0.08, 0.08, 0.29)],
                        st))
    return story


def _build(data: ReportData, make_story: Any, pagesize: tuple[float, float],
           margin: float, clk: LabClock) -> tuple[bytes, int]:
    from reportlab.platypus import SimpleDocTemplate

    b = data.batch
    audit = data.audit
    footer_left = (f"audit chain head {audit.head_hash or '-'} "
                   f"({'verified' if audit.ok else 'NOT VERIFIED'})")
    footer_right = f"printed {clk.shown(data.printed_at)}"
    header = f"prepbook batch record  {b.batch}"

    class _Doc(SimpleDocTemplate):
        pages = 0

    def decorate(canvas: Any, doc: Any) -> None:
        canvas.saveState()
        canvas.setFont(archival.REGULAR, 7)
        top = pagesize[1] - margin + 6
        canvas.drawString(margin, top, header)
        canvas.drawRightString(pagesize[0] - margin, top, f"page {doc.page} of {doc.total}")
        canvas.setLineWidth(0.4)
        canvas.line(margin, top - 3, pagesize[0] - margin, top - 3)
        canvas.line(margin, margin - 6, pagesize[0] - margin, margin - 6)
        canvas.drawString(margin, margin - 15, footer_left)
        canvas.drawRightString(pagesize[0] - margin, margin - 15, footer_right)
        canvas.restoreState()

    title = f"prepbook batch record {b.batch}"

    def build(total: int) -> tuple[bytes, int]:
        buffer = io.BytesIO()
        doc = _Doc(buffer, pagesize=pagesize, leftMargin=margin, rightMargin=margin,
                   topMargin=margin + 4, bottomMargin=margin + 4, invariant=1,
                   title=title, author="prepbook", creator="prepbook",
                   initialFontName=archival.register_fonts())
        doc.total = total  # type: ignore[attr-defined]
        doc.build(make_story(), onFirstPage=decorate, onLaterPages=decorate)
        return buffer.getvalue(), doc.page

    # Two passes: the first counts the pages so each can say "page n of N".
    _, pages = build(0)
    pdf, pages2 = build(pages)
    return archival.pdf_a(pdf, title=title, subject="batch traceability report"), pages2
