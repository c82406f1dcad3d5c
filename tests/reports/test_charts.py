"""The report's charts: deterministic SVG, where colour is never the only cue.

External check: every chart parses as XML (xml.etree.ElementTree) in the SVG namespace.
"""

import xml.etree.ElementTree as ElementTree

import pytest

from ledger.reports.charts import CHARTS, HATCHES, SHORT_LABELS, outcome_chart
from ledger.reports.selectors import Outcome, lab_report
from tests.reports.builders import today

pytestmark = pytest.mark.django_db
SVG = "{http://www.w3.org/2000/svg}"


def test_each_chart_is_the_same_bytes_every_time_and_carries_no_date(seeded_lab):
    report = lab_report(lab=seeded_lab.a.lab, today=today())
    for name, (_alt, draw) in CHARTS.items():
        first, second = draw(report=report), draw(report=report)
        assert first == second, name
        root = ElementTree.fromstring(first)
        assert root.tag == f"{SVG}svg"
        assert b"<dc:date>" not in first


def test_the_outcome_chart_labels_and_hatches_every_bar(seeded_lab):
    report = lab_report(lab=seeded_lab.a.lab, today=today())
    svg = outcome_chart(report=report)
    texts = [element.text for element in ElementTree.fromstring(svg).iter(f"{SVG}text")]
    for outcome in Outcome:
        assert SHORT_LABELS[outcome] in texts
    # The number on each bar, read off the seeded design (3 4 1 1 2 2 1).
    for number in ("3", "4", "1", "2"):
        assert number in texts
    patterns = list(ElementTree.fromstring(svg).iter(f"{SVG}pattern"))
    assert len(patterns) == len([hatch for hatch in HATCHES.values() if hatch])
    assert len(set(HATCHES.values())) == len(HATCHES)  # no two outcomes share a hatching


def test_a_lab_without_results_gets_a_chart_that_says_so(investigator):
    report = lab_report(lab=investigator.lab, today=today())
    svg = CHARTS["results"][1](report=report)
    assert b"No results sealed yet" in svg
