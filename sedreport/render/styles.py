"""Page sizes, fonts, a greyscale-safe palette, line styles and paragraph styles of the record.

The design is our own. Every series is told apart by line style, weight and marker shape, so
the record reads the same printed in black and white; colour only helps on screen.
"""

from __future__ import annotations

from dataclasses import dataclass
from xml.sax.saxutils import escape

from reportlab.lib import colors
from reportlab.lib.enums import TA_LEFT
from reportlab.lib.pagesizes import A4, LETTER
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm

from sedreport.errors import SedreportError

#: Paper name -> (width, height) in points.
PAPER_SIZES: dict[str, tuple[float, float]] = {"a4": A4, "letter": LETTER}

MARGIN_PT: float = 14 * mm
FOOTER_PT: float = 9 * mm

FONT: str = "Helvetica"
FONT_BOLD: str = "Helvetica-Bold"
FONT_MONO: str = "Courier"


def page_size(paper: str) -> tuple[float, float]:
    """Width and height in points of ``a4`` or ``letter``.

    Raises
    ------
    SedreportError
        For any other paper name.
    """
    key = paper.lower()
    if key not in PAPER_SIZES:
        raise SedreportError(f"--paper: unknown paper size {paper!r} (use a4 or letter)")
    return PAPER_SIZES[key]


def frame_width(paper: str) -> float:
    """Usable text width in points for ``paper``."""
    return page_size(paper)[0] - 2 * MARGIN_PT


@dataclass(frozen=True)
class SeriesStyle:
    """How one trend series is drawn: colour, width in points, dash pattern."""

    color: colors.Color
    width_pt: float
    dash: tuple[float, ...] | None = None


# Palette of our own: dark, well-separated luminances so that grey prints keep the order.
INK = colors.Color(0.10, 0.10, 0.12)
GRID = colors.Color(0.80, 0.80, 0.80)
AXIS = colors.Color(0.35, 0.35, 0.35)
BAND_FILL = colors.Color(0.86, 0.86, 0.90)
BAND_EDGE = colors.Color(0.45, 0.45, 0.55)
#: Marks on the CO2 strip for stretches where the CO2 says little about ventilation.
CO2_FINDING_FILL = colors.Color(0.93, 0.80, 0.45)
RULE = colors.Color(0.55, 0.55, 0.55)
HEAD_FILL = colors.Color(0.90, 0.91, 0.93)
ATTENTION_FILL = colors.Color(0.95, 0.95, 0.95)

ETCO2 = SeriesStyle(colors.Color(0.05, 0.30, 0.35), 1.2)
FICO2 = SeriesStyle(colors.Color(0.40, 0.40, 0.40), 0.8, (2.5, 1.5))
RR = SeriesStyle(colors.Color(0.15, 0.15, 0.15), 0.9)
SPO2 = SeriesStyle(colors.Color(0.10, 0.15, 0.45), 1.3)
PULSE = SeriesStyle(colors.Color(0.45, 0.25, 0.10), 0.9, (1.6, 1.2))
#: Non-invasive blood pressure: the systolic-diastolic bar of each cuff reading and the line
#: joining the mean pressures.
BP = SeriesStyle(colors.Color(0.55, 0.08, 0.10), 0.9)
MEAN_BP = SeriesStyle(colors.Color(0.55, 0.08, 0.10), 0.7)
CO2_WAVE = SeriesStyle(colors.Color(0.05, 0.30, 0.35), 0.6)
REFERENCE = SeriesStyle(colors.Color(0.30, 0.30, 0.30), 0.5, (4.0, 2.0))
DOSE_MARK = colors.Color(0.10, 0.10, 0.10)
INTERVENTION_MARK = colors.Color(0.25, 0.25, 0.25)

#: Short labels of our own for intervention marks on the strips (legend printed on the page).
INTERVENTION_CODES: dict[str, str] = {
    "verbal_stimulus": "VS",
    "physical_stimulus": "PS",
    "airway_repositioning": "AW",
    "oxygen_increase": "O2+",
    "airway_adjunct": "ADJ",
    "bag_mask_ventilation": "BMV",
    "reversal_agent": "REV",
    "suction": "SUC",
    "procedure_paused": "PAU",
    "intubation": "INT",
}

# Characters the standard PDF fonts (WinAnsi) cannot show, replaced by plain equivalents.
_REPLACEMENTS: dict[str, str] = {
    "\u2265": ">=",
    "\u2264": "<=",
    "\u2192": "->",
    "\u2190": "<-",
    "\u2191": "up",
    "\u2193": "down",
    "\u2212": "-",
    "\u2082": "2",
    "\u00b2": "2",
    "\u2009": " ",
    "\u202f": " ",
    "\u00a0": " ",
    "\u2248": "~",
    "\u00d7": "x",
    "\u2011": "-",
}


def pdf_text(text: object) -> str:
    """Plain text safe for the standard fonts: known symbols spelled out, others as ``?``."""
    s = str(text)
    for old, new in _REPLACEMENTS.items():
        s = s.replace(old, new)
    return s.encode("cp1252", errors="replace").decode("cp1252")


def para_text(text: object) -> str:
    """:func:`pdf_text` escaped for reportlab Paragraph markup."""
    return escape(pdf_text(text))


def _style(name: str, size: float, *, bold: bool = False, **kw: object) -> ParagraphStyle:
    kw.setdefault("textColor", INK)
    return ParagraphStyle(
        name,
        fontName=FONT_BOLD if bold else FONT,
        fontSize=size,
        leading=size * 1.25,
        alignment=TA_LEFT,
        **kw,
    )


TITLE = _style("title", 15, bold=True, spaceAfter=2)
SUBTITLE = _style("subtitle", 8.5, textColor=AXIS, spaceAfter=4)
H1 = _style("h1", 11.5, bold=True, spaceBefore=8, spaceAfter=4, keepWithNext=1)
H2 = _style("h2", 9.5, bold=True, spaceBefore=5, spaceAfter=2, keepWithNext=1)
BODY = _style("body", 8.5, spaceAfter=2)
SMALL = _style("small", 7.2)
SMALL_KEEP = _style("small_keep", 7.2, keepWithNext=1)
SMALL_BOLD = _style("small_bold", 7.2, bold=True)
CELL = _style("cell", 7.2)
CELL_BOLD = _style("cell_bold", 7.2, bold=True)
#: Size of criteria keys printed under their plain wording.
KEY_PT: float = 6.0
MONO = ParagraphStyle("mono", fontName=FONT_MONO, fontSize=7.0, leading=8.6, textColor=INK)
BULLET = _style("bullet", 8.5, leftIndent=10, bulletIndent=0, spaceAfter=1.5)
