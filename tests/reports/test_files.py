"""The report's files: the PDF, the studies CSV and the summary CSV, from the page's task and from
`python manage.py lab_report`.

External checks:
  - pdfinfo and pdftotext (Debian poppler-utils) read the PDF: its page count, and the text a
    reader sees on each page (pages are separated by form feeds in pdftotext's output).
  - Python's csv module (RFC 4180) reads the CSVs back.
Expected counts come from the seeded lab's design (tests/reports/conftest.py).
"""

import csv
import io
import re
import subprocess
from collections import Counter

import pytest
from django.core.management import CommandError, call_command
from django.utils import timezone

from ledger.reports.files import STUDY_COLUMNS, SUMMARY_COLUMNS, report_file, studies_csv
from ledger.reports.models import ReportFormat
from ledger.reports.selectors import lab_report
from tests.factories import sealed_study
from tests.reports.builders import today

pytestmark = pytest.mark.django_db

EXPECTED_OUTCOMES = {
    "supported": 3,
    "null": 4,
    "opposite": 1,
    "inconclusive": 1,
    "within_time": 2,
    "overdue": 2,
    "withdrawn": 1,
}


def pdf_pages(path) -> int:
    output = subprocess.run(["pdfinfo", str(path)], capture_output=True, text=True, check=True, timeout=60).stdout
    return int(re.search(r"^Pages:\s+(\d+)$", output, re.MULTILINE).group(1))


def pdf_page_texts(path) -> list[str]:
    output = subprocess.run(
        ["pdftotext", "-layout", str(path), "-"], capture_output=True, text=True, check=True, timeout=60
    ).stdout
    return [" ".join(page.split()) for page in output.split("\f") if page.strip()]


def read_csv(data: bytes) -> list[dict[str, str]]:
    return list(csv.DictReader(io.StringIO(data.decode("utf-8"))))


def test_the_pdf_has_numbered_a4_pages_with_the_lab_and_every_key_number(seeded_lab, tmp_path):
    lab = seeded_lab.a.lab
    report = lab_report(lab=lab, today=today())
    built = report_file(report=report, file_format=ReportFormat.PDF, generated_at=timezone.now())
    path = tmp_path / "report.pdf"
    path.write_bytes(built.data)
    pages = pdf_pages(path)
    assert pages >= 2
    texts = pdf_page_texts(path)
    assert len(texts) == pages
    for number, text in enumerate(texts, start=1):
        assert f"Page {number} of {pages}" in text
        assert lab.name in text  # the running head, on every page
    info = subprocess.run(["pdfinfo", str(path)], capture_output=True, text=True, check=True).stdout
    assert re.search(r"Page size:\s+595\.\d+ x 841\.\d+ pts \(A4\)", info)
    text = " ".join(texts)
    assert "all registered studies (any date of first sealing)" in text
    assert "2 of 3 (67 %)" in text  # supported results published
    assert "1 of 4 (25 %)" in text  # null results published
    assert "1 of 3 (33 %)" in text  # null share of the published findings
    assert "4 of 14 (29 %)" in text  # studies with major findings
    assert "2 of 14 (14 %)" in text  # unexplained, and retrospective
    for study in seeded_lab.studies.values():
        assert study.code in text
    assert "It is not the supported rate" in text
    # The three charts are drawn in the PDF (their titles are SVG text).
    for title in ("Outcome of every registered study", "Publication rate by verdict", "Results over time"):
        assert title in text


def test_the_studies_csv_has_one_row_per_registered_study(seeded_lab):
    report = lab_report(lab=seeded_lab.a.lab, today=today())
    rows = read_csv(studies_csv(report=report))
    assert tuple(rows[0].keys()) == STUDY_COLUMNS
    assert len(rows) == 14
    assert Counter(row["outcome"] for row in rows) == EXPECTED_OUTCOMES
    by_code = {row["code"]: row for row in rows}
    studies = seeded_lab.studies
    s2 = by_code[studies["S2"].code]
    assert (s2["publication_status"], s2["doi"], s2["verdict"]) == (
        "published",
        "10.5555/forebook-report-test",
        "supported",
    )
    n4 = by_code[studies["N4"].code]
    assert n4["retrospective_registration"] == "yes" and int(n4["major_findings"]) >= 2
    assert by_code[studies["D1"].code]["unexplained_findings"] == "RESULTS_OVERDUE:study"
    o1 = by_code[studies["O1"].code]
    assert o1["investigators"] == f"{seeded_lab.a.display_name}; {seeded_lab.b.display_name}"
    assert by_code[studies["W1"].code]["result_sealed_on"] == ""
    assert float(by_code[studies["S1"].code]["registered_power"]) == pytest.approx(0.8015, abs=1e-4)


def test_a_title_that_looks_like_a_formula_stays_text(investigator):
    sealed_study(member=investigator, title="=HYPERLINK(1)")
    rows = read_csv(studies_csv(report=lab_report(lab=investigator.lab, today=today())))
    assert rows[0]["title"] == "'=HYPERLINK(1)"


def test_the_lab_report_command_writes_the_three_files(seeded_lab, tmp_path, capsys):
    lab = seeded_lab.a.lab
    targets = {name: tmp_path / name for name in ("report.pdf", "studies.csv", "summary.csv")}
    call_command(
        "lab_report",
        lab.slug,
        "--pdf",
        str(targets["report.pdf"]),
        "--csv",
        str(targets["studies.csv"]),
        "--summary-csv",
        str(targets["summary.csv"]),
    )
    out = capsys.readouterr().out
    assert out.count("wrote ") == 3 and "14 registered studies" in out
    assert targets["report.pdf"].read_bytes().startswith(b"%PDF-")
    assert len(read_csv(targets["studies.csv"].read_bytes())) == 14
    summary = read_csv(targets["summary.csv"].read_bytes())
    assert tuple(summary[0].keys()) == SUMMARY_COLUMNS
    overall = {row["category"]: int(row["value"]) for row in summary if row["section"] == "outcomes"}
    assert overall == EXPECTED_OUTCOMES
    drawer = {
        (row["group"], row["category"]): (int(row["value"]), int(row["denominator"]))
        for row in summary
        if row["section"] == "file_drawer"
    }
    assert drawer[("null", "published")] == (1, 4)
    assert drawer[("supported", "none")] == (1, 3)
    shares = {
        row["category"]: (int(row["value"]), int(row["denominator"])) for row in summary if row["section"] == "shares"
    }
    assert shares["studies_with_major_findings"] == (4, 14)
    assert shares["null_share_of_published"] == (1, 3)


def test_the_command_takes_a_date_range(seeded_lab, tmp_path, capsys):
    target = tmp_path / "later.csv"
    tomorrow = today().toordinal() + 1
    from_date = type(today()).fromordinal(tomorrow).isoformat()
    call_command("lab_report", seeded_lab.a.lab.slug, "--csv", str(target), "--from", from_date)
    assert read_csv(target.read_bytes()) == []
    assert f"studies first sealed on or after {from_date}" in capsys.readouterr().out


@pytest.mark.parametrize(
    ("arguments", "message"),
    [
        (["no-such-lab", "--csv", "x.csv"], "No lab with the short name 'no-such-lab'"),
        (["{lab}"], "Say what to write"),
        (["{lab}", "--csv", "x.csv", "--from", "2026-13-01"], "--from: Enter a valid date"),
        (["{lab}", "--csv", "x.csv", "--from", "2026-05-01", "--to", "2026-04-01"], "swap the two dates"),
        (["{lab}", "--csv", "x.csv", "--prior-odds", "1:0"], "--prior-odds: Write the prior odds as true:false"),
        (["{lab}", "--pdf", "/no/such/folder/x.pdf"], "does not exist"),
    ],
)
def test_the_command_says_how_to_fix_bad_input(investigator, tmp_path, monkeypatch, arguments, message):
    monkeypatch.chdir(tmp_path)
    with pytest.raises(CommandError, match=re.escape(message)):
        call_command("lab_report", *[argument.format(lab=investigator.lab.slug) for argument in arguments])
