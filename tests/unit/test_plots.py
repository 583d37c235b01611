"""Pictures of a fit (samplewright.check.plots): real PNGs, varied plot areas, labelled units."""

from __future__ import annotations

import io
import re
import subprocess
import sys
from collections.abc import Callable

import numpy as np
import pytest
from PIL import Image
from scipy import stats

import samplewright as sw
from samplewright.check import plots
from samplewright.check.report_model import JointInput, ReferenceEstimate
from samplewright.check.report_numbers import dkw_half_width

UNITS = "hours"


@pytest.fixture(scope="module")
def data() -> np.ndarray:
    return np.random.default_rng(21).gamma(2.0, 3.0, 120)


@pytest.fixture(scope="module")
def curves(data: np.ndarray) -> list[plots.Curve]:
    return [(m, sw.fit(data, m)) for m in ("gamma", "lognormal", "empirical")]


def _builders(
    data: np.ndarray, curves: list[plots.Curve]
) -> dict[str, Callable[[], plots.PlotResult]]:
    gamma = curves[0][1]
    thr = np.quantile(data, np.linspace(0.5, 0.9, 9))
    xi = np.linspace(0.2, 0.0, 9)
    rng = np.random.default_rng(3)
    joint = JointInput(
        ("hours", "cost"),
        np.c_[data, 30 * data + rng.normal(0, 20, data.size)],
        np.c_[gamma.draw(800, rng=4), rng.normal(200, 60, 800)],
        (UNITS, UNITS),
    )
    f = np.arange(1, 31) / 30
    ref = ReferenceEstimate("Kaplan–Meier", np.sort(data[:30]), f, f - 0.1, np.minimum(f + 0.1, 1))
    return {
        "density": lambda: plots.plot_density(data, curves, units=UNITS, selected="gamma"),
        "cdf": lambda: plots.plot_cdf(data, curves, units=UNITS, selected="gamma"),
        "qq": lambda: plots.plot_qq(data, gamma, units=UNITS, label="gamma"),
        "spread": lambda: plots.plot_quantile_spread(
            curves, probabilities=(0.5, 0.9, 0.99, 0.999), units=UNITS, selected="gamma"
        ),
        "mean_excess": lambda: plots.plot_mean_excess(
            thr, [np.mean(data[data > t] - t) for t in thr], chosen=float(thr[4]), units=UNITS
        ),
        "shape_scan": lambda: plots.plot_shape_scan(
            thr, xi, low=xi - 0.1, high=xi + 0.1, chosen=float(thr[4]), units=UNITS
        ),
        "reference": lambda: plots.plot_reference(ref, curves[:2], units=UNITS),
        "joint": lambda: plots.plot_joint(joint),
        "elicited": lambda: plots.plot_elicited(gamma, [0.1, 0.5, 0.9], [2, 5, 12], units=UNITS),
        "drift": lambda: plots.plot_drift(curves[1][1], gamma, units=UNITS),
    }


NAMES = (
    "density",
    "cdf",
    "qq",
    "spread",
    "mean_excess",
    "shape_scan",
    "reference",
    "joint",
    "elicited",
    "drift",
)


@pytest.mark.parametrize("name", NAMES)
def test_picture_is_a_png_with_varied_plot_areas_and_units(
    name: str, data: np.ndarray, curves: list[plots.Curve]
) -> None:
    """The PNG decodes; inside every plot area pixels vary; a data axis names the units."""
    result = _builders(data, curves)[name]()
    image = Image.open(io.BytesIO(result.png))
    assert image.format == "PNG"
    pixels = np.asarray(image.convert("RGB"), dtype=float)
    for left, top, right, bottom in result.plot_areas:
        assert 0 <= left < right <= image.width and 0 <= top < bottom <= image.height
        area = pixels[top + 2 : bottom - 2, left + 2 : right - 2]
        assert area.size > 0 and area.std() > 5.0
        assert len(np.unique(area.reshape(-1, 3), axis=0)) > 20
    labels = [label for pair in result.axis_labels for label in pair]
    assert any(f"({UNITS})" in label for label in labels), labels
    assert result.alt


def test_pp_plot_is_in_probabilities(data: np.ndarray, curves: list[plots.Curve]) -> None:
    """The P–P picture's axes are probabilities, and its plot area is drawn."""
    result = plots.plot_pp(data, curves[0][1], label="gamma")
    assert result.axis_labels == (("probability under gamma", "empirical probability"),)
    left, top, right, bottom = result.plot_areas[0]
    area = np.asarray(Image.open(io.BytesIO(result.png)).convert("L"), dtype=float)
    assert area[top + 2 : bottom - 2, left + 2 : right - 2].std() > 5.0


def test_cdf_picture_states_the_dkw_half_width(data: np.ndarray, curves: list[plots.Curve]) -> None:
    """The band drawn is DKW's: its half-width for this n appears in the alt text."""
    result = plots.plot_cdf(data, curves, alpha=0.05, units=UNITS)
    # source: Dvoretzky–Kiefer–Wolfowitz inequality with Massart's constant
    assert f"{np.sqrt(np.log(2 / 0.05) / (2 * data.size)):.3f}" in result.alt
    assert dkw_half_width(data.size) == pytest.approx(np.sqrt(np.log(40) / (2 * data.size)))


def test_counts_get_a_pmf_and_integer_measurements_a_density() -> None:
    """Counts with count models get pmf bars; whole-number measurements get a histogram."""
    k = np.random.default_rng(5).poisson(3.0, 80).astype(float)
    pmf = plots.plot_density(k, [("poisson", sw.fit(k, "poisson"))], units="breaks")
    assert "probability mass" in pmf.alt and pmf.axis_labels[0][0] == "count (breaks)"
    minutes = np.round(np.random.default_rng(6).lognormal(3.0, 0.4, 80))
    dens = plots.plot_density(minutes, [("lognormal", sw.fit(minutes, "lognormal"))], units="min")
    assert "histogram" in dens.alt and dens.axis_labels[0] == ("value (min)", "density (1/min)")


def test_plotting_positions_are_mid_steps() -> None:
    """Unweighted positions are (i - 1/2) / n; an integer weight acts like repeated rows."""
    x, p = plots.plotting_positions([3.0, 1.0, 2.0, 4.0])
    # source: Hazen plotting positions (i - 0.5) / n (common practice)
    np.testing.assert_allclose(p, [0.125, 0.375, 0.625, 0.875])
    np.testing.assert_array_equal(x, [1.0, 2.0, 3.0, 4.0])
    _, pw = plots.plotting_positions([1.0, 2.0], [1.0, 3.0])
    np.testing.assert_allclose(pw, [0.125, 0.625])  # rows 1, 2, 2, 2: mid-steps 0.125, 0.625


def test_joint_picture_reports_spearman_correlations() -> None:
    """The rank correlations in the joint picture's text equal scipy's spearmanr."""
    rng = np.random.default_rng(8)
    a = rng.normal(size=(200, 2)) @ np.array([[1.0, 0.6], [0.0, 0.8]])
    b = rng.normal(size=(500, 2))
    result = plots.plot_joint(JointInput(("u", "v"), a, b))
    # source: scipy.stats.spearmanr
    rd, rs = stats.spearmanr(a).statistic, stats.spearmanr(b).statistic
    assert f"{rd:.2f} in the data, {rs:.2f} in the draws" in result.alt


def test_importing_plots_does_not_import_matplotlib() -> None:
    """matplotlib is imported only when a picture is drawn."""
    code = "import sys, samplewright.check.plots; print('matplotlib' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_pictures_are_reproducible(data: np.ndarray, curves: list[plots.Curve]) -> None:
    """The same input draws the same PNG bytes (nothing random, no timestamps)."""
    a = plots.plot_qq(data, curves[0][1], units=UNITS)
    b = plots.plot_qq(data, curves[0][1], units=UNITS)
    assert a.png == b.png
    assert re.search(rb"tIME|Creation Time", a.png) is None


def test_three_points_are_drawn_on_the_curve_with_the_mode() -> None:
    """A PERT from (12, 20, 55): lowest and highest value at 0 and 1, the mode marked where the
    curve crosses it."""
    from samplewright.fitting.expert import from_three_points

    s = from_three_points(12.0, 20.0, 55.0)
    result = plots.plot_elicited(s, [0.0, 1.0], [12.0, 55.0], mode=20.0, units="days")
    # source: scipy.stats.beta with the PERT shapes of Malcolm et al. (1959):
    # alpha = 1 + 4 (mode - low) / (high - low), beta = 1 + 4 (high - mode) / (high - low)
    a, b = 1 + 4 * 8 / 43, 1 + 4 * 35 / 43
    at_mode = stats.beta(a, b).cdf(8 / 43)
    assert f"most likely value 20, where the curve is at {at_mode:.3f}" in result.alt
    assert "P0: +0.000, P100: +0.000" in result.alt
    assert result.axis_labels == (("value (days)", "cumulative probability"),)
