"""The site record as the tests ask for it and read it: started in the background as a
person starts it, waited for, and its PDF's words read back with pypdf."""

from __future__ import annotations

import io

from pypdf import PdfReader

from kit.web import csrf_token
from sitecheck.report import jobs


def pdf_text(data: bytes) -> str:
    """The words of the whole PDF, with table cells' line wrapping taken out."""
    reader = PdfReader(io.BytesIO(data))
    return " ".join(" ".join(page.extract_text().split()) for page in reader.pages)


def start_record(client, site_id: str):
    """A person asks for the site record (PDF), as the record page's button does."""
    return client.post(f"/sites/{site_id}/record/pdf", data={"csrf_token": csrf_token(client)})


def record_made(app, site_id: str) -> jobs.Job:
    """The site's newest record job once it has finished (the test fails after two minutes)."""
    record_jobs = app.extensions["record_jobs"]
    job = record_jobs.latest(site_id)
    assert record_jobs.wait(job.id, timeout=120), "the site record took over two minutes"
    return record_jobs.latest(site_id)
