"""Headless Chromium for the browser tests.

The tests need Debian's ``chromium`` at /usr/bin/chromium (installed by ``.ci/run``). Without it
they are skipped, unless ``SAMPLEWRIGHT_REQUIRE_BROWSER=1`` says the run must have it (CI), in
which case they fail. Chromium runs with its own throw-away profile and without background
networking; pages are opened from ``file://`` paths.
"""

from __future__ import annotations

import os
import re
import subprocess
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest

CHROMIUM = Path("/usr/bin/chromium")
FLAGS = (
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--enable-logging=stderr",
    "--v=0",
)
# Chromium writes each console message of the page to its log as "...:CONSOLE:<line>] "text"".
_CONSOLE = re.compile(r":CONSOLE(?::\d+|\(\d+\))\]\s*(.*)")


def pytest_configure(config: pytest.Config) -> None:
    config.addinivalue_line("markers", "browser: opens pages in headless Chromium")


@dataclass(frozen=True)
class BrowserRun:
    """What one Chromium run left: its log (stderr), a screenshot path or the dumped DOM."""

    log: str
    screenshot: Path | None = None
    dom: str = ""

    def console_messages(self) -> list[str]:
        """Every message the page wrote to the console (a page without scripts writes none)."""
        return [m.group(1) for m in map(_CONSOLE.search, self.log.splitlines()) if m]

    def pixels(self) -> np.ndarray:
        """The screenshot as an (height, width, 3) uint8 array."""
        from PIL import Image

        assert self.screenshot is not None
        with Image.open(self.screenshot) as im:
            return np.asarray(im.convert("RGB"))


class Browser:
    """Runs headless Chromium on local files, one fresh profile per run."""

    def __init__(self, scratch: Path) -> None:
        self.scratch = scratch
        self._runs = 0

    def _run(self, page: Path, extra: list[str]) -> subprocess.CompletedProcess[str]:
        self._runs += 1
        profile = self.scratch / f"profile-{self._runs}"
        cmd = [str(CHROMIUM), *FLAGS, f"--user-data-dir={profile}", *extra, page.as_uri()]
        env = {**os.environ, "HOME": str(self.scratch)}
        return subprocess.run(cmd, capture_output=True, text=True, timeout=180, env=env)

    def screenshot(
        self, page: Path, out: Path, *, size: tuple[int, int] = (1280, 3000), wait_ms: int = 0
    ) -> BrowserRun:
        """Open ``page`` in a ``size`` window and save a screenshot to ``out``."""
        extra = [f"--screenshot={out}", f"--window-size={size[0]},{size[1]}"]
        if wait_ms:
            extra.append(f"--virtual-time-budget={wait_ms}")
        done = self._run(page, extra)
        assert out.is_file(), (
            f"chromium wrote no screenshot (exit {done.returncode}):\n{done.stderr}"
        )
        return BrowserRun(log=done.stderr, screenshot=out)

    def dump_dom(self, page: Path, *, wait_ms: int = 0) -> BrowserRun:
        """Open ``page`` and return the DOM Chromium built from it (after its scripts ran)."""
        extra = ["--dump-dom"] + ([f"--virtual-time-budget={wait_ms}"] if wait_ms else [])
        done = self._run(page, extra)
        assert done.returncode == 0 and done.stdout, f"--dump-dom failed:\n{done.stderr}"
        return BrowserRun(log=done.stderr, dom=done.stdout)


@pytest.fixture(scope="session")
def browser(tmp_path_factory: pytest.TempPathFactory) -> Browser:
    """Headless Chromium, or a skip (a failure when SAMPLEWRIGHT_REQUIRE_BROWSER=1) without it."""
    if not CHROMIUM.is_file():
        reason = f"{CHROMIUM} is missing (apt-get install -y --no-install-recommends chromium)"
        if os.environ.get("SAMPLEWRIGHT_REQUIRE_BROWSER") == "1":
            pytest.fail(f"SAMPLEWRIGHT_REQUIRE_BROWSER=1 but {reason}")
        pytest.skip(reason)
    return Browser(tmp_path_factory.mktemp("chromium"))
