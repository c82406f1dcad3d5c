"""The line's charts are valid, deterministic SVG, and the funnel plot tells published from
unpublished results by marker shape and fill, not by colour alone."""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

import pytest

from ledger.lines.charts import PUBLISHED_LABEL, UNPUBLISHED_LABEL, line_funnel_svg, line_pcurve_svg, message_svg
from ledger.lines.diagnostics import line_diagnostics
from tests.lines.test_diagnostics import results

SVG = "{http://www.w3.org/2000/svg}"
XLINK_HREF = "{http://www.w3.org/1999/xlink}href"


def parsed(document: bytes) -> ET.Element:
    root = ET.fromstring(document)
    assert root.tag == f"{SVG}svg"
    return root


def texts(root: ET.Element) -> list[str]:
    return [element.text or "" for element in root.iter(f"{SVG}text")]


def marker_uses(root: ET.Element) -> dict[str, list[str]]:
    """For each marker shape defined in the SVG (its path data), the styles of the points drawn with it."""
    shapes = {f"#{path.get('id')}": path.get("d") for path in root.iter(f"{SVG}path") if path.get("id")}
    uses: dict[str, list[str]] = {}
    for use in root.iter(f"{SVG}use"):
        shape = shapes.get(use.get(XLINK_HREF))
        if shape is not None:
            uses.setdefault(shape, []).append(use.get("style", ""))
    return uses


def is_circle(path_data: str) -> bool:
    return " C " in f" {path_data} "  # matplotlib draws circles with cubic Bezier curves


def is_triangle(path_data: str) -> bool:
    return path_data.count("L") == 2 and "C" not in path_data and path_data.rstrip().endswith("z")


@pytest.fixture
def diagnostics():
    return line_diagnostics(results=results(), measure="smd")


def test_the_funnel_plot_is_valid_deterministic_svg(diagnostics):
    first = line_funnel_svg(diagnostics=diagnostics, results=results())
    second = line_funnel_svg(diagnostics=diagnostics, results=results())
    assert first == second
    parsed(first)
    assert b"<dc:date>" not in first  # no time stamp in the metadata


def test_the_funnel_plot_marks_published_and_unpublished_with_two_shapes_and_fills(diagnostics):
    root = parsed(line_funnel_svg(diagnostics=diagnostics, results=results()))
    uses = marker_uses(root)
    circles = [styles for shape, styles in uses.items() if is_circle(shape)]
    triangles = [styles for shape, styles in uses.items() if is_triangle(shape)]
    # Five published results as circles (plus one in the legend), seven unpublished as triangles (plus one).
    assert [len(styles) for styles in circles] == [6]
    assert [len(styles) for styles in triangles] == [8]
    assert not any("fill-opacity: 0" in style for style in circles[0])
    assert all("fill-opacity: 0" in style for style in triangles[0])
    assert PUBLISHED_LABEL in texts(root) and UNPUBLISHED_LABEL in texts(root)
    assert "Standard error" in texts(root)


def test_the_funnel_axis_is_inverted_so_precise_results_are_on_top(diagnostics):
    root = parsed(line_funnel_svg(diagnostics=diagnostics, results=results()))
    # The y tick labels read downwards from 0.00 (top of the plot) to larger standard errors.
    ticks = [
        (float(element.get("y")), float(element.text))
        for element in root.iter(f"{SVG}text")
        if element.text and re.fullmatch(r"0\.\d\d", element.text) and "end" in element.get("style", "")
    ]
    ordered = [value for _y, value in sorted(ticks)]
    assert ordered[0] == 0.0 and ordered == sorted(ordered)


def test_the_p_curve_is_valid_deterministic_svg_with_both_reference_lines(diagnostics):
    first = line_pcurve_svg(diagnostics=diagnostics)
    assert first == line_pcurve_svg(diagnostics=diagnostics)
    labels = texts(parsed(first))
    assert "No effect: 20% per bin" in labels
    assert "33% power" in labels
    assert any(label.startswith("All registered results (4 significant)") for label in labels)
    assert ".00 to .01" in labels


def test_too_few_results_give_a_chart_that_says_so():
    few = line_diagnostics(results=results()[:1], measure="smd")
    funnel = texts(parsed(line_funnel_svg(diagnostics=few, results=results()[:1])))
    pcurve = texts(parsed(line_pcurve_svg(diagnostics=few)))
    assert any("needs at least 2 usable results; there is 1" in text for text in funnel)
    assert any("needs at least 3 results significant" in text for text in pcurve)
    assert message_svg(text="x") == message_svg(text="x")
