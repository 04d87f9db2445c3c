"""The site record (PDF): each bearing's reference, utilisation, decision and release read
back; symbols spelled out without a Unicode font; progress to the end; the print copies of
the photos embedded as stored; and the `sitecheck record` command."""

from __future__ import annotations

import io

from pypdf import PdfReader

from kit.site_record import pdf_text, record_made, start_record
from sitecheck import cli, store
from sitecheck.report import pdf
from sitecheck.report.collect import collect
from sitecheck.web import photo_store


def test_the_pdf_parses_back_with_each_bearings_reference_utilisation_decision_and_release(
    app, client_as, db, site, recorded
):
    viewer = client_as("viewer")
    start_record(viewer, site["id"])
    record_made(app, site["id"])
    r = viewer.get(f"/sites/{site['id']}/record.pdf")
    data, disposition = r.data, r.headers["Content-Disposition"]
    r.close()
    assert r.status_code == 200 and r.mimetype == "application/pdf"
    assert disposition.startswith("attachment; filename=tanner-s-yard")
    assert disposition.endswith("-site-record.pdf")
    text = pdf_text(data)
    assert "Site record" in text and "competent engineer" in text
    for b in store.list_bearings(db, site_id=site["id"]):
        assert f"Bearing {b['reference']}" in text
        assert f"{b['design_utilisation']:.2f}" in text
    for b in recorded.values():
        latest = store.get_record(db, site_id=site["id"], uuid=b["latest_record_uuid"])
        assert f"{latest['utilisation']:.2f}" in text
    assert "Decision: Accept as built" in text
    assert "Shorter padstone checked as built; accept." in text
    assert "Cora Contractor for Invented Build Ltd" in text
    assert "Released for closing up" in text
    assert "σ_max" in text  # symbols survive with the Unicode font
    assert "Appendix: audit trail" in text


def test_the_pdf_is_made_without_a_unicode_font_by_spelling_symbols_out(
    app, db, site, recorded, monkeypatch
):
    monkeypatch.setattr(pdf, "find_font", lambda: None)
    with app.app_context():
        data = pdf.pdf_bytes(collect(db, site["id"]), photo_store=photo_store())
    text = pdf_text(data)
    assert "GF-B2-N" in text and "sigma_max" in text and "σ" not in text


def test_progress_is_reported_to_the_end(app, db, site):
    seen = []
    buffer = io.BytesIO()
    pdf.write_pdf(collect(db, site["id"]), buffer, progress=lambda d, t, w: seen.append((d, t)))
    assert seen[-1][0] == seen[-1][1] == len(store.list_bearings(db, site_id=site["id"])) + 3
    assert buffer.getvalue().startswith(b"%PDF")


def test_the_record_command_writes_the_pdf_with_a_progress_bar(app, db, site, tmp_path, capsys):
    out = tmp_path / "record.pdf"
    rc = cli.main(["record", site["name"], "--db", app.config["DB_PATH"], "--out", str(out)])
    captured = capsys.readouterr()
    assert rc == 0 and out.read_bytes().startswith(b"%PDF")
    assert "#" in captured.err and "audit trail" in captured.err
    assert "competent engineer" in captured.out
    assert (
        cli.main(["record", "No such site", "--db", app.config["DB_PATH"], "--out", str(out)]) == 2
    )
    assert (
        cli.main(["record", site["id"], "--db", str(tmp_path / "none.db"), "--out", str(out)]) == 2
    )


def _photo_rows(db, site_id: str) -> list[dict]:
    return [
        p
        for r in store.records_for_site(db, site_id=site_id)
        for p in store.photos_for_record(db, site_id=site_id, record_uuid=r["uuid"])
    ]


def _embedded_jpegs(data: bytes) -> list[tuple[bytes, tuple[int, int]]]:
    """Each page's pictures: the stream as the PDF holds it, and its pixel size."""
    reader = PdfReader(io.BytesIO(data))
    found = []
    for page in reader.pages:
        xobjects = page["/Resources"].get("/XObject", {})
        for name in xobjects:
            stream = xobjects[name].get_object()
            if stream["/Subtype"] == "/Image":
                assert stream["/Filter"] == "/DCTDecode"
                found.append((stream._data, (stream["/Width"], stream["/Height"])))
    return found


def test_an_upload_keeps_a_print_copy_and_the_pdf_embeds_it_as_stored(app, db, site, recorded):
    rows = _photo_rows(db, site["id"])
    assert len(rows) == 2
    with app.app_context():
        ps = photo_store()
        kept = {ps.open_print(p["sha256"]) for p in rows}  # made when the photo came in
        data = pdf.pdf_bytes(collect(db, site["id"]), photo_store=ps)
    embedded = _embedded_jpegs(data)
    assert len(embedded) == len(rows)
    assert {d for d, _size in embedded} == kept  # byte for byte: nothing decoded or re-encoded
    # 640 x 480 uploads print at 448 px on the long edge (PhotoLimits.print_long_edge).
    assert {size for _d, size in embedded} == {(448, 336)}


def test_a_photo_stored_before_print_copies_is_printed_from_one_made_then_and_kept(
    app, db, site, recorded
):
    rows = _photo_rows(db, site["id"])
    with app.app_context():
        ps = photo_store()
        for sha in {p["sha256"] for p in rows}:  # both records have the same picture
            ps.print_path_for(sha).unlink()
        data = pdf.pdf_bytes(collect(db, site["id"]), photo_store=ps)
        kept = {ps.open_print(p["sha256"]) for p in rows}
    embedded = _embedded_jpegs(data)
    assert len(embedded) == len(rows) and {d for d, _s in embedded} == kept
    assert {size for _d, size in embedded} == {(448, 336)}
