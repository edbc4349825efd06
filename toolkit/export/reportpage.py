"""A flowing page writer for the register's documents (the balance certificate, the series statistics): a
title band, headings, wrapped lines and simple tables, page after page, numbered.

Text is drawn with the work orders' embedded fonts (:mod:`toolkit.export.pdfpage`), so a name in any
script the fonts cover prints as written; output is deterministic as the work orders' is.
"""

from __future__ import annotations

from io import BytesIO

from toolkit.export import pdfpage

__all__ = ["ReportPage", "INK", "BAND"]

#: The colour of the title band and the headings, and of the bars in the statistics.
BAND = (0.16, 0.30, 0.36)
INK = (0.0, 0.0, 0.0)


class ReportPage:
    """Pages on ``paper`` ("A4" or "Letter") with ``title`` and ``subtitle`` in a band at the top of each;
    :meth:`finish` gives the PDF's bytes. ``y`` is the baseline of the next line, in points from the
    bottom; ``c`` is the reportlab canvas, for figures drawn between the lines. Draw inside
    :func:`toolkit.export.pdfpage.binary_streams` for the work orders' compact streams."""

    def __init__(self, title: str, subtitle: str, paper: str = "A4"):
        self.buffer = BytesIO()
        self.c = pdfpage.canvas(self.buffer, paper)
        self.c.setTitle(pdfpage.clean(title))
        self.w, self.h = pdfpage.paper_size(paper)
        self.m = pdfpage.MARGIN
        self.title, self.subtitle = title, subtitle
        self.page = 1
        self._head()

    def _head(self) -> None:
        c = self.c
        c.setFillColorRGB(*BAND)
        c.rect(0, self.h - 64, self.w, 64, stroke=0, fill=1)
        c.setFillColorRGB(1, 1, 1)
        pdfpage.draw(c, self.m, self.h - 36, pdfpage.shorten(self.title, "bold", 17, self.w - 2 * self.m), "bold", 17)
        pdfpage.draw(c, self.m, self.h - 52, pdfpage.shorten(self.subtitle, "regular", 9, self.w - 2 * self.m),
                     "regular", 9)
        c.setFillColorRGB(*INK)
        pdfpage.draw(c, self.w - self.m, 22, f"page {self.page}", "regular", 7.5, "right")
        self.y = self.h - 86

    def need(self, height: float) -> None:
        """Start a new page unless ``height`` points are left above the bottom margin."""
        if self.y - height < 40:
            self.c.showPage()
            self.page += 1
            self._head()

    def heading(self, text: str) -> None:
        self.need(30)
        self.y -= 6
        self.c.setFillColorRGB(*BAND)
        pdfpage.draw(self.c, self.m, self.y, pdfpage.shorten(text, "bold", 11, self.w - 2 * self.m), "bold", 11)
        self.c.setFillColorRGB(*INK)
        self.c.setStrokeColorRGB(*INK)
        self.c.setLineWidth(0.6)
        self.c.line(self.m, self.y - 3, self.w - self.m, self.y - 3)
        self.y -= 16

    def line(self, text: str, size: float = 9, bold: bool = False, indent: float = 0) -> None:
        """``text`` wrapped to the width between the margins (less ``indent``)."""
        style = "bold" if bold else "regular"
        for part in pdfpage.wrap(text, style, size, self.w - 2 * self.m - indent):
            self.need(size + 4)
            pdfpage.draw(self.c, self.m + indent, self.y, part, style, size)
            self.y -= size + 3

    def table(self, headers, rows, widths) -> None:
        """A table: ``widths`` are the columns' shares of the width between the margins; each cell wraps
        in its column and a row is as tall as its tallest cell."""
        size, leading = 8.5, 11
        total = self.w - 2 * self.m
        xs = [self.m]
        for share in widths[:-1]:
            xs.append(xs[-1] + share * total)
        self.need(30)
        for x, share, head in zip(xs, widths, headers):
            pdfpage.draw(self.c, x + 2, self.y, pdfpage.shorten(head, "bold", size, share * total - 4), "bold", size)
        self.y -= 4
        self.c.setStrokeColorRGB(*INK)
        self.c.setLineWidth(0.6)
        self.c.line(self.m, self.y, self.m + total, self.y)
        self.y -= 10
        for row in rows:
            cells = [pdfpage.wrap(value, "regular", size, share * total - 4) for value, share in zip(row, widths)]
            height = max(len(lines) for lines in cells) * leading
            self.need(height + 2)
            for x, lines in zip(xs, cells):
                for k, text in enumerate(lines):
                    pdfpage.draw(self.c, x + 2, self.y - k * leading, text, "regular", size)
            self.y -= height + 1

    def finish(self) -> bytes:
        """The PDF's bytes (call once)."""
        self.c.showPage()
        self.c.save()
        return self.buffer.getvalue()
