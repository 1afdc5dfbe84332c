"""Shared look of the PDF reports: paragraph styles, colours, tables, page decoration.

Every report module takes its styles and helpers from here, so the design
report and the comparison report look alike and import nothing from each other.
"""

from __future__ import annotations

from reportlab.lib import colors
from reportlab.lib.enums import TA_CENTER
from reportlab.lib.pagesizes import A4, landscape
from reportlab.lib.styles import ParagraphStyle, getSampleStyleSheet
from reportlab.lib.units import mm
from reportlab.pdfgen import canvas as _canvas
from reportlab.platypus import KeepTogether, Paragraph, SimpleDocTemplate, Table, TableStyle

from ..cautions import CAUTIONS, DRAFT_MARK
from ..version import __version__

__all__ = [
    "draft_document",
    "BODY",
    "FAIL_COLOUR",
    "FIT_COLOUR",
    "GRID_LINE",
    "H1",
    "H2",
    "HEAD_FILL",
    "MEASURED_COLOUR",
    "NumberedCanvas",
    "PASS_COLOUR",
    "REFERENCES",
    "SMALL",
    "UNIFORM_COLOUR",
    "VERDICT",
    "cautions",
    "fmt",
    "references",
    "table",
    "verdict",
]

_STYLES = getSampleStyleSheet()
BODY = ParagraphStyle("body", parent=_STYLES["BodyText"], fontSize=9.5, leading=12)
SMALL = ParagraphStyle("small", parent=BODY, fontSize=8, leading=10)
H1 = ParagraphStyle("h1", parent=_STYLES["Heading1"], fontSize=16, spaceAfter=6)
H2 = ParagraphStyle("h2", parent=_STYLES["Heading2"], fontSize=12, spaceBefore=10, spaceAfter=4)
VERDICT = ParagraphStyle("verdict", parent=BODY, fontSize=13, leading=16, alignment=TA_CENTER)

PASS_COLOUR = colors.HexColor("#1b7837")
FAIL_COLOUR = colors.HexColor("#b2182b")
GRID_LINE = colors.HexColor("#9aa5b1")
HEAD_FILL = colors.HexColor("#e4e9ef")
MEASURED_COLOUR = colors.HexColor("#b35806")
FIT_COLOUR = colors.HexColor("#1f4e79")
UNIFORM_COLOUR = colors.HexColor("#7f7f7f")


class NumberedCanvas(_canvas.Canvas):
    """Canvas that prints the draft marking and 'page N of M' on every page."""

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self._saved: list[dict] = []

    def showPage(self):  # noqa: N802 (reportlab API)
        self._saved.append(dict(self.__dict__))
        self._startPage()

    def save(self):
        total = len(self._saved)
        for state in self._saved:
            self.__dict__.update(state)
            self._decorate(total)
            super().showPage()
        super().save()

    def _decorate(self, total: int) -> None:
        w, h = self._pagesize
        self.saveState()
        self.setFillColor(FAIL_COLOUR)
        self.setFont("Helvetica-Bold", 8.5)
        self.drawCentredString(w / 2, h - 12 * mm, DRAFT_MARK)
        self.setFillColor(colors.black)
        self.setFont("Helvetica", 8)
        self.drawString(18 * mm, 10 * mm, f"groundcalc {__version__}")
        self.drawRightString(w - 18 * mm, 10 * mm, f"Page {self._pageNumber} of {total}")
        self.restoreState()


def table(rows, col_widths, header=True, align_right_from=1):
    t = Table(rows, colWidths=col_widths, hAlign="LEFT")
    style = [
        ("FONT", (0, 0), (-1, -1), "Helvetica", 9),
        ("GRID", (0, 0), (-1, -1), 0.4, GRID_LINE),
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("ALIGN", (align_right_from, 0), (-1, -1), "RIGHT"),
    ]
    if header:
        style += [("FONT", (0, 0), (-1, 0), "Helvetica-Bold", 9), ("BACKGROUND", (0, 0), (-1, 0), HEAD_FILL)]
    t.setStyle(TableStyle(style))
    return t


def fmt(x: float, digits: int = 4) -> str:
    return f"{x:.{digits}g}" if abs(x) < 10**digits else f"{x:,.0f}"


def verdict(ok: bool) -> str:
    colour = PASS_COLOUR.hexval()[2:] if ok else FAIL_COLOUR.hexval()[2:]
    return f'<font color="#{colour}"><b>{"PASS" if ok else "FAIL"}</b></font>'


#: Documents the report relies on, by number and edition.
REFERENCES = (
    "IEEE Std 80-2013, IEEE Guide for Safety in AC Substation Grounding (equation numbers in this report "
    "follow IEEE Std 80-2000; the 2013 edition numbers clauses 14 to 16 five higher).",
    "IEEE Std 81-2012, IEEE Guide for Measuring Earth Resistivity, Ground Impedance, and Earth Surface "
    "Potentials of a Grounding System (Wenner method, two-layer apparent resistivity).",
    "H. B. Dwight, Calculation of resistances to ground, AIEE Transactions 55, 1936.",
    "S. J. Schwarz, Analytical expressions for the resistance of grounding systems, AIEE Transactions 73, 1954.",
    "E. D. Sunde, Earth Conduction Effects in Transmission Systems, Van Nostrand 1949 (Dover 1968).",
    "G. F. Tagg, Earth Resistances, Newnes 1964 (image series in layered soil).",
    "R. F. Harrington, Field Computation by Moment Methods, Macmillan 1968 (method of moments).",
    "CIE 15:2004 Colorimetry (CIELAB lightness of the colour scale).",
)


def references() -> list:
    """References flowables."""
    return [Paragraph("References", H2)] + [Paragraph(f"[{k}] {t}", SMALL) for k, t in enumerate(REFERENCES, start=1)]


def cautions() -> list:
    """Cautions flowables."""
    items = [Paragraph("Cautions", H2)]
    for head, text in CAUTIONS:
        items.append(Paragraph(f"<b>{head}.</b> {text}", BODY))
    return [KeepTogether(items)]


def draft_document(path, title: str, author: str = "groundcalc", wide: bool = False) -> SimpleDocTemplate:
    """The page setup every draft report shares: A4 (landscape when ``wide``), margins, PDF metadata."""
    side = 14 * mm if wide else 18 * mm
    return SimpleDocTemplate(
        str(path),
        pagesize=landscape(A4) if wide else A4,
        leftMargin=side,
        rightMargin=side,
        topMargin=18 * mm,
        bottomMargin=16 * mm,
        title=title,
        author=author,
        subject=DRAFT_MARK,
    )
