"""The site record (PDF) of a long site: its pages held compressed while it is made, and
"page x of N" right at any size, past 10,000 pages too. Every PDF here is read back."""

from __future__ import annotations

import io
import re
import warnings
import zlib

import pytest
from pypdf import PdfReader

from sitecheck import store
from sitecheck.report import pdf
from sitecheck.report.collect import collect
from sitecheck.report.pages import PackedPage


def _footer(page) -> str:
    found = re.findall(r"page (\d+) of (\d+)", page.extract_text())
    assert found, page.extract_text()[-200:]
    return "page {} of {}".format(*found[-1])


def test_the_page_count_is_right_past_ten_thousand_pages():
    """A record of over 10,000 pages, made cheaply (a line of text a page), says the right
    count on its first and last pages and at the four- and five-digit steps, and fpdf2 has
    nothing to warn about (its usual placeholder is three digits wide)."""
    pages = 10_002
    doc = pdf._Doc("A long invented site")
    for n in range(pages):
        doc.add_page()
        doc.para(f"Page body {n + 1}.")
    with warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always")
        data = bytes(doc.output())
    assert [str(w.message) for w in seen] == []
    reader = PdfReader(io.BytesIO(data))
    assert len(reader.pages) == pages
    for number in (1, 999, 1000, 9999, 10_000, pages):
        page = reader.pages[number - 1]
        assert _footer(page) == f"page {number} of {pages}", number
        assert f"Page body {number}." in page.extract_text()


def test_finished_pages_are_held_compressed_and_read_back_whole():
    doc = pdf._Doc("Invented site")
    for n in range(3):
        doc.add_page()
        for line in range(40):
            doc.para(f"Bearing B{n}-{line}: utilisation 0.{line:02d}, within design.")
    finished = [doc.pages[n].contents for n in (1, 2)]
    assert all(type(c) is PackedPage for c in finished)
    current = doc.pages[3].contents
    assert type(current) is bytearray  # the page being drawn on is not packed yet
    plain = zlib.decompress(finished[0])
    assert len(finished[0]) < len(plain) / 3 and b"Tj" in plain
    # A finished page cannot be drawn on by mistake: its packed bytes would be spoilt.
    with pytest.raises(RuntimeError, match="finished page"):
        finished[0].extend(b"0 0 m")
    reader = PdfReader(io.BytesIO(bytes(doc.output())))
    assert len(reader.pages) == 3
    for n, page in enumerate(reader.pages):
        text = page.extract_text()
        assert f"Bearing B{n}-0:" in text and f"Bearing B{n}-39:" in text
        assert _footer(page) == f"page {n + 1} of 3"
        assert "competent engineer" in text  # the caution on every page


def test_a_site_records_footer_counts_its_own_pages(db, site):
    buffer = io.BytesIO()
    with store.read_snapshot(db):
        pdf.write_pdf(collect(db, site["id"]), buffer)
    reader = PdfReader(buffer)
    total = len(reader.pages)
    assert total > 5
    assert [_footer(p) for p in reader.pages] == [
        f"page {n} of {total}" for n in range(1, total + 1)
    ]
