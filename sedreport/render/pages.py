"""Page template of the record: running head, footer "id · page x of y · version", metadata.

"page x of y" needs the page total before any page is written; :func:`numbered_canvas` keeps
every finished page's state and draws the footers at save time, when the total is known.
"""

from __future__ import annotations

from reportlab.lib.utils import simpleSplit
from reportlab.pdfgen import canvas as rl_canvas
from reportlab.platypus import BaseDocTemplate, CondPageBreak, Frame, PageTemplate
from reportlab.platypus.doctemplate import FrameBreak

from sedreport.render import styles
from sedreport.render.glossary import glossary_line

#: Space in points kept above the footer rule for the abbreviations of the page.
GLOSSARY_PT: float = 16.0
GLOSSARY_FONT_PT: float = 5.6

#: Running head on every page (a caution that survives when a single page is copied).
RUNNING_HEAD = "Review of recorded monitoring data - not an alarm, not a diagnosis"


def footer_text(session_id: str, page: int, pages: int, version: str) -> str:
    """The footer line: ``<session id> · page <x> of <y> · sedreport <version>``."""
    return f"{session_id} \u00b7 page {page} of {pages} \u00b7 sedreport {version}"


class SectionBreak(CondPageBreak):
    """A new page when on the first page (kept for the summary sheet) or when less than
    ``height`` points are left; otherwise the section follows on the same page."""

    def wrap(self, avail_width: float, avail_height: float) -> tuple[float, float]:
        frame = self._doctemplateAttr("frame")
        first = self._doctemplateAttr("page") == 1
        if frame is not None and (first or avail_height < self.height):
            frame.add_generated_content(FrameBreak)
        return 0, 0


def numbered_canvas(
    session_id: str, version: str, head: str | None = None
) -> type[rl_canvas.Canvas]:
    """A canvas class that writes the provenance footer with the final page count.

    ``head`` is the running head on the right (default ``Sedation record <session id>``).
    """
    head_text = head if head is not None else f"Sedation record {session_id}"

    class _NumberedCanvas(rl_canvas.Canvas):
        def __init__(self, *args: object, **kwargs: object) -> None:
            super().__init__(*args, **kwargs)
            self._page_states: list[dict] = []
            self.page_terms: dict[str, str] = {}  # filled by glossary.TermMark while drawing

        def showPage(self) -> None:  # noqa: N802 (reportlab API name)
            self._page_states.append(dict(self.__dict__))
            self.page_terms = {}
            self._startPage()

        def save(self) -> None:
            total = len(self._page_states)
            for state in self._page_states:
                self.__dict__.update(state)
                self._draw_footer(total)
                rl_canvas.Canvas.showPage(self)
            rl_canvas.Canvas.save(self)

        def _draw_footer(self, total: int) -> None:
            width, height = self._pagesize
            margin = styles.MARGIN_PT
            self.saveState()
            self.setStrokeColor(styles.RULE)
            self.setLineWidth(0.4)
            self.line(margin, styles.FOOTER_PT + 8, width - margin, styles.FOOTER_PT + 8)
            self.setFillColor(styles.INK)
            self.setFont(styles.FONT, 7.5)
            text = footer_text(session_id, self.getPageNumber(), total, version)
            self.drawCentredString(width / 2, styles.FOOTER_PT, styles.pdf_text(text))
            self._draw_glossary(width)
            self.setFont(styles.FONT, 6.5)
            self.setFillColor(styles.AXIS)
            self.drawString(margin, height - margin + 12, RUNNING_HEAD)
            self.drawRightString(
                width - margin,
                height - margin + 12,
                styles.pdf_text(head_text),
            )
            self.restoreState()

        def _draw_glossary(self, width: float) -> None:
            if not self.page_terms:
                return
            margin = styles.MARGIN_PT
            text = styles.pdf_text(glossary_line(self.page_terms))
            size = GLOSSARY_FONT_PT
            lines = simpleSplit(text, styles.FONT, size, width - 2 * margin)
            while len(lines) * (size + 1) > GLOSSARY_PT + 5 and size > 4.4:
                size -= 0.3  # many terms: a smaller font rather than text under the body
                lines = simpleSplit(text, styles.FONT, size, width - 2 * margin)
            self.setFont(styles.FONT, size)
            self.setFillColor(styles.INK)
            y = styles.FOOTER_PT + 11 + (len(lines) - 1) * (size + 1)
            for line in lines:
                self.drawString(margin, y, line)
                y -= size + 1

    return _NumberedCanvas


def record_document(
    path: str,
    paper: str,
    *,
    session_id: str,
    title: str,
    subject: str,
    version: str,
    invariant: bool,
) -> BaseDocTemplate:
    """A one-frame document for the record with only non-identifying metadata.

    Parameters
    ----------
    path : str
        Output file (the temporary file of the atomic write).
    paper : str
        ``a4`` or ``letter``.
    session_id, title, subject, version : str
        Metadata; nothing beyond what the header shows (no names exist in a session).
    invariant : bool
        Reproducible output (fixed document id and the ``SOURCE_DATE_EPOCH`` date).
    """
    width, height = styles.page_size(paper)
    margin = styles.MARGIN_PT
    doc = BaseDocTemplate(
        path,
        pagesize=(width, height),
        leftMargin=margin,
        rightMargin=margin,
        topMargin=margin,
        bottomMargin=margin + 6 + GLOSSARY_PT,
        title=title,
        author=f"sedreport {version}",
        subject=subject,
        creator=f"sedreport {version}",
        keywords=f"sedation record, {session_id}",
        invariant=1 if invariant else 0,
        pageCompression=1,
    )
    bottom = margin + 6 + GLOSSARY_PT
    frame = Frame(margin, bottom, width - 2 * margin, height - margin - bottom, id="body")
    doc.addPageTemplates([PageTemplate(id="page", frames=[frame])])
    return doc
