"""The research line's charts as SVG documents: the funnel plot and the p-curve.

matplotlib's object interface on an Agg canvas: no pyplot, so no global figure registry and no
GUI backend in a web process. The output is deterministic -- the same data give the same bytes --
because the salt that names the SVG's internal ids is fixed, the Date metadata is left out, and
text is written as SVG text in a bundled font family rather than as glyph outlines.

The page embeds each chart with ``<img>`` from its own URL: the site's strict
Content-Security-Policy forbids the inline styles an inline ``<svg>`` from matplotlib would carry.
"""

from __future__ import annotations

import io
from collections.abc import Sequence
from dataclasses import dataclass

import matplotlib
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from scipy import stats

from ledger.lines.conversions import MEASURE_LABELS
from ledger.lines.diagnostics import LineDiagnostics, LineResult
from ledger.lines.readings import NULL_PERCENT_PER_BIN, funnel_problem, pcurve_bin_labels
from ledger.stats.bias import PCURVE_REFERENCE_POWER

SVG_SETTINGS = {
    "svg.hashsalt": "forebook-research-lines",
    "svg.fonttype": "none",
    "font.family": "DejaVu Sans",
    "font.size": 10,
}
FIGURE_SIZE = (6.4, 4.4)  # inches
INK, MUTED, PUBLISHED, UNPUBLISHED = "#1e2a2f", "#5b6b70", "#2d5f56", "#8a3b12"
# Published and unpublished differ by shape AND fill (and colour only on top), so the two stay
# apart in greyscale print and for readers who do not see the colours.
PUBLISHED_MARKER = {"marker": "o", "markersize": 7, "color": PUBLISHED, "markerfacecolor": PUBLISHED}
UNPUBLISHED_MARKER = {"marker": "^", "markersize": 8, "color": UNPUBLISHED, "markerfacecolor": "none"}
PUBLISHED_LABEL = "Published (filled circle)"
UNPUBLISHED_LABEL = "Not published (hollow triangle)"
# The pseudo-confidence funnel is drawn at the usual 95 %.
FUNNEL_Z = float(stats.norm.ppf(0.975))


@dataclass(frozen=True)
class FunnelPoint:
    estimate: float
    standard_error: float
    published: bool


@dataclass(frozen=True)
class Curve:
    label: str
    percentages: Sequence[float]


def _new_axes(*, figure_size: tuple[float, float] = FIGURE_SIZE):
    figure = Figure(figsize=figure_size)
    FigureCanvasAgg(figure)
    axes = figure.add_subplot()
    axes.spines[["top", "right"]].set_visible(False)
    return figure, axes


def _legend_below(axes) -> None:
    # Below the axes, so the legend never hides a marker and the chart keeps its width.
    axes.legend(loc="upper center", bbox_to_anchor=(0.5, -0.16), ncol=2, frameon=False)


def _svg(figure: Figure) -> bytes:
    buffer = io.BytesIO()
    with matplotlib.rc_context(SVG_SETTINGS):
        figure.savefig(buffer, format="svg", metadata={"Date": None}, bbox_inches="tight")
    return buffer.getvalue()


def message_svg(*, text: str) -> bytes:
    """A small chart-sized SVG that says why there is no chart (a direct link still shows words)."""
    with matplotlib.rc_context(SVG_SETTINGS):
        figure, axes = _new_axes(figure_size=(6.4, 1.2))
        axes.set_axis_off()
        axes.text(0.0, 0.5, text, ha="left", va="center", wrap=True, color=INK)
        return _svg(figure)


def funnel_svg(
    *,
    points: Sequence[FunnelPoint],
    axis_label: str,
    centre: float | None,
    published_centre: float | None,
) -> bytes:
    """Effect against standard error, the y axis inverted so the most precise results are on top.

    ``centre`` (the whole record's fixed-effect estimate) draws the vertical line and the 95 %
    pseudo-confidence funnel around it; ``published_centre`` a dotted line for the published-only
    estimate.
    """
    with matplotlib.rc_context(SVG_SETTINGS):
        figure, axes = _new_axes()
        deepest = max(point.standard_error for point in points) * 1.08
        if centre is not None:
            axes.plot(
                [centre - FUNNEL_Z * deepest, centre, centre + FUNNEL_Z * deepest],
                [deepest, 0.0, deepest],
                linestyle="--",
                color=MUTED,
                linewidth=1,
                label="95% pseudo-confidence region",
            )
            axes.axvline(centre, color=INK, linewidth=1.2, label="Whole record: fixed-effect estimate")
        if published_centre is not None:
            axes.axvline(
                published_centre,
                color=PUBLISHED,
                linewidth=1.4,
                linestyle=":",
                label="Published only: fixed-effect estimate",
            )
        for published, style, label in (
            (True, PUBLISHED_MARKER, PUBLISHED_LABEL),
            (False, UNPUBLISHED_MARKER, UNPUBLISHED_LABEL),
        ):
            chosen = [point for point in points if point.published is published]
            axes.plot(
                [point.estimate for point in chosen],
                [point.standard_error for point in chosen],
                linestyle="none",
                label=label,
                **style,
            )
        axes.set_ylim(deepest, 0.0)
        axes.set_xlabel(axis_label)
        axes.set_ylabel("Standard error")
        _legend_below(axes)
        return _svg(figure)


def pcurve_svg(*, bin_labels: Sequence[str], curves: Sequence[Curve], reference_power: Sequence[float] | None) -> bytes:
    """Share of significant p-values per bin, with the no-effect and 33 %-power reference lines."""
    with matplotlib.rc_context(SVG_SETTINGS):
        figure, axes = _new_axes()
        positions = list(range(len(bin_labels)))
        # The first curve is drawn wide and the second thin and dashed on top of it, so both stay
        # visible where they coincide (they do whenever every significant result is published).
        styles = (
            {"marker": "o", "markersize": 8, "linestyle": "-", "color": PUBLISHED, "linewidth": 4},
            {"marker": "s", "linestyle": "--", "color": UNPUBLISHED, "markerfacecolor": "none", "linewidth": 1.5},
        )
        for curve, style in zip(curves, styles, strict=False):
            axes.plot(positions, list(curve.percentages), label=curve.label, **style)
        axes.plot(
            positions,
            [NULL_PERCENT_PER_BIN] * len(positions),
            linestyle=":",
            color=MUTED,
            label=f"No effect: {NULL_PERCENT_PER_BIN:.0f}% per bin",
        )
        if reference_power is not None:
            axes.plot(
                positions,
                list(reference_power),
                linestyle="-.",
                marker="x",
                color=INK,
                linewidth=1,
                label=f"{PCURVE_REFERENCE_POWER:.0%} power",
            )
        axes.set_xticks(positions, list(bin_labels))
        axes.set_ylim(0, 100)
        axes.set_xlabel("p-value of each significant result")
        axes.set_ylabel("Share of significant results (%)")
        _legend_below(axes)
        return _svg(figure)


# --- the line's two charts, from its diagnostics -------------------------------------------------------


def line_funnel_svg(*, diagnostics: LineDiagnostics, results: Sequence[LineResult]) -> bytes:
    problem = funnel_problem(count=len(results))
    if problem:
        return message_svg(text=problem)
    centre, published_centre = diagnostics.all_results.fixed.value, diagnostics.published_only.fixed.value
    return funnel_svg(
        points=[FunnelPoint(result.estimate, result.standard_error, result.published) for result in results],
        axis_label=f"Effect ({MEASURE_LABELS[diagnostics.measure]})",
        centre=centre.estimate if centre is not None else None,
        published_centre=published_centre.estimate if published_centre is not None else None,
    )


def line_pcurve_svg(*, diagnostics: LineDiagnostics) -> bytes:
    everything, published = diagnostics.all_results.pcurve, diagnostics.published_only.pcurve
    if everything.value is None:
        return message_svg(text=everything.problem)
    curves = [
        Curve(
            f"All registered results ({everything.value.k_significant} significant)", everything.value.bin_percentages
        )
    ]
    if published.value is not None:
        curves.append(
            Curve(
                f"Published results only ({published.value.k_significant} significant)", published.value.bin_percentages
            )
        )
    return pcurve_svg(bin_labels=pcurve_bin_labels(), curves=curves, reference_power=diagnostics.pcurve_reference_power)
