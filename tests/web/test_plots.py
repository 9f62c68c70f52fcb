"""The SVG plots and their CSV tables.

Outside references: the SVG is parsed with the standard library's XML parser
(:mod:`xml.etree.ElementTree`) and the CSV with :mod:`csv`; values are compared with numpy.
The curves are invented demo shapes (no physical claim is checked here).
"""

from __future__ import annotations

import csv
import io
import xml.etree.ElementTree as ET
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from polarsvc.web import plots

SVG_NS = "{http://www.w3.org/2000/svg}"


def _demo_series() -> list[plots.PlotSeries]:
    # invented demo curves: a lift line that rolls off, a parabolic drag bucket
    alpha = np.linspace(-10.0, 20.0, 31)
    cl = 0.11 * (alpha + 2.0) * np.where(alpha > 12.0, np.exp(-(alpha - 12.0) / 8.0), 1.0)
    cd = 0.008 + 1.0e-4 * alpha**2
    cm = -0.05 - 0.001 * alpha
    return [
        plots.PlotSeries("stored rows", alpha, cl, cd, cm, "points"),
        plots.PlotSeries("extended", alpha, 0.98 * cl, cd, cm, "line"),
        plots.PlotSeries("augmented", alpha, 1.05 * cl, cd, None, "dashed"),
    ]


def svg_texts(body: bytes) -> list[str]:
    """All text of an SVG document, parsed with the standard XML parser."""
    root = ET.fromstring(body)
    assert root.tag == f"{SVG_NS}svg"
    return ["".join(element.itertext()) for element in root.iter(f"{SVG_NS}text")]


@pytest.mark.parametrize(
    ("kind", "xlabel", "ylabel"),
    [
        ("cl", "angle of attack α [deg]", "lift coefficient c_l [-]"),
        ("cd", "angle of attack α [deg]", "drag coefficient c_d [-]"),
        ("cm", "angle of attack α [deg]", "pitching-moment coefficient c_m (c/4, nose-up +) [-]"),
        ("cl-cd", "drag coefficient c_d [-]", "lift coefficient c_l [-]"),
    ],
)
def test_polar_plot_is_valid_svg_with_axis_labels(kind, xlabel, ylabel):
    texts = svg_texts(plots.polar_plots_svg(_demo_series(), kind=kind))
    assert xlabel in texts
    assert ylabel in texts
    assert "stored rows" in texts  # legend


def test_output_is_deterministic_and_carries_no_date():
    first = plots.polar_plots_svg(_demo_series(), kind="cl")
    second = plots.polar_plots_svg(_demo_series(), kind="cl")
    assert first == second
    assert b"<dc:date>" not in first


def test_rendering_from_many_threads_gives_the_same_bytes():
    expected = {kind: plots.polar_plots_svg(_demo_series(), kind=kind) for kind in plots.PLOT_KINDS}
    jobs = list(plots.PLOT_KINDS) * 3
    with ThreadPoolExecutor(max_workers=4) as pool:
        results = list(pool.map(lambda k: (k, plots.polar_plots_svg(_demo_series(), kind=k)), jobs))
    for kind, body in results:
        assert body == expected[kind]


def test_user_text_is_escaped_and_taken_literally():
    alpha = np.array([0.0, 5.0])
    label = '<script>alert("x")</script> $\\alpha$ & co'
    body = plots.polar_plots_svg(
        [plots.PlotSeries(label, alpha, [0.2, 0.7], [0.01, 0.012])], kind="cl", title=label
    )
    root = ET.fromstring(body)
    assert not [e for e in root.iter() if e.tag.endswith("script")]
    assert b"<script>" not in body
    assert label in svg_texts(body)


def test_a_moment_plot_without_moment_data_says_so():
    alpha = np.array([0.0, 5.0])
    body = plots.polar_plots_svg([plots.PlotSeries("no cm", alpha, [0.2, 0.7], [0.01, 0.02])],
                                 kind="cm")
    assert "no data for this plot" in svg_texts(body)


def test_blade_planform_has_three_labelled_axes():
    radius = np.array([2.0, 10.0, 30.0, 48.0])
    body = plots.blade_planform_svg(radius, [3.0, 3.8, 2.0, 1.2], [14.0, 12.0, 3.0, 0.0],
                                    [1.0, 0.4, 0.21, 0.18])
    texts = svg_texts(body)
    for label in ("radius r [m]", "chord c [m]", "twist θ [deg]", "relative thickness t/c [-]"):
        assert label in texts
    root = ET.fromstring(body)
    axes = [g for g in root.iter(f"{SVG_NS}g") if g.get("id", "").startswith("axes_")]
    assert len(axes) == 3


def test_overlay_has_a_colour_bar_with_its_label():
    series = _demo_series()[:2]
    body = plots.overlay_svg(series, [5.0, 40.0], colour_label=plots.AXIS_LABELS["radius"])
    assert "radius r [m]" in svg_texts(body)


def test_bad_arguments_are_refused_with_their_name():
    alpha = np.array([0.0, 5.0])
    with pytest.raises(ValueError, match="kind='lift'"):
        plots.polar_plots_svg([], kind="lift")  # type: ignore[arg-type]
    with pytest.raises(ValueError, match="cd has shape"):
        plots.PlotSeries("x", alpha, [0.1, 0.2], [0.01])
    with pytest.raises(ValueError, match="style='dots'"):
        plots.PlotSeries("x", alpha, [0.1, 0.2], [0.01, 0.02], style="dots")  # type: ignore[arg-type]
    with pytest.raises(ValueError, match="colour_values"):
        plots.overlay_svg(_demo_series(), [1.0], colour_label="r")
    with pytest.raises(ValueError, match="twist has shape"):
        plots.blade_planform_svg([1.0, 2.0], [1.0, 1.0], [1.0], [0.2, 0.2])


def test_series_csv_holds_the_plotted_values_exactly():
    series = _demo_series()
    rows = list(csv.reader(io.StringIO(plots.series_csv(series).decode("utf-8"))))
    assert rows[0] == ["series", "alpha_deg", "cl", "cd", "cm"]
    body = rows[1:]
    assert len(body) == sum(np.asarray(s.alpha_deg).size for s in series)
    first = [r for r in body if r[0] == "stored rows"]
    np.testing.assert_array_equal([float(r[2]) for r in first], series[0].cl)
    assert all(r[4] == "" for r in body if r[0] == "augmented")  # no cm column held


def test_series_csv_keeps_labels_from_being_read_as_formulas():
    alpha = np.array([0.0, 1.0])
    text = plots.series_csv([plots.PlotSeries("=HYPERLINK(1)", alpha, [0, 1], [0.1, 0.1])])
    rows = list(csv.reader(io.StringIO(text.decode("utf-8"))))
    assert rows[1][0] == "'=HYPERLINK(1)"


def test_planform_csv_round_trips():
    radius, chord, twist, tc = [2.0, 48.0], [3.5, 1.2], [14.0, 0.0], [1.0, 0.18]
    rows = list(csv.reader(io.StringIO(plots.planform_csv(radius, chord, twist, tc).decode())))
    assert rows[0] == ["radius_m", "chord_m", "twist_deg", "thickness"]
    np.testing.assert_array_equal(np.array(rows[1:], dtype=float).T, [radius, chord, twist, tc])


@settings(max_examples=25, deadline=None)
@given(
    label=st.text(min_size=1, max_size=30).filter(lambda s: "\x00" not in s),
    values=st.lists(
        st.floats(min_value=-5, max_value=5, allow_nan=False), min_size=2, max_size=8
    ),
)
def test_any_label_and_values_give_parsable_svg(label, values):
    alpha = np.arange(len(values), dtype=float)
    cd = np.full(len(values), 0.01)
    body = plots.polar_plots_svg([plots.PlotSeries(label, alpha, values, cd)], kind="cl")
    ET.fromstring(body)  # must parse
