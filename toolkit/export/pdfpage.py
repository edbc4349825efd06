"""The low-level PDF page writer of the work orders: paper sizes, embedded Unicode fonts, text in runs of
one font, wrapping, the page-holding canvas and the combined document of a batch (reportlab underneath).

Fonts: DejaVu Sans Condensed (regular, bold, oblique) for Latin, Greek, Cyrillic and the signs the orders
use, and Droid Sans Fallback for Chinese, Japanese and Korean; both ship in ``toolkit/export/fonts`` with
their licences and are embedded as subsets (reportlab ``TTFont``). Each string is cut into runs of
characters that one font has; a character neither font has prints as the visible replacement mark
U+FFFD, never as a silent "?". The fallback font is read only when a text needs it.

Output is deterministic: reportlab's invariant mode, fixed document dates, subset names from their order.
"""

from __future__ import annotations

import functools
import hashlib
import re
import unicodedata
from contextlib import contextmanager
from io import BytesIO
from pathlib import Path

__all__ = ["PAPER", "MARGIN", "paper_size", "clean", "runs", "width", "wrap", "shorten", "draw", "canvas", "Doc",
           "Document", "FONT_FILES", "REPLACEMENT"]

#: Paper sizes in points (ISO 216 A4 is 210 mm x 297 mm; US Letter is 8.5 in x 11 in).
PAPER = {"A4": (595.2756, 841.8898), "Letter": (612.0, 792.0)}
MARGIN = 42.0
#: What a character neither font has is printed as.
REPLACEMENT = "\ufffd"

#: Style -> (registered font name, file in toolkit/export/fonts).
FONT_FILES = {
    "regular": ("CP-Sans", "DejaVuSansCondensed.ttf"),
    "bold": ("CP-Sans-Bold", "DejaVuSansCondensed-Bold.ttf"),
    "italic": ("CP-Sans-Oblique", "DejaVuSansCondensed-Oblique.ttf"),
    "fallback": ("CP-Fallback", "DroidSansFallback.ttf"),
}
_FONT_DIR = Path(__file__).with_name("fonts")
_CONTROLS = re.compile(r"[\x00-\x1f\x7f-\x9f]")


def paper_size(name: str) -> tuple[float, float]:
    """Width and height in points of ``"A4"`` or ``"Letter"``."""
    try:
        return PAPER[name]
    except KeyError:
        raise ValueError(f"unknown paper {name!r}: A4 or Letter") from None  # a bug: the job validates it


@functools.lru_cache(maxsize=None)
def _font(style: str):
    """The registered reportlab font of a style (read from its file the first time)."""
    from reportlab.pdfbase import pdfmetrics
    from reportlab.pdfbase.ttfonts import TTFont

    name, filename = FONT_FILES[style]
    font = _subclass(TTFont)(name, str(_FONT_DIR / filename))
    pdfmetrics.registerFont(font)
    return font


@functools.lru_cache(maxsize=None)
def _subclass(base):
    """reportlab's TTFont whose subsets' width arrays are written as one preformatted array: reportlab
    formats each width through its general number formatter, a tenth of the time of an order."""
    from reportlab.pdfbase import pdfdoc
    from reportlab.pdfbase.ttfonts import SUBSETN, makeToUnicodeCMap

    class Raw(pdfdoc.PDFObject):
        def __init__(self, data: bytes):
            self.data = data

        def format(self, document):
            return self.data

    class Font(base):
        def addObjects(self, doc):  # as reportlab 4's TTFont.addObjects, the Widths array preformatted
            try:
                state = self.state[doc]
            except KeyError:
                state = self.state[doc] = base.State(self._asciiReadable)
            state.frozen = 1
            for n, subset in enumerate(state.subsets):
                internal = self.getSubsetInternalName(n, doc)[1:]
                basename = (b"".join((SUBSETN(n), b"+", self.face.name, self.face.subfontNameX))).decode("pdfdoc")
                font = pdfdoc.PDFTrueTypeFont()
                font.__Comment__ = "Font %s subset %d" % (self.fontName, n)
                font.Name = internal
                font.BaseFont = basename
                font.FirstChar = 0
                font.LastChar = len(subset) - 1
                widths = (("%.3f" % w).rstrip("0").rstrip(".") for w in map(self.face.getCharWidth, subset))
                font.Widths = Raw(("[" + " ".join(widths) + "]").encode("ascii"))
                cmap = _stream(doc, ("cmap", basename, tuple(subset)), lambda: makeToUnicodeCMap(basename, subset))
                font.ToUnicode = doc.Reference(cmap, "toUnicodeCMap:" + basename)
                font.FontDescriptor = _subset_objects(self.face, doc, basename, subset)
                doc.Reference(font, internal)
                doc.idToObject["BasicFonts"].dict[internal] = font
            del self.state[doc]

    return Font


#: Font subsets and their character maps, made and compressed once per content: the orders of a batch
#: mostly use the same characters in the same order (100 planner rows gave 5 distinct subsets among 300),
#: and making and compressing them was about a tenth of an order's time. Keyed by font file, subset name and
#: the subset's characters, so a hit gives the same bytes reportlab would make.
_PACKED: dict[tuple, tuple[bytes, int]] = {}


def _stream(doc, key: tuple, make, length1: bool = False):
    """A reportlab stream of ``make()``'s bytes, Flate-compressed when the document compresses (as
    reportlab's own stream filter does), made once per ``key``; ``length1`` adds the font file's
    uncompressed length."""
    from reportlab.pdfbase import pdfdoc

    stream = pdfdoc.PDFStream()
    if not doc.compression:
        stream.content = make()
        if length1:
            stream.dictionary["Length1"] = len(stream.content)
        return stream
    hit = _PACKED.get(key)
    if hit is None:
        raw = make()
        hit = (pdfdoc.PDFZCompress.encode(raw), len(raw))
        if len(_PACKED) >= 256:
            _PACKED.clear()
        _PACKED[key] = hit
    stream.content = hit[0]
    if length1:
        stream.dictionary["Length1"] = hit[1]
    # the filter named as reportlab names it when it compresses at writing time (then it skips its own)
    stream.dictionary["Filter"] = pdfdoc.PDFArray([pdfdoc.PDFName(pdfdoc.PDFZCompress.pdfname)])
    return stream


def _subset_objects(face, doc, fontname: str, subset):
    """As reportlab's ``TTFontFace.addSubsetObjects``, with the font file made once per subset."""
    from reportlab.pdfbase import pdfdoc
    from reportlab.pdfbase.ttfonts import FF_NONSYMBOLIC, FF_SYMBOLIC

    font_file = _stream(doc, ("font", face.filename, tuple(subset)), lambda: face.makeSubset(subset), length1=True)
    font_file_ref = doc.Reference(font_file, "fontFile:%s(%s)" % (face.filename, fontname))
    flags = (face.flags & ~FF_NONSYMBOLIC) | FF_SYMBOLIC
    descriptor = pdfdoc.PDFDictionary({
        "Type": "/FontDescriptor", "Ascent": face.ascent, "CapHeight": face.capHeight, "Descent": face.descent,
        "Flags": flags, "FontBBox": pdfdoc.PDFArray(face.bbox), "FontName": pdfdoc.PDFName(fontname),
        "ItalicAngle": face.italicAngle, "StemV": face.stemV, "FontFile2": font_file_ref,
        "MissingWidth": face.defaultWidth})
    return doc.Reference(descriptor, "fontDescriptor:" + fontname)


def clean(text) -> str:
    """Text as one line: control characters (tabs, line breaks) become spaces; composed (NFC) form."""
    if isinstance(text, str) and text.isascii() and text.isprintable():
        return text  # nothing to replace, and ASCII is its own NFC form
    text = "" if text is None else _CONTROLS.sub(" ", str(text))
    return unicodedata.normalize("NFC", text)


@functools.lru_cache(maxsize=16384)
def runs(text: str, style: str = "regular") -> tuple[tuple[str, str], ...]:
    """``text`` cut into (font name, characters) runs: the style's font where it has the character, the
    CJK fallback where it has it, else the replacement mark in the style's font.

    >>> [font for font, _ in runs("Łódź 東京")]
    ['CP-Sans', 'CP-Fallback']
    """
    primary = _font(style)
    has = primary.face.charToGlyph
    out: list[list[str]] = []
    for ch in text:
        code = ord(ch)
        if code in has or ch == " ":
            name = primary.fontName
        else:
            fallback = _font("fallback")
            if code in fallback.face.charToGlyph:
                name = fallback.fontName
            else:
                name, ch = primary.fontName, REPLACEMENT
        if out and out[-1][0] == name:
            out[-1][1] += ch
        else:
            out.append([name, ch])
    return tuple((name, chars) for name, chars in out)


@functools.lru_cache(maxsize=16384)
def width(text: str, style: str, size: float) -> float:
    """Width in points of ``text`` drawn at ``size`` points in ``style`` (runs included)."""
    from reportlab.pdfbase.pdfmetrics import stringWidth

    return sum(stringWidth(chars, name, size) for name, chars in runs(text, style))


def _breakable(ch: str) -> bool:
    """Characters after which a line may break inside a word: CJK ideographs, kana, hangul."""
    code = ord(ch)
    return 0x2E80 <= code <= 0x9FFF or 0xAC00 <= code <= 0xD7AF or 0xF900 <= code <= 0xFAFF or \
        0xFF00 <= code <= 0xFFEF


@functools.lru_cache(maxsize=8192)
def wrap(text: str, style: str, size: float, limit: float) -> tuple[str, ...]:
    """Lines of ``text`` each at most ``limit`` points wide: breaks at spaces, and inside a word that is
    wider than a line (CJK text, long part numbers) between characters.

    >>> wrap("a b c", "regular", 8, 1000)
    ('a b c',)
    """
    text = clean(text)
    words: list[str] = []
    for word in text.split(" "):
        if any(_breakable(ch) for ch in word):  # CJK: every character is a place to break
            chunk = ""
            for ch in word:
                chunk += ch
                if _breakable(ch):
                    words.append(chunk)
                    chunk = ""
                    words.append("\0")  # join without a space
            if chunk:
                words.append(chunk)
            if words and words[-1] == "\0":
                words.pop()
        else:
            words.append(word)
        words.append(" ")
    if words:
        words.pop()
    lines: list[str] = []
    line, used = "", 0.0  # widths add up: no kerning between characters
    pending = ""  # the separator before the next word
    space = width(" ", style, size)
    for token in words:
        if token in (" ", "\0"):
            pending = " " if token == " " else ""
            continue
        w = width(token, style, size)
        gap = (space if pending else 0.0) if line else 0.0
        if used + gap + w <= limit:
            line, used = (line + pending + token, used + gap + w) if line else (token, w)
        else:
            if line:
                lines.append(line)
            line, used = "", 0.0
            if w <= limit:
                line, used = token, w
            else:
                for ch in token:  # a word wider than the line is cut between characters
                    cw = width(ch, style, size)
                    if line and used + cw > limit:
                        lines.append(line)
                        line, used = "", 0.0
                    line, used = line + ch, used + cw
        pending = ""
    if line or not lines:
        lines.append(line)
    return tuple(lines)


def shorten(text: str, style: str, size: float, limit: float) -> str:
    """``text`` cut with an ellipsis so that it fits ``limit`` points (whole when it fits)."""
    text = clean(text)
    if width(text, style, size) <= limit:
        return text
    while text and width(text + "…", style, size) > limit:
        text = text[:-1]
    return text.rstrip() + "…"


def _num(v: float) -> str:
    return ("%.2f" % v).rstrip("0").rstrip(".")


@functools.lru_cache(maxsize=None)
def _by_name(name: str):
    from reportlab.pdfbase.pdfmetrics import getFont

    return getFont(name)


def _encode(font, chars: str, doc) -> list[tuple[int, bytes]]:
    """``chars`` as (subset, codes) chunks of ``font`` in ``doc``: reportlab's ``splitString``, with a
    fast path for characters the document has already given a code (codes never change once given)."""
    table = doc.__dict__.setdefault("_counterpoise_codes", {}).setdefault(font.fontName, {})
    try:
        codes = [table[ch] for ch in chars]
    except KeyError:
        chunks = font.splitString(chars, doc)
        assigned = font.state[doc].assignments
        for ch in chars:
            code = assigned.get(32 if ch == "\xa0" else ord(ch))
            if code is not None:
                table[ch] = code
        return chunks
    if not codes:
        return []
    if max(codes) < 256:
        return [(0, bytes(codes))]
    out: list[tuple[int, bytes]] = []
    for code in codes:
        subset = code >> 8
        if out and out[-1][0] == subset:
            out[-1][1].append(code & 0xFF)
        else:
            out.append((subset, bytearray([code & 0xFF])))
    return [(subset, bytes(data)) for subset, data in out]


def draw(c, x: float, y: float, text: str, style: str = "regular", size: float = 8.5, align: str = "left"
         ) -> float:
    """Draw ``text`` on canvas ``c`` with its baseline at ``y``: left-aligned at ``x``, or right-aligned
    or centred on it (``align`` "right" or "centre"), in the current fill colour. One text object; the
    font switches per run and per 256-character subset, each run starting where the last ended. Returns
    the width drawn."""
    doc = c._doc
    # the same text in the same style and size draws the same operators within one document (its codes and
    # subset names never change once given): made once per document, about a third of an order's texts
    drawn = doc.__dict__.setdefault("_counterpoise_drawn", {})
    key = (text, style, size)
    hit = drawn.get(key)
    if hit is None:
        shown = clean(text)
        escape = c._escape
        parts = []
        for name, chars in runs(shown, style):
            font = _by_name(name)
            for subset, data in _encode(font, chars, doc):
                parts.append(f"{font.getSubsetInternalName(subset, doc)} {_num(size)} Tf ({escape(data)}) Tj")
        hit = drawn[key] = (width(shown, style, size), "".join(" " + part for part in parts))
    w, body = hit
    if align == "right":
        x -= w
    elif align == "centre":
        x -= w / 2
    c._code.append(f"BT 1 0 0 1 {_num(x)} {_num(y)} Tm{body} ET")
    return w


@contextmanager
def binary_streams():
    """Write page streams Flate-compressed without the ASCII85 text layer while we draw and save.

    reportlab reads this switch (``rl_config.useA85``) when a stream is created and written; ASCII85
    only makes a PDF 7-bit clean and, in reportlab's pure-Python fallback, costs about a tenth of the
    rendering time. The previous value is restored afterwards.
    """
    from reportlab import rl_config

    previous = rl_config.useA85
    rl_config.useA85 = 0
    try:
        yield
    finally:
        rl_config.useA85 = previous


def canvas(buffer, paper: str = "A4"):
    """A reportlab canvas writing to ``buffer`` on ``paper``: deterministic (invariant mode), pages
    compressed, and the embedded regular font as its initial font, so no standard font is in the file."""
    from reportlab.pdfgen.canvas import Canvas

    c = Canvas(buffer, pagesize=paper_size(paper), invariant=1, pageCompression=1,
               initialFontName=_font("regular").fontName)
    c.setCreator("Counterpoise")
    return c


class Doc:
    """A canvas whose pages are held back until their order is complete, so that each footer can say
    ``page N of M`` for its own order; then they are finished and only the PDF stream keeps them."""

    def __init__(self, buffer, paper: str = "A4"):
        self.width, self.height = paper_size(paper)
        self.c = canvas(buffer, paper)
        self.pending: list[dict] = []
        self.footer = ""
        self.colour = (0.45, 0.47, 0.50)

    def start_order(self, footer: str, title: str):
        self.pending = []
        self.footer = footer
        self.c.setTitle(clean(title))

    def new_page(self):
        self.pending.append(dict(self.c.__dict__))
        self.c._startPage()

    def end_order(self):
        from reportlab.pdfgen.canvas import Canvas

        self.new_page()
        c = self.c
        total = len(self.pending)
        for n, state in enumerate(self.pending, start=1):
            c.__dict__.update(state)
            c.setFillColorRGB(*self.colour)
            c.setStrokeColorRGB(*self.colour)
            c.setLineWidth(0.4)
            c.line(MARGIN, 30, self.width - MARGIN, 30)
            draw(c, MARGIN, 20, f"{self.footer}  |  page {n} of {total}", "regular", 7.5)
            draw(c, self.width - MARGIN, 20, "Counterpoise work order", "regular", 7.5, "right")
            Canvas.showPage(c)
            self._pack(c._doc.Pages.pages[-1])
        self.pending = []

    @staticmethod
    def _pack(page) -> None:
        """Compress a finished page's content now rather than at save time.

        reportlab keeps every page's drawing commands as text until the document is saved; the stream is
        compressed with reportlab's own Flate filter and marked with its ``Filter`` entry, which reportlab
        honours by not filtering it again, so the bytes written are the same as when it compresses at save
        time.
        """
        from reportlab.pdfbase import pdfdoc

        if page.Contents or not page.stream:
            raise RuntimeError("a page was finished twice or is empty")  # a bug, never user input
        stream = pdfdoc.PDFStream()
        stream.content = pdfdoc.PDFZCompress.encode(page.stream)
        stream.dictionary["Filter"] = pdfdoc.PDFArray([pdfdoc.PDFName(pdfdoc.PDFZCompress.pdfname)])
        stream.__Comment__ = "page stream"
        page.Contents = stream
        page.stream = None

    def save(self) -> None:
        self.c.save()


# -- reading back a PDF that reportlab wrote (for the combined document)

_REF = re.compile(rb"(\d+) 0 R")


def _objects(data: bytes) -> dict[int, bytes]:
    """The objects of a PDF written by reportlab (cross-reference table, no object streams): number ->
    the bytes between ``N 0 obj`` and ``endobj``."""
    start = int(data[data.rindex(b"startxref") + 9:].split()[0])
    lines = data[start:].split(b"\n", 2)
    first, count = (int(v) for v in lines[1].split())
    table = lines[2]
    objects = {}
    for k in range(count):
        entry = table[20 * k:20 * k + 20]
        offset, _gen, kind = entry.split()[:3]
        number = first + k
        if kind != b"n":
            continue
        pos = int(offset)
        head = data.index(b"obj", pos) + 3
        body_start = head
        length = re.search(rb"/Length (\d+)", data[head:head + 400])
        stream_at = data.find(b"stream", head)
        end_at = data.find(b"endobj", head)
        if length and stream_at != -1 and stream_at < end_at:
            content = data.index(b"\n", stream_at) + 1 + int(length.group(1))
            end_at = data.index(b"endobj", content)
        objects[number] = data[body_start:end_at].strip()
    return objects


class Pages:
    """The pages of one order's PDF, to be copied into a :class:`Document` (kept as the file's bytes)."""

    __slots__ = ("data",)

    def __init__(self, data: bytes):
        self.data = data


def _split(body: bytes) -> tuple[bytes, bytes]:
    """An object's dictionary part (where references are) and its stream part (copied as it is)."""
    at = body.find(b"stream")
    if at == -1 or not body.startswith(b"<<"):
        return body, b""
    return body[:at], body[at:]


class Document:
    """Several work orders in one PDF, added one at a time (a batch's combined document).

    The pages go to a temporary file as they come (their content already compressed), so memory does
    not grow with the number of orders; :meth:`write_to` then writes the file: header, the pages with the
    fonts they use, the page tree, the cross-reference table and the trailer (PDF 1.4, ISO 32000-1
    structure). Each order keeps the page numbers of its own file; font subsets of identical content are
    written once.
    """

    _FIXED = 2  # objects 1, 2: catalog, page tree; info is the last object

    def __init__(self):
        import tempfile

        self._body = tempfile.TemporaryFile()
        self._offsets: list[int] = []   # of objects 3, 4, ... within the body
        self._pages: list[int] = []     # object numbers of the page objects
        self._seen: dict[bytes, int] = {}
        self.orders = 0

    def _object(self, data: bytes, share: bool = False) -> int:
        # shared objects are looked up by their SHA-256, not by their bytes: keyed by the bytes, every page
        # stream of every order stayed in memory (a 10,000-row batch peaked at 336 MB)
        key = hashlib.sha256(data).digest() if share else None
        if share and key in self._seen:
            return self._seen[key]
        number = self._FIXED + len(self._offsets) + 1
        self._offsets.append(self._body.tell())
        self._body.write(b"%d 0 obj\n" % number + data + b"\nendobj\n")
        if share:
            self._seen[key] = number
        return number

    def add_pages(self, pages: Pages) -> None:
        """Add the pages of one order (from :func:`toolkit.export.pdf.render_order`)."""
        objects = _objects(pages.data)
        copied: dict[int, int] = {}

        def copy(number: int) -> int:
            if number not in copied:
                head, stream = _split(objects[number])
                head = _REF.sub(lambda m: b"%d 0 R" % copy(int(m.group(1))), head)
                copied[number] = self._object(head + stream, share=True)
            return copied[number]

        catalog = next(body for body in objects.values() if b"/Type /Catalog" in body)
        tree = objects[int(re.search(rb"/Pages (\d+) 0 R", catalog).group(1))]
        kids = [int(n) for n in _REF.findall(tree[tree.index(b"/Kids"):])]
        for kid in kids:
            page = objects[kid]
            box = re.search(rb"/MediaBox \[([^\]]*)\]", page).group(1)
            contents = copy(int(re.search(rb"/Contents (\d+) 0 R", page).group(1)))
            fonts = re.search(rb"/Font (\d+) 0 R", page)
            resources = b"<< /Font %d 0 R /ProcSet [/PDF /Text] >>" % copy(int(fonts.group(1))) if fonts \
                else b"<< /ProcSet [/PDF /Text] >>"
            page_number = self._object(b"<< /Type /Page /Parent 2 0 R /MediaBox [%s] /Resources %s "
                                       b"/Contents %d 0 R >>" % (box.strip(), resources, contents))
            self._pages.append(page_number)
        self.orders += 1

    def write_to(self, handle) -> None:
        """Write the finished PDF to a binary file object (call once)."""
        header = b"%PDF-1.4\n%\xe2\xe3\xcf\xd3\n"
        handle.write(header)
        offsets = [len(header) + o for o in self._offsets]
        self._body.seek(0)
        while True:
            chunk = self._body.read(1 << 20)
            if not chunk:
                break
            handle.write(chunk)
        position = len(header) + self._body.tell()
        fixed = [
            b"<< /Type /Catalog /Pages 2 0 R >>",
            b"<< /Type /Pages /Count %d /Kids [%s] >>" % (len(self._pages),
                                                          b" ".join(b"%d 0 R" % p for p in self._pages)),
        ]
        fixed_offsets = []
        for number, data in enumerate(fixed, start=1):
            fixed_offsets.append(position)
            block = b"%d 0 obj\n" % number + data + b"\nendobj\n"
            handle.write(block)
            position += len(block)
        info_number = self._FIXED + len(self._offsets) + 1
        info = (b"%d 0 obj\n<< /Title (Work orders) /Creator (Counterpoise) /Producer (Counterpoise) >>\nendobj\n"
                % info_number)
        handle.write(info)
        all_offsets = fixed_offsets + offsets + [position]
        position += len(info)
        xref = [b"xref\n0 %d\n0000000000 65535 f \n" % (info_number + 1)]
        xref += [b"%010d 00000 n \n" % o for o in all_offsets]
        handle.write(b"".join(xref))
        handle.write(b"trailer\n<< /Size %d /Root 1 0 R /Info %d 0 R >>\nstartxref\n%d\n%%%%EOF\n"
                     % (info_number + 1, info_number, position))
        self._body.close()

    def finish(self) -> bytes:
        """The finished PDF as bytes (small documents; a batch uses :meth:`write_to`)."""
        out = BytesIO()
        self.write_to(out)
        return out.getvalue()

    def close(self) -> None:
        """Drop the temporary pages (when a batch stops early)."""
        self._body.close()
