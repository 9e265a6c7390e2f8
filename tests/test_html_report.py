"""Unit tests of the HTML report, without a browser: what reaches the page, and that nothing else does.

A hand-made Prediction (tests/test_report_predict.py) is laid out by `html_chapters.predict_chapter` and
`html_report.render`; the page is read back with Python's own HTML parser (`html.parser`, independent of the
template engine that wrote it), and checked against the terminal report's blocks: every table of the terminal
report is a table of the page, cell for cell; the key figures equal the JSON's values to their printed
digits; every figure is an SVG inside the page; there is no script, no stylesheet or image fetched from
elsewhere; a user's text (title, pass name) is escaped and drawn literally. The echo of the job's inputs, and
the commands' refusal of an HTML file they may not write, are checked here too. The browser's own checks are in tests/test_report_browser.py.
"""

from __future__ import annotations

import base64
import copy
import sys
from dataclasses import replace
from html.parser import HTMLParser
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from browser import json_value, shown_number  # noqa: E402
from test_report_predict import hand_made_prediction  # noqa: E402

from deflect.output.html_chapters import predict_chapter  # noqa: E402
from deflect.output.html_report import JobSource, Report, input_tables, render, report_date, value_text  # noqa: E402
from deflect.output.predict_json import prediction_payload  # noqa: E402
from deflect.output.predict_report import predict_blocks  # noqa: E402
from deflect.output.tables import Grid  # noqa: E402

HOSTILE = '<script>alert("x")</script> & $\\frac{1}{$ "quoted"'
JOB_TEXT = """# a job as a user wrote it
[job]
title = "sleeve"      # a comment
[part]
outline = [[19.0, 0.0], [20.0, 0.0], [20.0, 40.0, 0.3], [19.0, 40.0], [18.0, 20.0]]
[[pass]]
name = "finish OD"
feed = 0.1
[[pass]]
name = "finish bore"
spring = 1
"""


class Page(HTMLParser):
    """The parts of a page the tests read: tables (caption and rows of cell text), images, scripts, links."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.tables: list[dict] = []
        self.images: list[dict] = []
        self.tags: list[str] = []
        self.cards: list[dict] = []
        self._cell = None
        self._in_caption = False
        self._card = None
        self._in_value = False

    def handle_starttag(self, tag, attrs):
        attributes = dict(attrs)
        self.tags.append(tag)
        if tag == "table":
            self.tables.append({"caption": "", "rows": []})
        elif tag == "caption":
            self._in_caption = True
        elif tag == "tr":
            self.tables[-1]["rows"].append([])
        elif tag in ("td", "th"):
            self._cell = ""
        elif tag == "img":
            self.images.append(attributes)
        elif tag == "div" and "figure-card" in attributes.get("class", ""):
            self._card = {"keys": attributes.get("data-keys"), "scale": attributes.get("data-scale"), "value": "",
                          "chapter": attributes.get("data-chapter")}
            self.cards.append(self._card)
        elif tag == "div" and attributes.get("class") == "value" and self._card is not None:
            self._in_value = True

    def handle_endtag(self, tag):
        if tag in ("td", "th"):
            self.tables[-1]["rows"][-1].append(self._cell)
            self._cell = None
        elif tag == "caption":
            self._in_caption = False
        elif tag == "div" and self._in_value:
            self._in_value = False
            self._card = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell += data
        elif self._in_caption:
            self.tables[-1]["caption"] += data
        elif self._in_value:
            self._card["value"] += data


def page_of(html: str) -> Page:
    page = Page()
    page.feed(html)
    return page


def report_of(pred, features=(), job_text=JOB_TEXT) -> str:
    return render(Report(pred.title, "machining prediction", (JobSource("job.toml", job_text),),
                         (predict_chapter(pred, features),), "0.0.test", "2026-01-02"))


@pytest.fixture(scope="module")
def prediction():
    return hand_made_prediction()


@pytest.fixture(scope="module")
def page(prediction):
    return page_of(report_of(prediction))


def test_every_table_of_the_terminal_report_is_on_the_page(prediction, page):
    grids = [b for b in predict_blocks(prediction) if isinstance(b, Grid)]
    assert grids, "the hand-made prediction gives tables"
    for grid in grids:
        found = [t for t in page.tables if t["caption"] == grid.title]
        assert len(found) == 1, grid.title
        rows = found[0]["rows"]
        expected = ([] if grid.pairs else [list(grid.header)]) + [list(row) for row in grid.rows]
        assert rows == [[cell.strip() for cell in row] for row in expected], grid.title


def test_key_figures_equal_the_json_to_their_digits(prediction, page):
    payload = prediction_payload(prediction)
    checked = 0
    for card in page.cards:
        if not card["keys"]:
            continue
        numbers = [shown_number(part) for part in card["value"].split("->")]
        for key, (shown, decimals) in zip(card["keys"].split(), numbers):
            value = float(card["scale"]) * json_value(payload, key)
            assert shown == pytest.approx(round(value, decimals), abs=0.5 * 10 ** -decimals), (key, card["value"])
            checked += 1
    assert checked >= 4      # mass, gain, material left, cycle time, power


def test_figures_are_svg_inside_the_page_and_nothing_is_fetched(page):
    assert len(page.images) == 3                                    # section, deviation, passes
    for image in page.images:
        assert image["src"].startswith("data:image/svg+xml;base64,")
        svg = base64.b64decode(image["src"].split(",", 1)[1]).decode("utf-8")
        assert svg.lstrip().startswith("<?xml") and "<svg" in svg
        assert int(image["width"]) > 0 and int(image["height"]) > 0
    assert "script" not in page.tags and "link" not in page.tags and "iframe" not in page.tags


def test_no_address_outside_the_page(prediction):
    html = report_of(prediction)
    for pattern in ("http://", "https://", "//cdn", "@import", "url("):
        assert pattern not in html.replace("http://www.w3.org/", ""), pattern


def test_user_text_is_escaped_and_drawn_literally(prediction):
    """A title and a pass name with markup, an ampersand and a broken formula of matplotlib's notation."""
    hostile = replace(prediction, title=HOSTILE, passes=[replace(prediction.passes[0], name=HOSTILE),
                                                         *prediction.passes[1:]])
    html = report_of(hostile, job_text=JOB_TEXT.replace('"sleeve"', '"<b>bold</b>"'))
    assert "<script>" not in html and "<b>bold</b>" not in html
    assert "&lt;script&gt;alert(&#34;x&#34;)&lt;/script&gt; &amp;" in html
    assert "&lt;b&gt;bold&lt;/b&gt;" in html
    assert len(page_of(html).images) == 3                           # the figures were drawn


def test_the_same_results_give_the_same_page(prediction):
    assert report_of(prediction) == report_of(copy.deepcopy(prediction))


def test_inputs_are_echoed_as_written():
    grids = {g.title: g for g in input_tables(JobSource("job.toml", JOB_TEXT))}
    assert set(grids) == {"[job]", "[part]", "[[pass]]"}
    assert grids["[job]"].rows == (("title", "sleeve"),)
    assert grids["[part]"].rows == (("outline", "5 points (in the job file below)"),)
    assert grids["[[pass]]"].header == ("name", "feed", "spring")
    assert grids["[[pass]]"].rows == (("finish OD", "0.1", ""), ("finish bore", "", "1"))
    assert value_text({"od": 84.0, "z": [0.0, 16.5]}) == "od = 84, z = [0, 16.5]"


def test_the_job_file_is_on_the_page_as_given(prediction):
    html = report_of(prediction)
    assert "# a job as a user wrote it" in html and "title = &#34;sleeve&#34;      # a comment" in html


def test_report_date_follows_source_date_epoch(monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1767225600")          # 2026-01-01T00:00:00Z
    assert report_date() == "2026-01-01"


# ---------------------------------------------------------------------------------------------------
# the commands refuse an HTML file they cannot write, before any work

@pytest.mark.parametrize("command", ["predict", "report", "clamp", "tune", "rules", "chatter", "explain"])
def test_an_html_file_that_cannot_be_written_is_refused_before_any_work(tmp_path, command):
    from conftest import DEMO_JOB, DEMO_MEASURED, EXAMPLES, run_deflect

    users = tmp_path / "notes.html"
    users.write_text("my notes")
    jobs = [DEMO_JOB, DEMO_MEASURED] if command == "explain" else [EXAMPLES / "ring.toml"]
    for target, words in ((users / "r.html", "is a file, not a folder"), (users, "deflect did not write it"),
                          (tmp_path, "is a folder")):
        code, out, err = run_deflect([command, *jobs, "--html", target])
        assert code == 2 and err.startswith("error: ") and "--html: " in err and words in err, err
        assert "machined:" not in err and "Traceback" not in err
    assert users.read_text() == "my notes" and sorted(p.name for p in tmp_path.iterdir()) == ["notes.html"]
