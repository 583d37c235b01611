"""Check reports as a browser shows them: headless Chromium renders the pages and their plots."""

from __future__ import annotations

import base64
import io
import re
import subprocess
import sys
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
from PIL import Image

import samplewright as sw
from samplewright.check.report_html import SECTION_IDS, render_report_html
from samplewright.check.report_model import (
    Candidate,
    CheckReportInput,
    FitCheck,
    ObservedData,
    ReportWarning,
)

pytestmark = pytest.mark.browser
# Snakemake's report page loads Tailwind's in-browser build, which always prints this notice.
SNAKEMAKE_NOTICES = ("cdn.tailwindcss.com should not be used in production",)


class Outline(HTMLParser):
    """Section ids, h2 headings and image sources of a page, in document order."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.sections: list[str] = []
        self.headings: list[str] = []
        self.images: list[str] = []
        self._in_h2 = False

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        a = dict(attrs)
        if tag == "section":
            self.sections.append(a.get("id") or "")
        elif tag == "img":
            self.images.append(a.get("src") or "")
        elif tag == "h2":
            self._in_h2 = True
            self.headings.append("")

    def handle_endtag(self, tag: str) -> None:
        self._in_h2 = self._in_h2 and tag != "h2"

    def handle_data(self, data: str) -> None:
        if self._in_h2:
            self.headings[-1] += data


def outline(page: str) -> Outline:
    o = Outline()
    o.feed(page)
    o.close()
    return o


def find_picture(screen: np.ndarray, picture: np.ndarray) -> tuple[int, int] | None:
    """Top-left corner where ``picture`` appears pixel for pixel in ``screen``, or None.

    Candidates are the places where the picture's rarest colour sits; each is then compared
    whole, so the search is exact and fast.
    """

    def packed(a: np.ndarray) -> np.ndarray:
        a = a.astype(np.uint32)
        return (a[..., 0] << 16) | (a[..., 1] << 8) | a[..., 2]

    s, p = packed(screen), packed(picture)
    h, w = p.shape
    colours, counts = np.unique(p, return_counts=True)
    rare = colours[np.argmin(counts)]
    r, c = (int(v[0]) for v in np.nonzero(p == rare))
    for y, x in zip(*np.nonzero(s == rare), strict=True):
        top, left = int(y) - r, int(x) - c
        if 0 <= top <= s.shape[0] - h and 0 <= left <= s.shape[1] - w:
            if np.array_equal(s[top : top + h, left : left + w], p):
                return top, left
    return None


@pytest.fixture(scope="module")
def report_file(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A check report of invented repair times, written to a file."""
    x = np.round(np.random.default_rng(31).gamma(2.5, 2.0, 90), 1)
    cands = tuple(
        Candidate(m, sw.fit(x, m), fit_checks=(FitCheck("ks", 0.06, 0.4, 499),))
        for m in ("gamma", "lognormal", "empirical")
    )
    report = CheckReportInput(
        "valve_repair_hours",
        cands,
        "gamma",
        reason="lowest AIC among the continuous candidates",
        units="hours",
        data=ObservedData(x),
        warnings=(ReportWarning("ties", "values recorded to 0.1 h"),),
    )
    path = tmp_path_factory.mktemp("report") / "valve_repair_hours.html"
    path.write_text(render_report_html(report), encoding="utf-8")
    return path


def test_report_renders_with_visible_plots(browser, report_file: Path, tmp_path: Path) -> None:
    """The screenshot is not blank and the embedded plots appear in it pixel for pixel, varied."""
    run = browser.screenshot(report_file, tmp_path / "shot.png")
    screen = run.pixels()
    assert screen.shape == (3000, 1280, 3)
    assert screen.std() > 10.0
    assert run.console_messages() == []
    found = 0
    for src in outline(report_file.read_text(encoding="utf-8")).images:
        png = base64.b64decode(src.split(",", 1)[1])
        picture = np.asarray(Image.open(io.BytesIO(png)).convert("RGB"))
        at = find_picture(screen, picture)
        if at is None:
            continue  # below the 3000-pixel window
        found += 1
        y, x = at
        inner = screen[y + 20 : y + picture.shape[0] - 40, x + 60 : x + picture.shape[1] - 10]
        assert inner.std() > 5.0 and len(np.unique(inner.reshape(-1, 3), axis=0)) > 20
    assert found >= 2


def test_dom_chromium_builds_matches_the_file(browser, report_file: Path) -> None:
    """Chromium's DOM has the file's sections, headings and images, and nothing was logged."""
    run = browser.dump_dom(report_file)
    assert run.console_messages() == []
    mine, seen = outline(report_file.read_text(encoding="utf-8")), outline(run.dom)
    assert tuple(seen.sections) == SECTION_IDS == tuple(mine.sections)
    assert seen.headings == mine.headings
    assert seen.images == mine.images and len(seen.images) >= 5


def test_console_check_sees_a_page_that_logs(browser, tmp_path: Path) -> None:
    """Control: a page that logs an error is caught by the console check."""
    page = tmp_path / "noisy.html"
    page.write_text("<!DOCTYPE html><p>x</p><script>console.error('broken page')</script>")
    assert any("broken page" in m for m in browser.dump_dom(page).console_messages())


def build_snakemake_report(workdir: Path, pages: dict[str, str]) -> Path:
    """Run a tiny workflow whose shell rules publish ``pages`` with report(); return the report."""
    (workdir / "pages").mkdir(parents=True)
    for name, text in pages.items():
        (workdir / "pages" / f"{name}.html").write_text(text, encoding="utf-8")
    (workdir / "caption.rst").write_text(
        "Check report of dataset {{ snakemake.wildcards.name }}.\n"
    )
    names = ", ".join(repr(n) for n in pages)
    (workdir / "Snakefile").write_text(
        f"NAMES = [{names}]\n\n"
        "rule all:\n"
        '    input: expand("results/{name}.html", name=NAMES)\n\n'
        "rule publish:\n"
        '    input: "pages/{name}.html"\n'
        '    output: report("results/{name}.html", caption="caption.rst", '
        'category="checks", subcategory="{name}")\n'
        '    shell: "cp {input} {output}"\n'
    )
    smk = [sys.executable, "-m", "snakemake", "--cores", "1", "--quiet"]
    for args in ([], ["--report", "report.html"]):
        done = subprocess.run(smk + args, cwd=workdir, capture_output=True, text=True, timeout=300)
        assert done.returncode == 0, done.stderr
    return workdir / "report.html"


@pytest.mark.slow
def test_snakemake_report_renders(browser, report_file: Path, tmp_path: Path) -> None:
    """Snakemake's report gathering a check page renders, with only Snakemake's own notice."""
    report = build_snakemake_report(tmp_path / "wf", {"valve": report_file.read_text("utf-8")})
    assert "valve.html" in report.read_text(encoding="utf-8")
    run = browser.screenshot(report, tmp_path / "smk.png", wait_ms=2_000)
    screen = run.pixels()
    assert screen.std() > 10.0
    menu, body = screen[:, :200], screen[:, 400:]
    assert not np.array_equal(menu.mean(axis=(0, 1)).round(), body.mean(axis=(0, 1)).round())
    assert len(np.unique(screen.reshape(-1, 3), axis=0)) > 50
    dom = browser.dump_dom(report, wait_ms=2_000)
    # the report's own script filled its app element and hid the loading screen
    assert re.search(r'<div id="app">\s*<div', dom.dom)
    assert re.search(r'<div id="loading-screen" style="display: none;">', dom.dom)
    for logged in (run, dom):
        notices = logged.console_messages()
        assert [m for m in notices if not any(n in m for n in SNAKEMAKE_NOTICES)] == []
