"""The HTML check report (samplewright.check.report_html) and the numbers it shows."""

from __future__ import annotations

import base64
import io
import math
import re
from collections.abc import Callable
from html.parser import HTMLParser

import numpy as np
import pytest
from PIL import Image
from scipy import stats

import samplewright as sw
from samplewright.check.report_html import CAUTION_TEXT, SECTION_IDS, render_report_html
from samplewright.check.report_model import (
    Candidate,
    CheckReportInput,
    ConfidenceInterval,
    DriftInput,
    ElicitedPoints,
    FitCheck,
    JointInput,
    ObservedData,
    ReferenceEstimate,
    ReportWarning,
    TailDiagnostics,
)
from samplewright.check.report_numbers import (
    derive_numbers,
    dkw_half_width,
    ks_between,
    sampler_tail_mean,
    step_tail_mean,
)
from samplewright.core.errors import InputDataError

PROBS = (0.5, 0.9, 0.99, 0.999)
VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source", "wbr"}
WARNINGS = (
    ReportWarning("ties", "values recorded to 0.1 h: 12 tied values"),
    ReportWarning("small_n", "only 140 repairs <for> a 0.999 quantile"),
    ReportWarning("support_beyond_data", "gamma & lognormal draw above 31.2 h"),
)


class Page(HTMLParser):
    """Collects the tag structure, images, section ids and table cells of a page."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.errors: list[str] = []
        self.tags: list[tuple[str, dict[str, str | None]]] = []
        self.sections: list[str] = []
        self.cells: list[tuple[dict[str, str | None], str]] = []
        self._cell: dict[str, str | None] | None = None
        self._text: list[str] = []
        self.doctype = ""

    def handle_decl(self, decl: str) -> None:
        self.doctype = decl

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        a = dict(attrs)
        self.tags.append((tag, a))
        if tag == "section":
            self.sections.append(a.get("id") or "")
        if tag == "td":
            self._cell, self._text = a, []
        if tag not in VOID:
            self.stack.append(tag)

    def handle_endtag(self, tag: str) -> None:
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"</{tag}> closes {self.stack[-1:]}")
            return
        self.stack.pop()
        if tag == "td" and self._cell is not None:
            self.cells.append((self._cell, "".join(self._text)))
            self._cell = None

    def handle_data(self, data: str) -> None:
        if self._cell is not None:
            self._text.append(data)


def parse(page: str) -> Page:
    p = Page()
    p.feed(page)
    p.close()
    return p


def section(page: str, sid: str) -> str:
    """The raw HTML of one section."""
    start = page.index(f'<section id="{sid}">')
    return page[start : page.index("</section>", start)]


@pytest.fixture(scope="module")
def repairs() -> np.ndarray:
    return np.round(np.random.default_rng(11).gamma(2.2, 3.1, 140), 1)


@pytest.fixture(scope="module")
def full_report(repairs: np.ndarray) -> CheckReportInput:
    x = repairs
    rng = np.random.default_rng(5)
    cands = []
    for m in ("gamma", "lognormal", "weibull", "empirical"):
        checks = (
            ()
            if m == "empirical"
            else (
                FitCheck("ks", 0.051, 0.34, 999),
                FitCheck("ad", 0.4, 0.2, 999, 2 if m == "weibull" else 0),
            )
        )
        cands.append(Candidate(m, sw.fit(x, m), fit_checks=checks))
    thr = np.quantile(x, np.linspace(0.5, 0.95, 12))
    xi = 0.1 - 0.01 * np.arange(12)
    return CheckReportInput(
        dataset="pump_repair_hours",
        candidates=tuple(cands),
        selected="gamma",
        reason="lowest AIC among the continuous candidates",
        units="hours",
        data=ObservedData(x),
        warnings=WARNINGS,
        tail=TailDiagnostics(
            thr, [np.mean(x[x > t] - t) for t in thr], thr, xi, xi - 0.2, xi + 0.2, float(thr[6])
        ),
        elicited=ElicitedPoints([0.1, 0.5, 0.9], [2.0, 6.0, 13.0], "workshop"),
        drift=DriftInput(sw.fit(x[:90] * 1.1, "gamma"), "gamma of last quarter"),
        joint=JointInput(
            ("hours", "cost"),
            np.c_[x, 40 * x + rng.normal(0, 50, x.size)],
            np.c_[cands[0].sampler.draw(1000, rng=1), rng.normal(300, 80, 1000)],
            ("h", "EUR"),
        ),
        provenance={"source": "data/repairs.csv", "column": "hours"},
    )


@pytest.fixture(scope="module")
def full_page(full_report: CheckReportInput) -> str:
    return render_report_html(full_report)


def row_values(page: str, sid: str, label: str) -> list[float]:
    """The full-precision values (data-value) of the table row whose first cell is ``label``."""
    body = section(page, sid)
    m = re.search(rf"<tr[^>]*><td>{re.escape(label)}</td>(.*?)</tr>", body)
    assert m, f"no row {label!r} in section {sid}"
    return [float(v) for v in re.findall(r'data-value="([^"]+)"', m.group(1))]


def test_page_is_well_formed_html(full_page: str) -> None:
    """Every element is closed in order and the page is an HTML5 document."""
    p = parse(full_page)
    assert p.doctype.lower() == "doctype html"
    assert p.errors == [] and p.stack == []
    assert ("html", {"lang": "en"}) in p.tags


def test_every_image_is_an_embedded_png_with_alt_text(full_page: str) -> None:
    """Each <img> is a data: PNG that decodes, is not tiny, has varied pixels and alt text."""
    imgs = [a for t, a in parse(full_page).tags if t == "img"]
    assert len(imgs) >= 10
    for a in imgs:
        src = a["src"] or ""
        assert src.startswith("data:image/png;base64,")
        png = base64.b64decode(src.split(",", 1)[1], validate=True)
        assert png[:8] == b"\x89PNG\r\n\x1a\n" and len(png) > 10_000
        pixels = np.asarray(Image.open(io.BytesIO(png)).convert("L"), dtype=float)
        assert pixels.shape == (int(a["height"] or 0), int(a["width"] or 0))
        assert pixels.std() > 5.0
        assert len(a["alt"] or "") > 20


def test_page_has_no_script_and_no_network_reference(full_page: str) -> None:
    """No JavaScript, no external stylesheet or font, no http(s) address anywhere."""
    tags = {t for t, _ in parse(full_page).tags}
    assert not tags & {"script", "link", "iframe", "object", "embed"}
    assert not re.search(r"https?://", full_page)
    assert "url(" not in full_page and "@import" not in full_page
    assert all(re.match(r"on\w+", k) is None for _, a in parse(full_page).tags for k in a)


def test_sections_come_in_the_decision_order(full_page: str) -> None:
    """What is drawn, warnings, how much the choice matters, pictures, details: in that order."""
    assert tuple(parse(full_page).sections) == SECTION_IDS
    headings = re.findall(r'<section id="\w+"><h2>([^<]+)</h2>', full_page)
    assert headings[0] == "What the simulation will draw"
    assert headings[1].startswith("Warnings")
    assert headings[2] == "How much the choice matters"


def test_every_warning_given_is_shown_escaped(full_page: str) -> None:
    """Each warning's message appears, HTML-escaped, in the warnings section."""
    body = section(full_page, "warnings")
    for w in WARNINGS:
        assert w.message.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;") in body
    assert "only 140 repairs <for>" not in full_page
    # the weibull candidate's 2 failed refits are found by the report itself
    assert 'data-kind="failed_refits"' in body and "(found by the report)" in body
    assert "Warnings (4)" in body


def test_selected_sampler_and_reason_lead_the_page(full_page: str) -> None:
    """The first section names the selected candidate, the reason and the caution."""
    body = section(full_page, "draw")
    assert "Draws come from <strong>gamma</strong>" in body
    assert "lowest AIC among the continuous candidates" in body
    assert CAUTION_TEXT.replace("'", "&#x27;") in body
    assert "safety or money" in CAUTION_TEXT and "licensed" in CAUTION_TEXT


def test_no_leaderboard_of_criteria_in_the_lead_sections(full_page: str) -> None:
    """Information criteria and p-values stay out of the sections that lead the page."""
    lead = section(full_page, "draw") + section(full_page, "spread")
    lead = re.sub(r'src="data:[^"]*"', "", lead)  # base64 text can spell anything
    for word in ("AIC", "BIC", "p-value", "rank"):
        assert word not in lead.replace("lowest AIC among", "")
    assert "p-value" in section(full_page, "details")


def test_numbers_are_rounded_to_four_significant_digits(full_page: str) -> None:
    """Every numeric cell shows at most four significant digits (full precision stays in data-)."""
    numeric = [text for attrs, text in parse(full_page).cells if attrs.get("class") == "num"]
    assert len(numeric) > 40
    for text in numeric:
        for token in re.findall(r"-?\d+(?:\.\d+)?(?:e[+-]\d+)?", text.split("%:")[-1]):
            mantissa = token.split("e")[0].lstrip("-").replace(".", "").lstrip("0")
            assert len(mantissa) <= 4, f"{token!r} in {text!r}"


def test_key_quantiles_equal_scipy_ppf_for_a_parametric_candidate(
    full_page: str, repairs: np.ndarray
) -> None:
    """The lognormal row's quantiles equal scipy's lognorm.ppf at the closed-form MLE."""
    logs = np.log(repairs)
    # source: scipy.stats.lognorm.ppf; lognormal MLE with loc 0 is the mean and the (1/n)
    # standard deviation of log x (closed form, common practice)
    expected = stats.lognorm(s=logs.std(), scale=np.exp(logs.mean())).ppf(PROBS)
    shown = row_values(full_page, "spread", "lognormal")
    np.testing.assert_allclose(shown[:4], expected, rtol=1e-9)
    for v in expected:
        assert f">{v:.4g}<" in section(full_page, "spread")


def test_empirical_row_and_data_row_use_the_generalised_inverse(
    full_page: str, repairs: np.ndarray
) -> None:
    """Empirical sampler and data rows agree, both Q(u) = inf{x : F(x) >= u}."""
    x = np.sort(repairs)
    # source: Hyndman & Fan (1996, The American Statistician 50(4)) definition 1:
    # Q(p) = x_(ceil(n p)); numpy.quantile(method="inverted_cdf") implements it
    by_definition = [x[math.ceil(x.size * p) - 1] for p in PROBS]
    np.testing.assert_array_equal(np.quantile(x, PROBS, method="inverted_cdf"), by_definition)
    data_row = row_values(full_page, "spread", "data")
    emp_row = row_values(full_page, "spread", "empirical")
    np.testing.assert_array_equal(data_row[:4], by_definition)
    np.testing.assert_array_equal(emp_row[:4], by_definition)
    assert emp_row[4] == pytest.approx(data_row[4], rel=1e-4)  # tail means: numeric vs exact


def test_weighted_data_row_matches_numpy_weighted_inverted_cdf() -> None:
    """With weights the data row is numpy's weighted inverted-CDF quantile."""
    rng = np.random.default_rng(2)
    x, w = rng.lognormal(size=60), rng.uniform(0.2, 3.0, 60)
    report = CheckReportInput(
        "w",
        (Candidate("empirical", sw.fit(x, "empirical", weights=w)),),
        data=ObservedData(x, weights=w),
    )
    row = derive_numbers(report).data_row
    assert row is not None
    # source: numpy.quantile(weights=..., method="inverted_cdf")
    expected = np.quantile(x, PROBS, method="inverted_cdf", weights=w)
    np.testing.assert_array_equal([row.quantiles[p] for p in PROBS], expected)
    np.testing.assert_array_equal(
        list(derive_numbers(report).candidates[0].quantiles.values()), expected
    )


@pytest.mark.parametrize("level", [0.9, 0.99, 0.999])
def test_tail_mean_of_a_lognormal_matches_scipy_expect(level: float) -> None:
    """Mean beyond the level's quantile equals scipy's conditional expectation."""
    s = sw.fit(np.random.default_rng(3).lognormal(0.5, 1.1, 300), "lognormal")
    ref = stats.lognorm(s=s.params["sigma"], scale=np.exp(s.params["mu"]))
    # source: scipy.stats rv_continuous.expect(conditional=True) = E[X | X > q]
    expected = ref.expect(lambda v: v, lb=ref.ppf(level), conditional=True)
    assert sampler_tail_mean(s, level) == pytest.approx(expected, rel=1e-6)


def test_tail_mean_of_counts_matches_a_direct_sum() -> None:
    """For a Poisson sampler the tail mean matches (1/(1-p)) sum over the quantile function."""
    s = sw.fit(np.random.default_rng(4).poisson(3.0, 200).astype(float), "poisson")
    lam = s.mean
    ref = stats.poisson(lam)
    q = ref.ppf(0.99)
    k = np.arange(q + 1, q + 200)
    # source: scipy.stats.poisson pmf/cdf; ES_p = (E[X; X > q] + q (F(q) - p)) / (1 - p)
    # (Acerbi & Tasche 2002, expected shortfall for distributions with atoms)
    expected = (np.sum(k * ref.pmf(k)) + q * (ref.cdf(q) - 0.99)) / 0.01
    assert sampler_tail_mean(s, 0.99) == pytest.approx(expected, rel=1e-4)


def test_tail_mean_of_data_is_the_mean_of_the_top_values() -> None:
    """With n p an integer, the data's tail mean is the mean of the n (1 - p) largest values."""
    x = np.random.default_rng(6).normal(size=1000)
    # common practice, no source: the definition with 10 whole atoms above the 0.99 level
    assert step_tail_mean(x, 0.99) == pytest.approx(np.sort(x)[-10:].mean(), rel=1e-12)


def test_tail_mean_of_an_infinite_mean_sampler_is_infinite() -> None:
    """A sampler whose mean is infinite has an infinite tail mean, shown as ∞."""

    class Pareto:
        method, params = "pareto", {"b": 0.8}
        mean, var, support = math.inf, math.inf, (1.0, math.inf)

        def cdf(self, x: object) -> np.ndarray:
            return np.asarray(stats.pareto(0.8).cdf(x))

        def quantile(self, u: object) -> np.ndarray:
            return np.asarray(stats.pareto(0.8).ppf(u))

    assert sampler_tail_mean(Pareto(), 0.99) == math.inf
    page = render_report_html(CheckReportInput("heavy", (Candidate("pareto", Pareto()),), "pareto"))
    assert 'data-value="inf">∞' in page


def test_dkw_half_width_matches_the_kolmogorov_limit_distribution() -> None:
    """sqrt(log(2/α)/(2n)) · sqrt(n) equals the Kolmogorov distribution's upper-α point."""
    for alpha in (0.05, 0.01):
        # source: Dvoretzky–Kiefer–Wolfowitz inequality with Massart's (1990) constant,
        # P(sup|F_n - F| > ε) <= 2 exp(-2 n ε²); scipy.stats.kstwobign (Kolmogorov's limit
        # law, tail 2 Σ (-1)^(k-1) exp(-2 k² t²)) agrees to its first term
        assert dkw_half_width(100, alpha) == pytest.approx(
            math.sqrt(math.log(2 / alpha) / 200), rel=1e-15
        )
        assert dkw_half_width(100, alpha) * 10 == pytest.approx(
            stats.kstwobign.isf(alpha), rel=1e-5
        )


def test_dkw_band_covers_the_true_cdf_at_least_at_its_level() -> None:
    """In 2,000 uniform samples of 40 the band holds the true CDF at least 95% of the time."""
    u = np.sort(np.random.default_rng(7).random((2000, 40)), axis=1)
    i = np.arange(1, 41)
    d = np.maximum(np.max(i / 40 - u, axis=1), np.max(u - (i - 1) / 40, axis=1))
    # source: DKW–Massart guarantees coverage >= 1 - alpha; 3 binomial s.e. of slack
    assert np.mean(d <= dkw_half_width(40, 0.05)) >= 0.95 - 3 * math.sqrt(0.05 * 0.95 / 2000)


def test_band_caption_states_the_half_width(full_page: str, repairs: np.ndarray) -> None:
    """The CDF picture's caption gives the band's half-width for this n."""
    assert f"±{dkw_half_width(repairs.size, 0.05):.3f}" in section(full_page, "pictures")


def test_drift_gives_the_ks_distance_of_two_shifted_normals() -> None:
    """Two normals with equal sd, means d apart, are 2 Φ(d / 2σ) − 1 apart and get flagged."""
    x = np.random.default_rng(8).normal(10.0, 2.0, 200)
    old, new = sw.fit(x, "normal"), sw.fit(x + 1.5, "normal")
    # source: closed form (common practice): the largest gap sits midway between the means
    expected = 2 * stats.norm.cdf(1.5 / (2 * new.sd)) - 1
    assert ks_between(old, new) == pytest.approx(expected, abs=1e-4)
    report = CheckReportInput(
        "shift",
        (Candidate("normal", new),),
        "normal",
        drift=DriftInput(old, "last year", threshold=0.1),
    )
    page = render_report_html(report)
    assert 'class="flag">flagged' in section(page, "draw")
    assert 'data-kind="drift"' in section(page, "warnings")
    shifts = row_values(page, "draw", "50% quantile")
    assert shifts[2] == pytest.approx(1.5, rel=1e-9)


def test_censored_data_use_the_kaplan_meier_reference() -> None:
    """Censored data: no ECDF band; the data row is the Kaplan–Meier estimate from lifelines."""
    lifelines = pytest.importorskip("lifelines")
    rng = np.random.default_rng(9)
    t, c = rng.weibull(1.5, 120) * 10, rng.uniform(2, 25, 120)
    x, cens = np.minimum(t, c), t > c
    kmf = lifelines.KaplanMeierFitter().fit(x, event_observed=~cens)
    ci = kmf.confidence_interval_.to_numpy()
    ref = ReferenceEstimate(
        "Kaplan–Meier",
        kmf.timeline,
        1 - kmf.survival_function_.to_numpy()[:, 0],
        1 - ci[:, 1],
        1 - ci[:, 0],
    )
    cands = (
        Candidate("weibull", sw.fit(x, "weibull", censored=cens)),
        Candidate("kaplan_meier", sw.fit(x, "kaplan_meier", censored=cens)),
    )
    report = CheckReportInput(
        "lifetimes",
        cands,
        "weibull",
        reason="named by the analyst",
        units="years",
        data=ObservedData(x, censored=cens),
        reference=ref,
    )
    row = derive_numbers(report).data_row
    assert row is not None and row.label == "Kaplan–Meier (nonparametric)"
    # source: lifelines KaplanMeierFitter.median_survival_time_ (smallest t with S(t) <= 0.5)
    assert row.quantiles[0.5] == kmf.median_survival_time_
    page = render_report_html(report)
    pictures = section(page, "pictures")
    assert "Kaplan–Meier estimate and the candidates" in pictures
    assert "Dvoretzky" not in pictures and "Q–Q plot of weibull" in pictures
    assert 'data-kind="censoring_share"' in section(page, "warnings")
    assert f"{int(cens.sum())} of 120 rows" in section(page, "warnings")


def test_count_data_show_probability_mass_and_scipy_quantiles() -> None:
    """Counts get a pmf picture, and a Poisson row equal to scipy's poisson.ppf."""
    k = np.random.default_rng(10).poisson(2.5, 90).astype(float)
    cands = tuple(Candidate(m, sw.fit(k, m)) for m in ("poisson", "empirical_pmf"))
    page = render_report_html(
        CheckReportInput("breaks", cands, "poisson", units="breaks per day", data=ObservedData(k))
    )
    assert "probability mass" in section(page, "pictures")
    # source: scipy.stats.poisson.ppf (Poisson MLE is the sample mean)
    expected = stats.poisson(k.mean()).ppf(PROBS)
    np.testing.assert_array_equal(row_values(page, "spread", "poisson (selected)")[:4], expected)


def test_given_numbers_and_intervals_are_shown_as_given(repairs: np.ndarray) -> None:
    """Quantiles and intervals passed in replace the computed ones, intervals beside values."""
    given = Candidate(
        "gamma",
        sw.fit(repairs, "gamma"),
        quantiles={0.99: 21.5},
        quantile_intervals={0.99: ConfidenceInterval(17.25, 26.5)},
        tail_mean=24.0,
        tail_mean_interval=ConfidenceInterval(19.0, 31.0, 0.9),
    )
    page = render_report_html(CheckReportInput("g", (given,), "gamma"))
    draw = section(page, "draw")
    assert 'data-value="21.5">21.5<span class="ci">95%: [17.25, 26.5]</span>' in draw
    assert "90%: [19, 31]" in draw
    assert "No bootstrap intervals" not in draw


def test_report_without_selection_or_data_still_renders() -> None:
    """An expert input with no data and no selection: says so, with elicited points drawn."""
    s = sw.fit(np.random.default_rng(12).lognormal(3.0, 0.3, 50), "lognormal")
    page = render_report_html(
        CheckReportInput(
            "lead_time",
            (Candidate("lognormal", s),),
            elicited=ElicitedPoints([0.1, 0.5, 0.9], [15, 20, 28]),
        )
    )
    assert "No sampler has been selected" in section(page, "draw")
    assert "Elicited points on the curve" in section(page, "pictures")
    assert "No data were given" in section(page, "details")
    assert "No warnings were recorded" in section(page, "warnings")


def test_poor_fit_of_the_selected_sampler_is_warned_once(repairs: np.ndarray) -> None:
    """A failing test of the selected sampler becomes a warning unless one was already given."""
    bad = Candidate(
        "weibull", sw.fit(repairs, "weibull"), fit_checks=(FitCheck("ad", 1.9, 0.004, 999),)
    )
    found = render_report_html(CheckReportInput("p", (bad,), "weibull"))
    assert "fails ad (p = 0.004)" in section(found, "warnings")
    given = (ReportWarning("poor_fit", "weibull fails the AD test"),)
    page = render_report_html(CheckReportInput("p", (bad,), "weibull", warnings=given))
    assert section(page, "warnings").count('data-kind="poor_fit"') == 1


@pytest.mark.parametrize(
    ("build", "named"),
    [
        (lambda c: CheckReportInput("d", (c,), "other"), "selected"),
        (lambda c: CheckReportInput("d", (c, c)), "candidates"),
        (lambda c: CheckReportInput("", (c,)), "dataset"),
        (lambda c: CheckReportInput("d", (c,), tail_level=1.0), "tail_level"),
        (
            lambda c: CheckReportInput("d", (c,), data=ObservedData([1.0, 2.0], weights=[1.0])),
            "data.weights",
        ),
        (lambda c: ReportWarning("typo", "x"), "warning kind"),  # type: ignore[arg-type]
    ],
)
def test_bad_input_is_refused_naming_the_argument(
    build: Callable[[Candidate], object], named: str
) -> None:
    """Inconsistent input raises InputDataError (a ValueError) naming what is wrong."""
    c = Candidate("gamma", sw.fit([1.0, 2.0, 3.5, 4.0, 7.0], "gamma"))
    with pytest.raises(InputDataError, match=re.escape(named)):
        build(c)
