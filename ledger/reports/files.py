"""The lab report as files: a PDF (WeasyPrint, A4) and two CSVs, all from one ``LabReport``.

* ``report_pdf``: every table and chart of the report page, with the lab's name and the date range
  at the top of every page and "Page n of N" at the bottom.
* ``studies_csv``: one row per registered study (``STUDY_COLUMNS``).
* ``summary_csv``: the counts behind the tables, one number per row (``SUMMARY_COLUMNS``):
  ``section`` names the table, ``group`` the row (a year, an investigator, a verdict), ``category``
  the column, ``value`` the number and ``denominator`` what a share is out of (empty for plain
  counts). Long rather than wide, so that a script can filter it without knowing the layout.
"""

from __future__ import annotations

import base64
import csv
import datetime as dt
import io
from collections.abc import Iterator

from django.template.loader import render_to_string

from ledger.core.exports import BuiltFile, ProgressCallback, report_progress
from ledger.reports.charts import CHARTS
from ledger.reports.models import FORMAT_FILES, ReportFormat
from ledger.reports.selectors import LabReport, Outcome, Share

STUDY_COLUMNS = (
    "code",
    "title",
    "state",
    "outcome",
    "verdict",
    "first_sealed_on",
    "result_sealed_on",
    "results_due_on",
    "investigators",
    "publication_status",
    "doi",
    "major_findings",
    "unexplained_findings",
    "retrospective_registration",
    "registered_power",
)
SUMMARY_COLUMNS = ("section", "group", "category", "value", "denominator")

# A spreadsheet runs a cell that starts with one of these as a formula; free text typed by lab
# members (titles, names) gets a leading apostrophe so that it stays text (OWASP, "CSV Injection").
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def _text_cell(value: str) -> str:
    return "'" + value if value.startswith(FORMULA_STARTS) else value


def _date_cell(value: dt.date | dt.datetime | None) -> str:
    if value is None:
        return ""
    if isinstance(value, dt.datetime):
        value = value.astimezone(dt.UTC).date()
    return value.isoformat()


def _number_cell(value: float | int | None) -> str:
    # str() of a float is the shortest text that reads back as the same float.
    return "" if value is None else str(value)


def _csv_bytes(header: tuple[str, ...], rows: Iterator[list[str]]) -> bytes:
    buffer = io.StringIO()
    writer = csv.writer(buffer)  # RFC 4180: CRLF line ends, quotes where needed
    writer.writerow(header)
    writer.writerows(rows)
    return buffer.getvalue().encode("utf-8")


def studies_csv(*, report: LabReport) -> bytes:
    def rows() -> Iterator[list[str]]:
        for study in report.studies:
            yield [
                study.code,
                _text_cell(study.title),
                study.state,
                study.outcome.value,
                study.verdict,
                _date_cell(study.sealed_at),
                _date_cell(study.result_recorded_at),
                _date_cell(study.due_on),
                _text_cell("; ".join(study.investigators)),
                study.publication.value,
                _text_cell(study.doi),
                str(study.major_findings),
                " ".join(study.unexplained_findings),
                "yes" if study.retrospective else "no",
                _number_cell(study.registered_power),
            ]

    return _csv_bytes(STUDY_COLUMNS, rows())


def _share_row(section: str, category: str, share: Share) -> list[str]:
    return [section, "", category, str(share.count), str(share.of)]


def summary_csv(*, report: LabReport) -> bytes:
    def outcome_rows(section: str, rows) -> Iterator[list[str]]:
        for row in rows:
            for outcome in Outcome:
                yield [section, _text_cell(row.label), outcome.value, str(row.counts.get(outcome.value, 0)), ""]

    def rows() -> Iterator[list[str]]:
        yield from outcome_rows("outcomes", [report.overall])
        yield from outcome_rows("outcomes_by_year_sealed", report.by_year)
        yield from outcome_rows("outcomes_by_investigator", report.by_investigator)
        yield from outcome_rows("results_by_year_sealed", report.results_by_year)
        for row in report.file_drawer:
            for category, count in (
                ("published", row.published),
                ("not_submitted", row.not_submitted),
                ("none", row.nothing_recorded),
            ):
                yield ["file_drawer", row.verdict.value, category, str(count), str(row.total)]
        yield _share_row("shares", "null_publication_rate", report.null_publication_rate)
        yield _share_row("shares", "supported_publication_rate", report.supported_publication_rate)
        yield _share_row("shares", "null_share_of_published", report.null_share_of_published)
        yield _share_row("shares", "studies_with_major_findings", report.major_findings)
        yield _share_row("shares", "studies_with_unexplained_findings", report.unexplained_findings)
        yield _share_row("shares", "retrospective_registrations", report.retrospective)
        yield _share_row("shares", "supported_rate", report.supported_rate)
        yield [
            "timing",
            "",
            "median_days_sealed_to_result",
            _number_cell(report.median_days_to_result),
            str(len(report.days_to_result)),
        ]
        power = report.power
        studies_with_power = str(len(power.values))
        for category, value in (("median", power.median), ("lowest", power.lowest), ("highest", power.highest)):
            yield ["registered_power", "", category, _number_cell(value), studies_with_power]
        for label, count in power.bands:
            yield ["registered_power_bands", "", label, str(count), studies_with_power]
        yield ["ppv", "", "prior_odds", _number_cell(report.prior_odds), ""]
        yield ["ppv", "", "alpha", _number_cell(report.alpha), ""]
        yield ["ppv", "", "median_registered_power", _number_cell(power.median), ""]
        yield ["ppv", "", "positive_predictive_value", _number_cell(report.ppv), ""]

    return _csv_bytes(SUMMARY_COLUMNS, rows())


# --- the PDF ----------------------------------------------------------------------------------


def chart_images(*, report: LabReport) -> dict[str, dict[str, str]]:
    """Each chart as a data: URI (the PDF needs nothing fetched), keyed by chart name."""
    return {
        name: {
            "alt": alt,
            "src": "data:image/svg+xml;base64," + base64.b64encode(draw(report=report)).decode("ascii"),
        }
        for name, (alt, draw) in CHARTS.items()
    }


def report_pdf(*, report: LabReport, generated_at: dt.datetime, progress: ProgressCallback | None = None) -> bytes:
    import weasyprint

    report_progress(progress, 20, "Drawing the charts")
    context = {"report": report, "charts": chart_images(report=report), "generated_at": generated_at}
    report_progress(progress, 50, "Laying out the PDF")
    html = render_to_string("reports/report_pdf.html", context)
    # The charts are embedded as data: URIs; the report fetches nothing from anywhere else, and a
    # chart that cannot be read fails the export instead of leaving a hole in the PDF.
    fetcher = weasyprint.URLFetcher(allowed_protocols={"data"}, fail_on_errors=True)
    stylesheet = weasyprint.CSS(string=render_to_string("reports/report_pdf.css"), url_fetcher=fetcher)
    return weasyprint.HTML(string=html, url_fetcher=fetcher).write_pdf(stylesheets=[stylesheet])


def report_file(
    *,
    report: LabReport,
    file_format: str,
    generated_at: dt.datetime,
    progress: ProgressCallback | None = None,
) -> BuiltFile:
    """The report in one of the ``ReportFormat`` formats."""
    if file_format not in FORMAT_FILES:
        raise ValueError(f"Unknown report format {file_format!r}; choose one of {', '.join(ReportFormat.values)}.")
    suffix, _media_type = FORMAT_FILES[ReportFormat(file_format)]
    if file_format == ReportFormat.PDF:
        return BuiltFile(data=report_pdf(report=report, generated_at=generated_at, progress=progress), suffix=suffix)
    report_progress(progress, 50, "Writing the CSV")
    write = studies_csv if file_format == ReportFormat.STUDIES_CSV else summary_csv
    return BuiltFile(data=write(report=report), suffix=suffix)
