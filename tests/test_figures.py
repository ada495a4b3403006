"""The figures: legible layouts, lines that can be told apart, a cost axis that shows the decision.

The arrays here are invented; the checks are of drawing, not of any forecast. Where a rule is common
practice with no single source, the test says so.
"""

from __future__ import annotations

import io
import itertools

import matplotlib.colors as mcolors
import matplotlib.image as mpimg
import numpy as np
import pytest

from simulator.account import cost_figures, figure_style, stress_figures
from simulator.account.cost_figures import focus_range
from simulator.account.figure_style import BASELINE_STYLE, OKABE_ITO, Words

WORDS = Words(event="dry day", action="send the crews out", currency="EUR", reference="always_act",
              labels={"never_act": "Never send the crews out", "always_act": "Always send the crews out"})
CUTOFFS = np.round(np.linspace(0.0, 1.0, 101), 2)


def _image(png: bytes) -> np.ndarray:
    return mpimg.imread(io.BytesIO(png), format="png")[..., :3]


def _share_of_colour(image: np.ndarray, colour: str, tolerance: float = 0.06) -> float:
    rgb = np.array(mcolors.to_rgb(colour))
    return float((np.abs(image - rgb).max(axis=2) < tolerance).mean())


def test_each_baseline_has_its_own_colour_and_dash():
    # Okabe and Ito (2008), "Color Universal Design": the eight colours are told apart by colour-blind
    # readers; a dash of its own per line keeps them apart in grey print (common practice, no source)
    palette = set(OKABE_ITO.values()) | {figure_style._GREY}
    for (a, sa), (b, sb) in itertools.combinations(BASELINE_STYLE.items(), 2):
        assert sa["color"] != sb["color"], (a, b)
        assert sa["linestyle"] != sb["linestyle"], (a, b)
    assert all(style["color"] in palette for style in BASELINE_STYLE.values())
    # the slider's marker on the page is yellow, the recommended cutoff black, the model blue
    taken = {OKABE_ITO["yellow"], OKABE_ITO["black"], OKABE_ITO["blue"]}
    assert not taken & {style["color"] for style in BASELINE_STYLE.values()}


def test_cost_axis_zooms_on_a_decision_squeezed_into_a_corner():
    # common practice, no source: the axis shows where the decision lies, widened on each side
    lo, hi = focus_range(CUTOFFS, [0.08, 0.05, 0.03, 0.20, 0.07])
    assert lo == 0.0 and hi == pytest.approx(0.30)
    assert lo <= 0.03 and hi >= 0.20
    # a decision spread over much of the grid keeps the whole grid
    assert focus_range(CUTOFFS, [0.80, 0.72, 0.70, 0.87, 0.66, 0.89]) == (0.0, 1.0)
    # nothing to focus on: the whole grid
    assert focus_range(CUTOFFS, [float("nan")]) == (0.0, 1.0)


def _cost_chart(recommended: float, narrow: bool = False, **kw) -> figure_style.Chart:
    mean = 500_000 + 400_000 * (CUTOFFS - recommended) ** 2
    baselines = {"never_act": 900_000.0, "always_act": 800_000.0, "perfect": 300_000.0}
    return cost_figures.cost_chart(CUTOFFS, mean, mean - 50_000, mean + 50_000, baselines, recommended, 0.05, [],
                              WORDS, narrow=narrow, **kw)


def test_cost_chart_geometry_gives_the_zoomed_axis():
    zoomed = _cost_chart(0.08, focus=(0.03, 0.20)).geometry
    assert (zoomed["xmin"], zoomed["xmax"]) == pytest.approx((0.0, 0.30))
    full = _cost_chart(0.5, focus=(0.2, 0.8)).geometry
    assert (full["xmin"], full["xmax"]) == (0.0, 1.0)


def test_narrow_layout_is_made_for_a_phone():
    """Shown 350 CSS pixels wide (a 390 px phone less the page's margins), a 9-point label is
    9/72 in x 350 px / (figure width in inches) high: about 10 px in the narrow layout, about 5 px in
    the wide one (9/72 x 350 / 8)."""
    width_in, dpi, legend_columns, _ = figure_style._layout(narrow=True)
    wide, narrow = _image(_cost_chart(0.5).png), _image(_cost_chart(0.5, narrow=True).png)
    assert narrow.shape[1] == round(width_in * dpi)
    assert 9 / 72 * 350 / width_in >= 10
    assert 9 / 72 * 350 / (wide.shape[1] / figure_style._DPI) < 6
    assert legend_columns == 1 and narrow.shape[0] > narrow.shape[1]  # the legend in one column below


def test_figures_are_byte_identical_from_run_to_run():
    for narrow in (False, True):
        assert _cost_chart(0.3, narrow=narrow).png == _cost_chart(0.3, narrow=narrow).png
        savings = np.random.default_rng(3).normal(1000, 800, 400)
        a = cost_figures.savings_chart(savings, "always send the crews out", WORDS, narrow=narrow).png
        b = cost_figures.savings_chart(savings, "always send the crews out", WORDS, narrow=narrow).png
        assert a == b


def test_savings_legend_sits_below_the_axes():
    """No legend is drawn over the bars or the zero line: its patch for saving seasons sits at the
    foot of the figure, below the axis and its label."""
    savings = np.random.default_rng(5).normal(20_000, 15_000, 2_000)
    image = _image(cost_figures.savings_chart(savings, "always send the crews out", WORDS).png)
    blue = (np.abs(image - mcolors.to_rgb(OKABE_ITO["blue"])).max(axis=2) < 0.06).any(axis=1)
    rows = np.flatnonzero(blue)
    foot = rows[rows > 0.9 * image.shape[0]]
    assert foot.size, "no legend patch at the foot of the figure"
    # between the bars and the legend lie the tick labels and the axis label: a band with no blue
    assert not blue[int(0.8 * image.shape[0]):int(0.9 * image.shape[0])].all()


def test_stress_chart_marks_the_reference_rule_in_each_case():
    names = ["As in the history", "A wetter year"]
    args = (names, [500.0, 560.0], [450.0, 500.0], [550.0, 620.0], [500.0, 540.0])
    png = stress_figures.stress_chart(*args, [580.0, 660.0], WORDS).png
    # always_act is the reference here: its green marks each case
    assert _share_of_colour(_image(png), BASELINE_STYLE["always_act"]["color"]) > 1e-4
    moved = stress_figures.stress_chart(*args, [600.0, 680.0], WORDS).png
    assert moved != png
