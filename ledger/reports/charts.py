"""The report's pictures, as SVG: the same bytes on the page (an <img> of the chart URL) and in the PDF.

Drawn with matplotlib's object API (a ``Figure`` per chart, no pyplot, so no global figure list)
on the Agg backend, and written deterministically: a fixed ``svg.hashsalt`` (the ids matplotlib
puts in the SVG) and no creation date, so the same report gives the same bytes. Colour is never
the only cue: every outcome has its own hatching and every bar carries its number.
"""

from __future__ import annotations

import io
import threading
from collections.abc import Callable

import matplotlib

matplotlib.use("Agg")

from matplotlib.figure import Figure  # noqa: E402  (after choosing the backend)

from ledger.reports.selectors import VERDICT_OUTCOMES, LabReport, Outcome  # noqa: E402

SVG_SETTINGS = {
    "svg.hashsalt": "forebook-lab-report",
    # Text stays text: readable by screen readers and pdftotext, scaled by the viewer.
    "svg.fonttype": "none",
    "font.family": "DejaVu Sans",
    "font.size": 9,
    "hatch.linewidth": 0.8,
}
# rc_context changes process-wide settings while it lasts: one chart at a time, so a chart drawn
# in another thread never sees (or restores) the settings halfway.
_RENDER_LOCK = threading.Lock()

# The verdicts, "within time" and "overdue" take colours of the Okabe & Ito (2008) "Color Universal
# Design" palette, told apart with the common colour-vision deficiencies; grey and white are ours.
# The hatching and the numbers carry the same information for anyone who cannot tell them apart.
COLOURS = {
    Outcome.SUPPORTED: "#009E73",
    Outcome.NULL: "#0072B2",
    Outcome.OPPOSITE: "#D55E00",
    Outcome.INCONCLUSIVE: "#999999",
    Outcome.WITHIN_TIME: "#F0E442",
    Outcome.OVERDUE: "#CC79A7",
    Outcome.WITHDRAWN: "#FFFFFF",
}
HATCHES = {
    Outcome.SUPPORTED: "//",
    Outcome.NULL: "..",
    Outcome.OPPOSITE: "\\\\",
    Outcome.INCONCLUSIVE: "xx",
    Outcome.WITHIN_TIME: "",
    Outcome.OVERDUE: "++",
    Outcome.WITHDRAWN: "--",
}
SHORT_LABELS = {
    Outcome.SUPPORTED: "Supported",
    Outcome.NULL: "Null",
    Outcome.OPPOSITE: "Opposite",
    Outcome.INCONCLUSIVE: "Inconclusive",
    Outcome.WITHIN_TIME: "Within time",
    Outcome.OVERDUE: "Overdue",
    Outcome.WITHDRAWN: "Withdrawn",
}


def _svg(draw: Callable[[Figure], None], *, height: float = 3.0) -> bytes:
    with _RENDER_LOCK, matplotlib.rc_context(SVG_SETTINGS):
        figure = Figure(figsize=(7.0, height), layout="constrained")
        draw(figure)
        buffer = io.BytesIO()
        figure.savefig(buffer, format="svg", metadata={"Date": None})
    return buffer.getvalue()


def _bar_style(outcome: Outcome) -> dict:
    return {"color": COLOURS[outcome], "hatch": HATCHES[outcome], "edgecolor": "#222222", "linewidth": 0.8}


def _tidy(axes, *, ylabel: str) -> None:
    axes.set_ylabel(ylabel)
    axes.spines[["top", "right"]].set_visible(False)


def _labelled_bars(axes, bars: list[tuple[str, float, Outcome, str]]) -> None:
    """One bar per (axis label, height, outcome for its style, text written above it)."""
    for label, height, outcome, text in bars:
        container = axes.bar(label, height, **_bar_style(outcome))
        axes.bar_label(container, labels=[text], padding=2)


def outcome_chart(*, report: LabReport) -> bytes:
    """How many registered studies reached each outcome."""
    counts = report.overall.counts

    def draw(figure: Figure) -> None:
        axes = figure.subplots()
        values = {outcome: counts.get(outcome.value, 0) for outcome in Outcome}
        _labelled_bars(axes, [(SHORT_LABELS[outcome], n, outcome, str(n)) for outcome, n in values.items()])
        axes.set_ylim(0, max(max(values.values()), 1) * 1.2)
        axes.yaxis.get_major_locator().set_params(integer=True)
        _tidy(axes, ylabel="Registered studies")
        axes.set_title("Outcome of every registered study")

    return _svg(draw)


def publication_chart(*, report: LabReport) -> bytes:
    """Publication rate (latest link is a DOI) for each verdict, with the counts on the bars."""
    rows = report.file_drawer

    def draw(figure: Figure) -> None:
        axes = figure.subplots()
        _labelled_bars(
            axes,
            [
                (
                    SHORT_LABELS[row.verdict],
                    100 * (row.publication_rate.value or 0),
                    row.verdict,
                    f"{row.published} of {row.total}",
                )
                for row in rows
            ],
        )
        axes.set_ylim(0, 115)
        _tidy(axes, ylabel="Published with a DOI (%)")
        axes.set_title("Publication rate by verdict")

    return _svg(draw)


def results_over_time_chart(*, report: LabReport) -> bytes:
    """Sealed results per year, stacked by verdict."""
    years = report.results_by_year

    def draw(figure: Figure) -> None:
        axes = figure.subplots()
        if not years:
            axes.text(0.5, 0.5, "No results sealed yet", ha="center", va="center", transform=axes.transAxes)
            axes.set_axis_off()
            return
        labels = [row.label for row in years]
        bottom = [0] * len(years)
        for verdict in VERDICT_OUTCOMES:
            values = [row.counts.get(verdict.value, 0) for row in years]
            bars = axes.bar(labels, values, bottom=bottom, label=SHORT_LABELS[verdict], **_bar_style(verdict))
            axes.bar_label(
                bars,
                labels=[str(value) if value else "" for value in values],
                label_type="center",
                bbox={"boxstyle": "round,pad=0.2", "facecolor": "white", "edgecolor": "none"},
            )
            bottom = [below + value for below, value in zip(bottom, values, strict=True)]
        axes.yaxis.get_major_locator().set_params(integer=True)
        figure.legend(loc="outside upper center", ncols=4, frameon=False)
        _tidy(axes, ylabel="Results sealed")
        axes.set_xlabel("Year the result was sealed")
        axes.set_title("Results over time")

    return _svg(draw)


CHARTS: dict[str, tuple[str, Callable[..., bytes]]] = {
    "outcomes": ("Bar chart: number of registered studies per outcome", outcome_chart),
    "publication": ("Bar chart: share of studies published with a DOI, per verdict", publication_chart),
    "results": ("Stacked bar chart: results sealed per year, by verdict", results_over_time_chart),
}
"""Chart name (in the URL) -> (text alternative, drawing function)."""
