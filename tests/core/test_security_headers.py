"""Every page carries a Content-Security-Policy without inline scripts, and the templates need none."""
import re
from pathlib import Path

import pytest

TEMPLATES = Path(__file__).resolve().parents[2] / "templates"
# Templates rendered only by WeasyPrint into PDFs, never served to a browser.
PDF_ONLY = {"records/record.html"}


@pytest.mark.django_db
def test_pages_forbid_inline_scripts_and_framing(client, user):
    client.force_login(user)
    response = client.get("/")
    policy = response.headers["Content-Security-Policy"]
    directives = dict(part.strip().split(" ", 1) for part in policy.split(";"))
    assert directives["script-src"] == "'self'"
    assert "unsafe-inline" not in directives["style-src"]
    assert directives["frame-ancestors"] == "'none'"
    assert response.headers["X-Frame-Options"] == "DENY"
    assert response.headers["Referrer-Policy"] == "same-origin"
    assert response.headers["X-Content-Type-Options"] == "nosniff"


@pytest.mark.django_db
def test_the_sign_in_page_is_covered_too(client):
    assert "script-src 'self'" in client.get("/accounts/login/").headers["Content-Security-Policy"]


def test_no_template_has_inline_script_or_style():
    offenders = []
    for path in TEMPLATES.rglob("*.html"):
        name = str(path.relative_to(TEMPLATES))
        if name in PDF_ONLY:
            continue
        text = path.read_text()
        if re.search(r"<script(?![^>]*\bsrc=)[^>]*>", text) or re.search(r"\sstyle=\"", text) or "<style" in text:
            offenders.append(name)
        if re.search(r"\son[a-z]+=\"", text) or "javascript:" in text:
            offenders.append(name)
    assert offenders == []
