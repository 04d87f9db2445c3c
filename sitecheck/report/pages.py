"""The pages of a long PDF kept small while it is made, and its page count right at any size.

fpdf2 keeps every page's drawing instructions as plain text until the whole document is
written: about 50 KB a bearing, 500 MB for a site of 10,000 bearings, before the file is
made. :class:`PackedPages` compresses each page's instructions as soon as the next page
begins (to about a quarter), as the file would hold them anyway, and hands them to the
file as they are.

fpdf2 fills in the page count ("page 3 of N") when the document is written, in a space
as wide as its placeholder: three digits for its usual ``{nb}``, so past 999 pages the
number ran past its space and fpdf2 warned once a page. The placeholder here,
:data:`PAGE_COUNT`, is as wide as twelve digits; the count is left-aligned in it, so the
text reads "page 10001 of 10001" exactly, at any size.

fpdf2 has no way to be given a page already compressed, so the content stream it makes of
each page is replaced by one that takes a packed page as it is (and any other content as
before). The document reads back whole (tests/report/ and tests/test_site_record_*.py
read every PDF they make), which is what would catch a change of fpdf2's inner workings.
"""

from __future__ import annotations

import zlib

import fpdf.output
from fpdf import FPDF
from fpdf.syntax import Name, PDFContentStream, PDFObject

__all__ = ["PAGE_COUNT", "PackedPage", "PackedPages"]

# The page count's placeholder: fpdf2 reserves one digit's width per character for it.
PAGE_COUNT = "{page count}"
# Compressed as the file would be (zlib's default), so a page is compressed once.
_LEVEL = -1


class PackedPage(bytearray):
    """A finished page's drawing instructions, zlib-compressed."""

    def _finished(self, *_args, **_kwargs):
        raise RuntimeError("a finished page of the PDF was drawn on; draw on the current page")

    # fpdf2 adds to a page's instructions with these: on a packed page it would be garbage.
    extend = append = __iadd__ = _finished

    def replace(self, old, new, count=-1):
        """The page with ``old`` replaced, still packed: fpdf2 writes the page count in this
        way when the document is written, one page at a time."""
        plain = zlib.decompress(self)
        if old not in plain:
            return self
        return PackedPage(zlib.compress(plain.replace(old, new, count), _LEVEL))


class _ContentStream(PDFContentStream):
    """fpdf2's content stream, taking a packed page as it is."""

    def __init__(self, contents, compress: bool = False):
        if not isinstance(contents, PackedPage):
            super().__init__(contents=contents, compress=compress)
            return
        PDFObject.__init__(self)
        self._contents = bytes(contents)
        self.filter = Name("FlateDecode")
        self.length = len(self._contents)


if fpdf.output.PDFContentStream is PDFContentStream:
    fpdf.output.PDFContentStream = _ContentStream


class PackedPages(FPDF):
    """An FPDF whose finished pages are held compressed, with a page count for any size."""

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self.alias_nb_pages(PAGE_COUNT)

    def add_page(self, *args, **kwargs) -> None:
        finished = self.page
        super().add_page(*args, **kwargs)
        if finished:
            self.pack(finished)

    def pack(self, number: int) -> None:
        page = self.pages[number]
        if self.compress and type(page.contents) is bytearray:
            page.contents = PackedPage(zlib.compress(page.contents, _LEVEL))
