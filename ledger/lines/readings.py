"""Plain-language readings of a line's diagnostics, and the text alternatives of its charts.

Pure functions over the dataclasses of :mod:`ledger.lines.diagnostics`: the page shows these
sentences under each figure, the charts carry the alternatives, and a report or a record can
reuse both without a template.
"""

from __future__ import annotations

from collections.abc import Sequence

from ledger.lines.conversions import MEASURE_SYMBOLS
from ledger.lines.diagnostics import LineDiagnostics, LineResult, SubsetDiagnostics, p_below, there_are
from ledger.stats.bias import (
    MIN_SIGNIFICANT_PCURVE,
    MIN_STUDIES_EGGER,
    MIN_STUDIES_EXCESS_SIGNIFICANCE,
    PCURVE_BIN_UPPER_EDGES,
    PCURVE_REFERENCE_POWER,
)
from ledger.stats.meta import MIN_STUDIES_POOLING

# Egger et al. (1997, BMJ 315: 629) read their test at p < .10 because it has little power
# (from memory).
EGGER_ALPHA = 0.10
# Below about 10 studies Egger's test is too weak to read at all (Sterne et al. 2011, BMJ 343:
# d4002; from memory).
EGGER_INFORMATIVE_K = 10
# Ioannidis & Trikalinos (2007, Clin Trials 4: 245) suggest reading the test of excess
# significance at p < .10 for the same reason (from memory).
EXCESS_ALPHA = 0.10
# p-curve reading rules of Simonsohn, Simmons & Nelson (2015, J Exp Psychol Gen 144: 1146), from
# memory: evidential value when the half curve's right-skew p < .05 or both curves' p < .10;
# inadequate evidential value when the full curve's flatness p < .05 or (here, without the
# app's binomial test) both curves' flatness p < .10.
PCURVE_STRONG = 0.05
PCURVE_WEAK = 0.10
# Without an effect p is uniform, so every p-curve bin holds the same share of significant p-values.
NULL_PERCENT_PER_BIN = 100.0 / len(PCURVE_BIN_UPPER_EDGES)

CAUTION = (
    f"These diagnostics have little power with few results: pooling needs at least {MIN_STUDIES_POOLING} "
    f"usable results, the test of excess significance {MIN_STUDIES_EXCESS_SIGNIFICANCE}, Egger's test "
    f"{MIN_STUDIES_EGGER} and the p-curve {MIN_SIGNIFICANT_PCURVE} significant results, and Egger's test needs "
    f"about {EGGER_INFORMATIVE_K} results to be informative (Sterne et al. 2011; from memory). An alarming "
    "result can have innocent causes (small studies that really differ, heterogeneity between studies, chance) "
    "and is not proof of misconduct; a reassuring one is not proof that nothing is missing."
)


def format_p(p: float) -> str:
    return "p < .001" if p < 0.001 else f"p = {p:.3f}".replace("0.", ".", 1)


def read_at(alpha: float) -> str:
    return f"read at {p_below(alpha)}"


def egger_reading(*, subset: SubsetDiagnostics, measure: str) -> str:
    if subset.egger.value is None:
        return subset.egger.problem
    egger = subset.egger.value
    numbers = (
        f"intercept {egger.intercept:.2f} (SE {egger.intercept_se:.2f}), t({egger.df}) = {egger.t:.2f}, "
        f"{format_p(egger.p)}"
    )
    if egger.p < EGGER_ALPHA:
        leaning = "larger" if egger.intercept > 0 else "smaller"
        text = (
            f"The funnel is asymmetric ({numbers}, {read_at(EGGER_ALPHA)}): the less precise results report "
            f"{leaning} values of {MEASURE_SYMBOLS[measure]} than the more precise ones, as a file drawer of small "
            "null results would leave it."
        )
    else:
        text = f"No clear funnel asymmetry ({numbers}, {read_at(EGGER_ALPHA)})."
    if egger.k < EGGER_INFORMATIVE_K:
        text += (
            f" With {egger.k} results the test is rarely informative: it needs about {EGGER_INFORMATIVE_K} "
            "(Sterne et al. 2011; from memory)."
        )
    return text


def excess_reading(*, subset: SubsetDiagnostics, measure: str) -> str:
    if subset.excess.value is None:
        return subset.excess.problem
    excess = subset.excess.value
    numbers = (
        f"{excess.observed} significant of {excess.k} observed, {excess.expected:.1f} expected from each study's "
        f"power to detect {MEASURE_SYMBOLS[measure]} = {excess.theta:.2f} (their fixed-effect estimate); "
        f"χ² = {excess.chi2:.2f}, one-sided {format_p(excess.chi2_p)}"
    )
    if excess.chi2_p < EXCESS_ALPHA:
        return (
            f"More significant results than the studies' power supports ({numbers}, {read_at(EXCESS_ALPHA)}): "
            "nonsignificant results may be missing, or analyses may have been steered towards significance."
        )
    return f"No excess of significant results ({numbers}, {read_at(EXCESS_ALPHA)})."


def pcurve_reading(*, subset: SubsetDiagnostics) -> str:
    if subset.pcurve.value is None:
        return subset.pcurve.problem
    curve = subset.pcurve.value
    skew_full, skew_half = curve.right_skew_full.p, curve.right_skew_half.p if curve.right_skew_half else None
    flat_full, flat_half = curve.flatness_full.p, curve.flatness_half.p if curve.flatness_half else None
    numbers = f"Right skew: full curve {format_p(skew_full)}"
    numbers += f", half curve {format_p(skew_half)}" if skew_half is not None else ", no half curve (no p < .025)"
    numbers += f"; flatter than 33% power: full curve {format_p(flat_full)}"
    numbers += f", half curve {format_p(flat_half)}" if flat_half is not None else ""
    if (skew_half is not None and skew_half < PCURVE_STRONG) or (
        skew_half is not None and skew_half < PCURVE_WEAK and skew_full < PCURVE_WEAK
    ):
        verdict = "The significant results are right-skewed, as true effects produce: they contain evidential value"
    elif flat_full < PCURVE_STRONG or (flat_half is not None and flat_half < PCURVE_WEAK and flat_full < PCURVE_WEAK):
        verdict = (
            "The significant results are flatter than studies with 33% power would give: their evidential value is "
            "inadequate, as when significance was selected or chased rather than found"
        )
    else:
        verdict = "The curve is inconclusive: neither clearly right-skewed nor clearly flat"
    counted = f"It holds {curve.k_significant} significant results ({curve.k_excluded} nonsignificant left out)"
    return f"{verdict}. {counted}. {numbers} (read by the rules of Simonsohn, Simmons & Nelson 2015, from memory)."


def funnel_problem(*, count: int) -> str:
    """Why a funnel of ``count`` results is not drawn, or "" when it is: without a pooled centre
    there is no funnel to hold the points against."""
    if count >= MIN_STUDIES_POOLING:
        return ""
    return f"No funnel plot: it needs at least {MIN_STUDIES_POOLING} usable results; {there_are(count)}."


def funnel_reading(*, diagnostics: LineDiagnostics, results: Sequence[LineResult]) -> str:
    centre = diagnostics.all_results.fixed.value
    if centre is None:
        return funnel_problem(count=len(results)) or diagnostics.all_results.fixed.problem
    published = [result for result in results if result.published]
    above = sum(1 for result in published if result.estimate > centre.estimate)
    unpublished = len(results) - len(published)
    return (
        f"Each marker is one registered result; the most precise sit at the top. Of the {len(published)} published "
        f"results, {above} lie above the whole record's fixed-effect estimate ({centre.estimate:.2f}) and "
        f"{len(published) - above} below it; {unpublished} results are unpublished. When the published markers "
        "crowd one side low in the funnel and the unpublished ones fill the other, the file drawer is what tells "
        "the two records apart."
    )


def funnel_alt(*, diagnostics: LineDiagnostics, results: Sequence[LineResult]) -> str:
    symbol = MEASURE_SYMBOLS[diagnostics.measure]
    published = sum(1 for result in results if result.published)
    text = (
        f"Funnel plot of {len(results)} results: {symbol} on the horizontal axis, standard error on the vertical "
        f"axis with the most precise results at the top. {published} published results are filled circles, "
        f"{len(results) - published} unpublished results hollow triangles."
    )
    centre, published_centre = diagnostics.all_results.fixed.value, diagnostics.published_only.fixed.value
    if centre is not None:
        text += (
            f" A solid vertical line marks the all-results fixed-effect estimate ({centre.estimate:.2f}), with dashed "
            "lines bounding the 95% pseudo-confidence region around it."
        )
    if published_centre is not None:
        text += f" A dotted vertical line marks the published-only estimate ({published_centre.estimate:.2f})."
    return text


def pcurve_alt(*, diagnostics: LineDiagnostics) -> str:
    curve = diagnostics.all_results.pcurve.value
    if curve is None:
        return diagnostics.all_results.pcurve.problem
    bins = pcurve_bin_labels()
    observed = ", ".join(f"{name}: {share:.0f}%" for name, share in zip(bins, curve.bin_percentages, strict=True))
    text = f"p-curve of {curve.k_significant} significant results, share of p-values per bin ({observed})."
    published = diagnostics.published_only.pcurve.value
    if published is not None:
        shares = ", ".join(f"{share:.0f}%" for share in published.bin_percentages)
        text += f" Published results only: {shares}."
    reference = diagnostics.pcurve_reference_power
    if reference is not None:
        text += f" Reference lines: no effect, {NULL_PERCENT_PER_BIN:.0f}% in every bin; "
        text += f"{PCURVE_REFERENCE_POWER:.0%} power, "
        text += ", ".join(f"{share:.0f}%" for share in reference) + "."
    return text


def pcurve_bin_labels() -> list[str]:
    """The p-curve's bins as the chart's axis and the text alternative name them: ".00 to .01" ..."""
    lower = (0.0, *PCURVE_BIN_UPPER_EDGES[:-1])
    return [
        f"{low:.2f} to {high:.2f}".replace("0.", ".") for low, high in zip(lower, PCURVE_BIN_UPPER_EDGES, strict=True)
    ]
