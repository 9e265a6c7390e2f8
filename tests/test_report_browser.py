"""The HTML reports in a real browser (headless Chromium through Playwright; tests/browser.py).

For the report of each shipped example job (`deflect report JOB --html --json`; the demo's, with its first
article, from tests/conftest.py; the ring's with a [dynamics] table added, so that its report has the chatter check) and for the
comparison of the demo with its option 1:
* the page loads with no console error, no page error, no failed request and no request for anything but the
  file itself;
* every figure is there, decoded and drawn with a size: three for the prediction, one for the released shape
  when the job has [holding], one for the remedies when the search found an option, the lobes of each pass and
  the mode shapes with [dynamics], one for a comparison;
* the key figures shown equal the JSON's values to their printed digits;
* a screenshot of the first screen is taken (a PNG of the window's size);
* printed to PDF on A4 and on Letter, nothing is wider than the paper (the browser would shrink the page),
  every sheet but the job file's fits on one page, and the PDF has as many pages as the sheets laid out for
  print need: one each, and the job file's as many as its height over the page's.
"""

from __future__ import annotations

import json
import math
import struct
import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
import browser  # noqa: E402
from conftest import EXAMPLES, run_deflect  # noqa: E402

SHIPPED = ["housing", "ti-sleeve", "steel-bushing", "ring"]
WITH_DYNAMICS = "ring"                 # its report is made with this table added (the examples have none)
DYNAMICS = "\n[dynamics]\ndamping = 0.02\n"
PAPERS = ("A4", "Letter")
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
FITS_MM = 0.5               # a sheet this close to the printable height still counts as fitting (rounding)


@pytest.fixture(scope="module")
def chromium():
    opened = browser.browser_or_skip()
    yield opened
    opened.close()


@pytest.fixture(scope="module")
def example_reports(tmp_path_factory, demo_report) -> dict:
    """name -> (HTML file, the JSON of `deflect report`) for every shipped example."""
    folder = tmp_path_factory.mktemp("example-reports")
    reports = {"housing": demo_report}
    for name in SHIPPED[1:]:
        html = folder / f"{name}.html"
        job = EXAMPLES / f"{name}.toml"
        if name == WITH_DYNAMICS:          # the same job with [dynamics]: the report then has the chatter check
            job = folder / job.name
            job.write_text((EXAMPLES / f"{name}.toml").read_text() + DYNAMICS)
        code, out, err = run_deflect(["report", job, "--html", html, "--json"])
        assert code == 0, err
        reports[name] = (html, json.loads(out))
    return reports


def expected_figures(payload: dict) -> int:
    """The prediction's three, the released shape with [holding], the remedies' with an option, the chatter
    check's lobes of each pass and its mode shapes with [dynamics], the first article's with --measured."""
    clamp, tune, chatter = payload.get("clamp"), payload.get("tune"), payload.get("chatter")
    return (3 + (1 if clamp and clamp["roundness_um"] else 0) + (1 if tune and tune["options"] else 0)
            + (len(chatter["passes"]) + (1 if chatter["modes"] else 0) if chatter else 0)
            + (1 if payload.get("explain") else 0))


def png_size(data: bytes) -> tuple[int, int]:
    assert data.startswith(PNG_SIGNATURE)
    return struct.unpack(">II", data[16:24])


def check_page(chromium, html: Path, payloads: dict, figures: int, tmp_path: Path) -> None:
    shown = browser.load(chromium, html)
    page = shown.page
    try:
        assert shown.console_errors == [] and shown.failed_requests == [] and shown.other_requests == []
        drawn = browser.figures_drawn(page)
        assert len(drawn) == figures
        for figure in drawn:
            assert figure["complete"] and figure["natural"] > 0, figure["alt"]
            assert figure["width"] > 100 and figure["height"] > 100, figure
        cards = browser.key_figures(page)
        assert cards
        for card in cards:
            numbers = [browser.shown_number(part) for part in card["shown"].split("->")]
            assert len(numbers) == len(card["keys"])
            for key, (value, decimals) in zip(card["keys"], numbers):
                expected = card["scale"] * browser.json_value(payloads[card["chapter"]], key)
                assert value == pytest.approx(round(expected, decimals), abs=0.5 * 10 ** -decimals), (key, card)
        screenshot = tmp_path / f"{html.stem}.png"
        page.screenshot(path=str(screenshot))
        assert png_size(screenshot.read_bytes()) == (browser.VIEWPORT["width"], browser.VIEWPORT["height"])
        for paper in PAPERS:
            check_print(page, paper)
    finally:
        page.close()


def check_print(page, paper: str) -> None:
    heights = browser.sheet_heights_mm(page, paper)
    assert browser.print_overflow_px(page, paper) == 0, f"something is wider than {paper} paper"
    printable = browser.printable_height_mm(paper)
    job_sheets = browser.job_file_sheets(page)
    for k, height in enumerate(heights):
        if k not in job_sheets:
            assert height <= printable + FITS_MM, f"sheet {k + 1} is {height:.0f} mm tall on {paper}"
    expected = sum(max(1, math.ceil((h - FITS_MM) / printable)) for h in heights)
    assert browser.pdf_pages(browser.printed(page, paper)) == expected, paper


@pytest.mark.parametrize("name", SHIPPED)
def test_example_report_in_the_browser(chromium, example_reports, name, tmp_path):
    html, payload = example_reports[name]
    check_page(chromium, html, payload, expected_figures(payload), tmp_path)


def test_comparison_in_the_browser(chromium, demo_comparison, tmp_path):
    html, payload = demo_comparison
    check_page(chromium, html, {"compare": payload}, 1, tmp_path)
