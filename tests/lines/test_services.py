"""Research lines built through the services: lab isolation, and pooled estimates that match
statsmodels' combine_effects and ledger.stats.meta for the same effects computed here."""

from __future__ import annotations

import math

import numpy as np
import pytest
from django.core.exceptions import PermissionDenied
from django.http import Http404
from statsmodels.stats.meta_analysis import combine_effects

from ledger.core.errors import ActionRefused
from ledger.lines import services
from ledger.lines.models import ResearchLine
from ledger.lines.selectors import (
    access_line,
    lab_line_summaries,
    line_analysis,
    line_evidence,
    study_line_summaries,
)
from ledger.stats import effects, meta
from tests.factories import collecting_study, sealed_study
from tests.lines.builders import counts_row, study_with_result, t_row

pytestmark = pytest.mark.django_db

# (t, N, published): heterogeneous enough that the DerSimonian-Laird tau^2 is above 0, so
# statsmodels' untruncated moment estimator and the truncated one here coincide.
T_RESULTS = [
    (4.80, 40, True),
    (2.10, 200, True),
    (0.35, 120, False),
    (-0.80, 90, None),
    (2.60, 64, True),
    (0.10, 200, False),
    (1.10, 70, False),
]
# (events_1, total_1, events_2, total_2, published)
COUNT_RESULTS = [
    (5, 100, 10, 100, True),
    (14, 60, 15, 62, False),
    (3, 45, 12, 44, True),
    (20, 150, 22, 148, None),
    (9, 80, 9, 81, False),
]


def smd_by_hand(t: float, n: int) -> tuple[float, float]:
    """Hedges' g and its variance for a two-group t on N split equally (Borenstein et al. 2009, ch. 4)."""
    first, second = n // 2, n - n // 2
    d = t * math.sqrt(1 / first + 1 / second)
    correction = effects.hedges_j(df=n - 2)
    return correction * d, correction**2 * (1 / first + 1 / second + d**2 / (2 * n))


def log_or_by_hand(a: int, n1: int, c: int, n2: int) -> tuple[float, float]:
    """ln OR and 1/a + 1/b + 1/c + 1/d (Borenstein et al. 2009, ch. 5); no cell is empty here."""
    b, d = n1 - a, n2 - c
    return math.log(a * d / (b * c)), 1 / a + 1 / b + 1 / c + 1 / d


@pytest.fixture
def smd_line(investigator):
    studies = [
        study_with_result(member=investigator, row=t_row(t=t, n=n), published=published, title=f"Hum study {i}")
        for i, (t, n, published) in enumerate(T_RESULTS)
    ]
    return services.line_create(member=investigator, name="Hum and length", measure="smd", studies=studies)


def assert_matches_statsmodels(diagnostics_subset, y, v):
    # statsmodels.stats.meta_analysis.combine_effects: inverse-variance fixed effect and the
    # DerSimonian-Laird ("dl") random-effects model, normal-theory CIs.
    reference = combine_effects(np.array(y), np.array(v), method_re="dl")
    frame = reference.summary_frame()
    assert reference.tau2 > 0
    fixed, random = diagnostics_subset.fixed.value, diagnostics_subset.random.value
    assert fixed.estimate == pytest.approx(reference.mean_effect_fe, rel=1e-10)
    assert fixed.se == pytest.approx(reference.sd_eff_w_fe, rel=1e-10)
    assert random.estimate == pytest.approx(reference.mean_effect_re, rel=1e-10)
    assert random.se == pytest.approx(reference.sd_eff_w_re, rel=1e-10)
    assert (random.ci_low, random.ci_high) == pytest.approx(
        (frame.loc["random effect", "ci_low"], frame.loc["random effect", "ci_upp"]), rel=1e-10
    )
    assert random.tau2 == pytest.approx(reference.tau2, rel=1e-10)
    assert random.q == pytest.approx(reference.q, rel=1e-10)
    assert random.i2 == pytest.approx(100 * reference.i2, rel=1e-10)


def test_an_smd_line_pools_as_statsmodels_does_over_all_and_over_published_results(smd_line):
    analysis = line_analysis(line=smd_line)
    by_hand = [smd_by_hand(t, n) for t, n, _published in T_RESULTS]
    published = [effect for effect, (_t, _n, flag) in zip(by_hand, T_RESULTS, strict=True) if flag]

    assert_matches_statsmodels(analysis.diagnostics.all_results, *zip(*by_hand, strict=True))
    assert_matches_statsmodels(analysis.diagnostics.published_only, *zip(*published, strict=True))
    headline = analysis.diagnostics.headline
    assert headline.verdict == "overstates"
    assert headline.difference == pytest.approx(
        analysis.diagnostics.published_only.random.value.estimate
        - analysis.diagnostics.all_results.random.value.estimate
    )
    assert f"overstates the effect by {abs(headline.difference):.2f}" in headline.sentence


def test_reml_is_an_option_and_matches_ledger_stats_meta(smd_line):
    # statsmodels has no REML estimator; ledger.stats.meta's REML is checked against metafor's
    # printed output in tests/stats/test_meta.py, so this checks that the option reaches it.
    analysis = line_analysis(line=smd_line, tau2_method="REML")
    y, v = zip(*(smd_by_hand(t, n) for t, n, _published in T_RESULTS), strict=True)
    reference = meta.random_effects(y=y, v=v, tau2_method="REML")
    pooled = analysis.diagnostics.all_results.random.value
    assert pooled.method == "REML"
    for name in ("estimate", "se", "ci_low", "ci_high", "tau2", "i2"):
        assert getattr(pooled, name) == pytest.approx(getattr(reference, name), rel=1e-9), name
    assert "REML" in analysis.diagnostics.headline.sentence


def test_a_log_odds_ratio_line_reads_the_sealed_2x2_counts(investigator):
    studies = [
        study_with_result(
            member=investigator, row=counts_row(events_1=a, total_1=n1, events_2=c, total_2=n2), published=flag
        )
        for a, n1, c, n2, flag in COUNT_RESULTS
    ]
    line = services.line_create(member=investigator, name="Reminders and relapse", measure="log_or", studies=studies)
    analysis = line_analysis(line=line)
    by_hand = [log_or_by_hand(a, n1, c, n2) for a, n1, c, n2, _flag in COUNT_RESULTS]
    reference = combine_effects(*(np.array(column) for column in zip(*by_hand, strict=True)), method_re="dl")
    assert analysis.diagnostics.all_results.fixed.value.estimate == pytest.approx(reference.mean_effect_fe, rel=1e-10)
    assert analysis.diagnostics.all_results.random.value.estimate == pytest.approx(reference.mean_effect_re, rel=1e-10)
    assert [item.effect.route.startswith("2x2 counts") for item in analysis.evidence.usable] == [True] * 5


def test_publication_status_is_the_latest_sealed_one(investigator):
    from ledger.results.services import publication_link_add

    study = study_with_result(member=investigator, row=t_row(t=2.5, n=60), published=False)
    line = services.line_create(member=investigator, name="One study", measure="smd", studies=[study])
    assert line_evidence(line=line).studies[0].published is False
    publication_link_add(member=investigator, study=study, status="published", doi="10.5555/forebook.later")
    item = line_evidence(line=line).studies[0]
    assert (item.published, item.doi) == (True, "10.5555/forebook.later")


def test_studies_without_a_usable_result_are_listed_with_the_reason(investigator):
    waiting = collecting_study(member=investigator, title="Still collecting")
    sealed = sealed_study(member=investigator, title="Not started")
    binary = study_with_result(member=investigator, row=counts_row(events_1=4, total_1=50, events_2=9, total_2=50))
    usable = study_with_result(member=investigator, row=t_row(t=1.5, n=80))
    line = services.line_create(
        member=investigator, name="Mixed", measure="smd", studies=[waiting, sealed, binary, usable]
    )
    evidence = line_evidence(line=line)
    reasons = {item.study.code: item.problem for item in evidence.unusable}
    assert set(reasons) == {waiting.code, sealed.code, binary.code}
    assert "Data collection is under way" in reasons[waiting.code]
    assert "data collection has not started" in reasons[sealed.code]
    assert "nothing that converts to Hedges' g" in reasons[binary.code]
    assert [item.study.code for item in evidence.usable] == [usable.code]


# --- lab isolation and permissions ------------------------------------------------------------------


def test_a_study_of_another_lab_cannot_join_a_line(investigator, outsider):
    theirs = sealed_study(member=outsider)
    with pytest.raises(ActionRefused) as refusal:
        services.line_create(member=investigator, name="Borrowed", measure="smd", studies=[theirs])
    assert refusal.value.field == "studies"
    assert theirs.code not in refusal.value.message
    assert not ResearchLine.objects.exists()


def test_a_study_of_another_lab_cannot_be_added_later(investigator, outsider):
    line = services.line_create(member=investigator, name="Ours", measure="smd")
    with pytest.raises(ActionRefused):
        services.line_update(
            member=investigator, line=line, name="Ours", measure="smd", studies=[sealed_study(member=outsider)]
        )
    assert list(line.studies.all()) == []


def test_lines_of_another_lab_are_404(investigator, outsider):
    line = services.line_create(member=investigator, name="Ours", measure="smd")
    assert access_line(member=investigator, code=line.code.lower()) == line
    with pytest.raises(Http404):
        access_line(member=outsider, code=line.code)


def test_a_reader_cannot_create_or_change_lines(reader, investigator):
    with pytest.raises(PermissionDenied):
        services.line_create(member=reader, name="Mine", measure="smd")
    line = services.line_create(member=investigator, name="Theirs", measure="smd")
    with pytest.raises(PermissionDenied):
        services.line_update(member=reader, line=line, name="Renamed", measure="smd", studies=[])
    with pytest.raises(PermissionDenied):
        services.line_delete(member=reader, line=line)


def test_names_are_unique_within_a_lab_whatever_the_case(investigator, outsider):
    services.line_create(member=investigator, name="Hum and length", measure="smd")
    with pytest.raises(ActionRefused) as refusal:
        services.line_create(member=investigator, name="hum AND length", measure="log_or")
    assert refusal.value.field == "name"
    services.line_create(member=outsider, name="Hum and length", measure="smd")


def test_an_unknown_measure_is_refused_with_the_choices(investigator):
    with pytest.raises(ActionRefused) as refusal:
        services.line_create(member=investigator, name="Odd", measure="cohens_q")
    assert refusal.value.field == "measure" and "log_or" in refusal.value.message


def test_a_study_may_be_on_several_lines_and_deleting_a_line_keeps_it(investigator):
    study = study_with_result(member=investigator, row=t_row(t=2.0, n=100))
    first = services.line_create(member=investigator, name="First", measure="smd", studies=[study])
    services.line_create(member=investigator, name="Second", measure="smd", studies=[study])
    assert study.research_lines.count() == 2
    services.line_delete(member=investigator, line=first)
    study.refresh_from_db()
    assert study.research_lines.count() == 1


# --- the summaries the lab report and the record use ------------------------------------------------


def test_lab_line_summaries_give_both_estimates_and_their_difference(
    smd_line, investigator, django_assert_max_num_queries
):
    services.line_create(member=investigator, name="An empty line", measure="fisher_z")
    with django_assert_max_num_queries(6):
        summaries = lab_line_summaries(lab=investigator.lab)
    assert [summary.name for summary in summaries] == ["An empty line", "Hum and length"]
    empty, full = summaries
    assert (empty.verdict, empty.all_results, empty.difference) == ("unavailable", None, None)
    analysis = line_analysis(line=smd_line)
    assert full.all_results == analysis.diagnostics.all_results.random.value
    assert full.published_only == analysis.diagnostics.published_only.random.value
    assert full.difference == pytest.approx(full.published_only.estimate - full.all_results.estimate)
    assert (full.k_studies, full.k_usable, full.k_published) == (7, 7, 3)
    assert full.headline == analysis.diagnostics.headline.sentence


def test_a_study_record_can_list_the_lines_it_is_on(smd_line, investigator, outsider):
    study = smd_line.studies.first()
    services.line_create(member=outsider, name="Elsewhere", measure="smd")
    assert [summary.code for summary in study_line_summaries(study=study)] == [smd_line.code]


def test_the_stored_measures_are_the_ones_the_conversions_know():
    from ledger.lines.conversions import MEASURES
    from ledger.lines.models import EffectMeasure

    assert tuple(EffectMeasure.values) == MEASURES
