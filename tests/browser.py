"""A real browser for the tests of the HTML report: Debian's Chromium, headless, driven by Playwright.

Playwright drives the system's browser (`CHROMIUM`, found on the PATH or named by DEFLECT_CHROMIUM); it
never downloads one (no `playwright install`). The
browser runs in a fresh profile folder with no network features (no sync, no component updates, no background
requests), and every request the page makes other than the file itself is answered with an abort and
recorded, so a report that fetches anything fails the test.

`browser_or_skip` gives the browser, or skips the test when Chromium or Playwright is missing here; with the
environment variable DEFLECT_REQUIRE_BROWSER set (as .ci/run sets it), a missing browser fails instead.

Run as a script, it writes a screenshot of an HTML file: `python tests/browser.py REPORT.html OUT.png`.
"""

from __future__ import annotations

import os
import re
import shutil
import sys
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

import pytest


def system_chromium() -> Path:
    """The system's Chromium: DEFLECT_CHROMIUM if set, else `chromium` (Debian's package) or `chromium-browser`
    on the PATH; a path that does not exist when none is found (the tests then skip, or fail when required)."""
    given = os.environ.get("DEFLECT_CHROMIUM")
    if given:
        return Path(given)
    found = shutil.which("chromium") or shutil.which("chromium-browser")
    return Path(found) if found else Path("chromium-not-found")


CHROMIUM = system_chromium()
ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
        "--disable-background-networking", "--disable-component-update", "--disable-sync"]
MM_PX = 96.0 / 25.4                  # CSS pixels per millimetre
VIEWPORT = {"width": 1000, "height": 1300}
# the report's printed page (its @page margins: 13 mm top, 14 mm sides, 14 mm bottom)
PAGE_MARGINS_MM = {"top": 13.0, "bottom": 14.0, "left": 14.0, "right": 14.0}
PAPER_MM = {"A4": (210.0, 297.0), "Letter": (215.9, 279.4)}


def required() -> bool:
    return bool(os.environ.get("DEFLECT_REQUIRE_BROWSER"))


class Browser:
    """One headless Chromium with a fresh profile, closed by `close`."""

    def __init__(self):
        from playwright.sync_api import sync_playwright

        self._profile = tempfile.TemporaryDirectory(prefix="deflect-chromium-")
        self._playwright = sync_playwright().start()
        self.context = self._playwright.chromium.launch_persistent_context(
            self._profile.name, executable_path=str(CHROMIUM), headless=True, args=ARGS, viewport=VIEWPORT,
            offline=False)

    def close(self) -> None:
        self.context.close()
        self._playwright.stop()
        self._profile.cleanup()


def browser_or_skip() -> Browser:
    """The browser; a skip (locally) or a failure (DEFLECT_REQUIRE_BROWSER set) when it cannot run here."""
    missing = None
    if not CHROMIUM.exists():
        missing = f"{CHROMIUM} is missing (apt-get install -y chromium)"
    else:
        try:
            import playwright.sync_api  # noqa: F401
        except ImportError:
            missing = "the playwright package is missing (pip install playwright; no browser download needed)"
    if missing:
        if required():
            pytest.fail(f"DEFLECT_REQUIRE_BROWSER is set but {missing}")
        pytest.skip(missing)
    return Browser()


@dataclass
class Loaded:
    """A page loaded from a file, and what went wrong while it loaded."""

    page: object
    console_errors: list[str] = field(default_factory=list)
    failed_requests: list[str] = field(default_factory=list)
    other_requests: list[str] = field(default_factory=list)


def load(browser: Browser, html_file: Path) -> Loaded:
    """Open the file; record console errors, page errors, failed requests and any request for something else
    than the file itself (which is refused)."""
    page = browser.context.new_page()
    url = html_file.resolve().as_uri()
    loaded = Loaded(page)

    def on_console(message):
        if message.type == "error":
            loaded.console_errors.append(message.text)

    def route(request_route):
        if request_route.request.url == url:
            request_route.continue_()
        else:
            loaded.other_requests.append(request_route.request.url)
            request_route.abort()

    page.on("console", on_console)
    page.on("pageerror", lambda error: loaded.console_errors.append(str(error)))
    page.on("requestfailed", lambda request: loaded.failed_requests.append(request.url))
    page.route("**/*", route)
    page.goto(url, wait_until="load")
    return loaded


def figures_drawn(page) -> list[dict]:
    """Every figure image: its caption, whether it decoded and its size on the page [CSS px]."""
    return page.eval_on_selector_all(
        "figure img", """imgs => imgs.map(img => { const box = img.getBoundingClientRect();
            return {alt: img.alt, complete: img.complete, natural: img.naturalWidth,
                    width: box.width, height: box.height}; })""")


def key_figures(page) -> list[dict]:
    """The key figures on the first sheet that carry JSON keys: chapter, keys, scale and the value as shown."""
    return page.eval_on_selector_all(
        ".figure-card[data-keys]", """cards => cards.map(card => ({chapter: card.dataset.chapter,
            keys: card.dataset.keys.split(' '), scale: parseFloat(card.dataset.scale),
            shown: card.querySelector('.value').textContent}))""")


NUMBER = re.compile(r"[-+]?\d+(?:\.(\d+))?")


def shown_number(text: str) -> tuple[float, int]:
    """The first number in a shown value and its count of decimals."""
    found = NUMBER.search(text.replace("\u2212", "-"))
    assert found, f"no number in {text!r}"
    return float(found.group(0)), len(found.group(1) or "")


def json_value(payload: dict, key: str):
    value = payload
    for part in key.split("."):
        value = value[int(part)] if isinstance(value, list) else value[part]
    return value


def laid_out_for_print(page, paper: str, script: str):
    """`script` evaluated on the page laid out as printed on the paper: print styles, the printable width."""
    width_mm = PAPER_MM[paper][0] - PAGE_MARGINS_MM["left"] - PAGE_MARGINS_MM["right"]
    page.set_viewport_size({"width": round(width_mm * MM_PX), "height": VIEWPORT["height"]})
    page.emulate_media(media="print")
    try:
        return page.evaluate(script)
    finally:
        page.emulate_media(media="null")
        page.set_viewport_size(VIEWPORT)


def sheet_heights_mm(page, paper: str) -> list[float]:
    """The height of every sheet laid out for print on the paper's printable width [mm]."""
    heights = laid_out_for_print(page, paper, """() => Array.from(document.querySelectorAll('section.sheet'),
                                                 s => s.getBoundingClientRect().height)""")
    return [h / MM_PX for h in heights]


def print_overflow_px(page, paper: str) -> float:
    """How much wider than the printable width the page lays out for print [CSS px] (0: it fits)."""
    return laid_out_for_print(page, paper, """() => Math.max(0,
        document.documentElement.scrollWidth - document.documentElement.clientWidth)""")


def job_file_sheets(page) -> set[int]:
    """The positions of the sheets holding a job file as given (they may run over several pages)."""
    classes = page.eval_on_selector_all("section.sheet", "ss => ss.map(s => s.className)")
    return {k for k, name in enumerate(classes) if "job-file" in name.split()}


def printable_height_mm(paper: str) -> float:
    return PAPER_MM[paper][1] - PAGE_MARGINS_MM["top"] - PAGE_MARGINS_MM["bottom"]


def pdf_pages(pdf: bytes) -> int:
    from io import BytesIO

    from pypdf import PdfReader

    return len(PdfReader(BytesIO(pdf)).pages)


def printed(page, paper: str) -> bytes:
    """The page printed to PDF as the browser's print dialog would (the report's own @page margins)."""
    return page.pdf(format=paper, print_background=True, prefer_css_page_size=True)


if __name__ == "__main__":
    source, target = Path(sys.argv[1]), Path(sys.argv[2])
    browser = browser_or_skip()
    try:
        shown = load(browser, source)
        shown.page.screenshot(path=str(target))
    finally:
        browser.close()
