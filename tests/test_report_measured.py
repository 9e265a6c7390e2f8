"""`deflect report JOB --measured FILE`: the whole report is calibrated on the first article, and says so.

The first article's chapter fits a calibration; the report's headline, its prediction, its work holding, its
chatter check and its remedies use that same calibration, the one `deflect explain --save` writes and `deflect
predict --calibration` reads. The expected figures come from those two commands run on their own (the saved
calibration read back from its file), not from the report; the uncalibrated headline the report shows for
reference comes from `deflect predict` without a calibration.
"""

from __future__ import annotations

import html as html_text
import json
import re
import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from browser import json_value, shown_number  # noqa: E402
from conftest import DEMO_JOB, DEMO_MEASURED, run_deflect  # noqa: E402
from test_html_report import page_of  # noqa: E402

HEADLINE = ("mass_g", "mass_gain_g", "most_material_left_mm")


def predicted(args: list) -> dict:
    code, out, err = run_deflect(["predict", DEMO_JOB, "--json", "--quiet", *args])
    assert code == 0, err
    return json.loads(out)


@pytest.fixture(scope="module")
def calibrated(demo_calibration) -> dict:
    """`deflect predict --calibration` with the calibration `deflect explain --save` wrote."""
    return predicted(["--calibration", demo_calibration])


def printed(value: float, digits: int) -> str:
    return f"{round(value, digits) or 0.0:.{digits}f}"


def test_the_headline_is_the_calibrated_prediction(demo_report, calibrated):
    html, payload = demo_report
    for key in HEADLINE:
        assert payload["predict"]["predicted"][key] == pytest.approx(calibrated["predicted"][key], rel=1e-9), key
    assert payload["predict"]["cycle_time_s"] == pytest.approx(calibrated["cycle_time_s"], rel=1e-9)
    assert payload["predict"]["calibration"]["factors"] == calibrated["calibration"]["factors"]
    # the key figures of the prediction, as printed on the page, are the calibrated prediction's to their digits
    cards = [c for c in page_of(html.read_text()).cards if c["chapter"] == "predict" and c["keys"]]
    assert len(cards) >= 4
    for card in cards:
        (shown, decimals), = [shown_number(part) for part in card["value"].split("->")]
        expected = float(card["scale"]) * json_value(calibrated, card["keys"])
        assert shown == pytest.approx(round(expected, decimals), abs=0.5 * 10 ** -decimals), card


def test_the_remedies_are_calibrated_too(demo_report, calibrated):
    """The remedies' plan as programmed is the calibrated prediction (as `tune --calibration` gives it)."""
    _, payload = demo_report
    current = payload["tune"]["current"]["predicted"]
    for key in HEADLINE:
        assert current[key] == pytest.approx(calibrated["predicted"][key], rel=1e-9), key
    for part in ("predict", "tune"):
        assert payload[part]["calibration"]["measured"] == str(DEMO_MEASURED)


def test_the_top_says_what_the_figures_are_with_the_uncalibrated_beside(demo_report):
    html, _ = demo_report
    notices = [html_text.unescape(n) for n in re.findall(r'<p class="notice">(.*?)</p>', html.read_text(), re.S)]
    said = next(n for n in notices if n.startswith("Calibrated on the first article"))
    assert DEMO_MEASURED.name in said and "deflect predict --calibration" in said
    plain = predicted([])["predicted"]
    assert f"predicted mass {printed(plain['mass_g'], 3)} g" in said
    assert f"mass gain +{printed(plain['mass_gain_g'], 3)} g" in said
    assert f"most material left {printed(1e3 * plain['most_material_left_mm'], 1)} um a side" in said
    # the notice stands above the key figures
    text = html.read_text()
    assert text.index("Calibrated on the first article") < text.index("Key figures")
