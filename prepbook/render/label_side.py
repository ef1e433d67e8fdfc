"""The side column of a bottle label: the QR code of the bottle's code, the code in
print under it, and the hazard signal word in white on a black bar.

reportlab and qrcode are imported only inside the functions that draw.
"""

from __future__ import annotations

from typing import Any

from prepbook.render.archival import BOLD


def code_lines(code: str, width: float, size: float) -> tuple[float, tuple[str, ...]]:
    """The code under the QR code: one line if it fits at ``size``, else broken after a
    hyphen into two lines, else (a code with no hyphen) shrunk to the width."""
    from reportlab.pdfbase.pdfmetrics import stringWidth

    def fits(text: str) -> bool:
        return stringWidth(text, BOLD, size) <= width

    if fits(code):
        return size, (code,)
    cuts = [i + 1 for i, ch in enumerate(code) if ch == "-" and 0 < i < len(code) - 1]
    two = [(code[:i], code[i:]) for i in cuts if fits(code[:i]) and fits(code[i:])]
    if two:
        return size, min(two, key=lambda parts: abs(len(parts[0]) - len(parts[1])))
    return size * width / stringWidth(code, BOLD, size), (code,)


def _qr_matrix(text: str) -> list[list[bool]]:
    import qrcode
    from qrcode.constants import ERROR_CORRECT_M

    code = qrcode.QRCode(error_correction=ERROR_CORRECT_M, border=0)
    code.add_data(text)
    code.make(fit=True)
    return [list(row) for row in code.get_matrix()]


def draw_side(canvas: Any, code: str, signal: str | None, *,
              qr_box: tuple[float, float, float, float],
              side_box: tuple[float, float, float, float], code_pt: float,
              lines: tuple[str, ...], bar_h: float, code_top: float) -> None:
    from reportlab.pdfbase.pdfmetrics import stringWidth

    qx, qy, qs, _ = qr_box
    matrix = _qr_matrix(code)
    n = len(matrix)
    module = qs / n
    canvas.setFillColorRGB(0, 0, 0)
    for r, row in enumerate(matrix):
        c = 0
        while c < n:  # one rectangle per run of dark modules: crisp and small
            if row[c]:
                start = c
                while c < n and row[c]:
                    c += 1
                canvas.rect(qx + start * module, qy + qs - (r + 1) * module,
                            (c - start) * module, module, stroke=0, fill=1)
            else:
                c += 1
    sx, sy, sw, sh = side_box
    canvas.setFont(BOLD, code_pt)
    for i, part in enumerate(lines):
        canvas.drawCentredString(sx + sw / 2, code_top - code_pt * (1.2 * i + 1.05), part)
    if signal and bar_h:
        word = signal.upper()
        size = min(bar_h * 0.62, _fit(word, bar_h * 0.62, sw * 0.9))
        canvas.rect(sx, sy, sw, bar_h, stroke=0, fill=1)
        canvas.setFillColorRGB(1, 1, 1)
        canvas.setFont(BOLD, size)
        text_w = stringWidth(word, BOLD, size)
        canvas.drawString(sx + (sw - text_w) / 2, sy + (bar_h - size * 0.72) / 2, word)
        canvas.setFillColorRGB(0, 0, 0)


def _fit(text: str, size: float, width: float) -> float:
    from reportlab.pdfbase.pdfmetrics import stringWidth

    w = stringWidth(text, BOLD, size)
    return size if w <= width else size * width / w
