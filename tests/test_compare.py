"""Tests of `deflect compare A B`: two jobs side by side.

* The demo (data/examples/housing.toml) against the same job with option 1 of its tune written in
  (tests/conftest.py): each side's figures are those `deflect predict` gives for that job (the same computation
  read back: to 1e-9), the change is B - A, and the page shows it: its "Side by side" and diameter tables, read
  back with Python's HTML parser, carry the JSON's values to their printed digits; the overlay figure is there.
* The overlay figure (`figures.profiles_figure`) draws each prediction's own material left, one line style per
  job: its lines' data are read back against two hand-made predictions (tests/test_report_predict.py).
* Two different parts (the test sleeve of tests/test_tune.py with a 1.0 and a 1.2 mm wall): allowed, and said
  at the top, with the drawn masses of `deflect section`.
* Bad input: a job that does not read (the message names which), an HTML file that cannot be written: `error:`,
  exit 2, nothing written, and nothing predicted first.
"""

from __future__ import annotations

import json
import sys
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from conftest import DEMO_JOB, run_deflect  # noqa: E402
from test_html_report import page_of  # noqa: E402
from test_report_predict import hand_made_prediction  # noqa: E402
from test_simulate import write_job  # noqa: E402
from test_tune import sleeve  # noqa: E402

from deflect.output.figures import profiles_figure  # noqa: E402

SAME_FLOAT = 1e-9              # one computation read back
HEADLINE = {"predicted mass g": ("mass_g", 1.0, "{:.3f}", "{:+.3f}"),
            "mass gain g": ("mass_gain_g", 1.0, "{:+.3f}", "{:+.3f}"),
            "most material left, a side um": ("most_material_left_mm", 1000.0, "{:.1f}", "{:+.1f}"),
            "cycle time (cutting) s": ("cycle_time_s", 1.0, "{:.1f}", "{:+.1f}")}


def test_each_side_is_its_own_prediction(demo_report, demo_option, demo_comparison):
    _, payload = demo_comparison
    _, option_predicted = demo_option(1)
    for side, predicted in (("a", demo_report[1]["predict"]), ("b", option_predicted)):
        record = payload[side]
        assert record["mass_g"] == pytest.approx(predicted["predicted"]["mass_g"], rel=SAME_FLOAT)
        assert record["mass_gain_g"] == pytest.approx(predicted["predicted"]["mass_gain_g"], rel=SAME_FLOAT)
        assert record["most_material_left_mm"] == pytest.approx(predicted["predicted"]["most_material_left_mm"],
                                                                rel=SAME_FLOAT)
        assert record["cycle_time_s"] == pytest.approx(predicted["cycle_time_s"], rel=SAME_FLOAT)
        for surface in predicted["surfaces"]:
            if surface["surface"] in ("od", "id"):
                for where, diameter in surface["predicted_diameter_mm"].items():
                    assert record["surfaces"][surface["surface"]][where]["predicted_diameter_mm"] == diameter
        assert [f["meets"] for f in record["features"]] == [f["meets"] for f in predicted["tolerance"]]
    assert payload["same_part"] is True and payload["part_differences"] == []


def test_the_change_is_b_minus_a_and_shows(demo_comparison):
    _, payload = demo_comparison
    a, b, change = payload["a"], payload["b"], payload["change"]
    for key in ("mass_g", "mass_gain_g", "most_material_left_mm", "cycle_time_s"):
        assert change[key] == pytest.approx(b[key] - a[key], rel=SAME_FLOAT, abs=1e-15)
    # option 1 is quicker and moves the diameters: the comparison has something to show
    assert change["cycle_time_s"] < -1.0
    assert max(abs(v["predicted_diameter_mm"]) for places in change["surfaces"].values()
               for v in places.values()) > 0.005
    assert any(not f["meets"] for f in a["features"]) and all(f["meets"] for f in b["features"])


def test_the_page_shows_the_change_in_its_tables(demo_comparison):
    html, payload = demo_comparison
    page = page_of(html.read_text())
    table = next(t for t in page.tables if t["caption"] == "Side by side")
    rows = {row[0]: row[1:] for row in table["rows"][1:]}
    for label, (key, scale, shown, change) in HEADLINE.items():
        a, b = scale * payload["a"][key], scale * payload["b"][key]
        assert rows[label] == [shown.format(a), shown.format(b), change.format(scale * payload["change"][key])]
    names = {"od": "Finished OD", "id": "Finished ID"}
    for kind, places in payload["change"]["surfaces"].items():
        table = next(t for t in page.tables if t["caption"] == names[kind])
        shown = {row[0]: row[-1] for row in table["rows"][1:]}
        assert shown == {where: f"{1e3 * value['predicted_diameter_mm']:+.1f}" for where, value in places.items()}
    assert len(page.images) == 1      # the two profiles overlaid


def test_the_overlay_draws_each_jobs_own_profile():
    a = hand_made_prediction()
    deviation = replace(a.deviation, deviation_mm=2.0 * a.deviation.deviation_mm - 0.003)
    b = replace(a, deviation=deviation)
    figure = profiles_figure([("A", a), ("B", b)], "A and B")
    lines = {line.get_label(): line for line in figure.axes[0].get_lines()}
    for name, pred, style in (("A", a, "-"), ("B", b, "--")):
        line = lines[f"OD: {name}"]
        od = np.array(pred.deviation.surface) == "od"
        assert np.allclose(line.get_ydata(), 1e3 * pred.deviation.deviation_mm[od])
        assert np.allclose(line.get_xdata(), pred.deviation.points_rz[od, 1])
        assert line.get_linestyle() == style
    import matplotlib.pyplot as plt
    plt.close(figure)


def test_two_different_parts_are_compared_and_said_to_be(tmp_path):
    thin = write_job(tmp_path, "sleeve-1.0", sleeve(1.0))
    thick = write_job(tmp_path, "sleeve-1.2", sleeve(1.2))
    code, text, err = run_deflect(["compare", thin, thick, "--quiet", "--html", tmp_path / "walls.html"])
    assert code == 0, err
    masses = []
    for job in (thin, thick):
        code, out, err = run_deflect(["section", job, "--json"])
        masses.append(json.loads(out)["mass_g"])
    top = text.split("\n\n")[1].splitlines()
    assert top[0] == "A: sleeve-1.0.toml (test sleeve, 1 mm wall, rough and finish OD)"
    assert top[2] == (f"TWO DIFFERENT PARTS: the drawn sections differ (drawn mass {masses[0]:.3f} g and "
                      f"{masses[1]:.3f} g). The figures compare the parts as made.")
    page = (tmp_path / "walls.html").read_text()
    assert page.index("TWO DIFFERENT PARTS") < page.index("Key figures")


def files_in(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir())


@pytest.mark.parametrize("which", ["a", "b"])
def test_a_job_that_does_not_read_is_named(tmp_path, which):
    bad = tmp_path / "broken.toml"
    bad.write_text("[job\ntitle = ")
    jobs = [bad, DEMO_JOB] if which == "a" else [DEMO_JOB, bad]
    code, out, err = run_deflect(["compare", *jobs, "--html", tmp_path / "c.html"])
    assert code == 2
    assert err.startswith(f"error: {bad}: ") and "not valid TOML" in err and "predicting" not in err, err
    assert files_in(tmp_path) == ["broken.toml"]          # no report, no staging folder left


def test_a_missing_job_is_named(tmp_path):
    code, out, err = run_deflect(["compare", DEMO_JOB, tmp_path / "nowhere.toml"])
    assert code == 2 and err.startswith(f"error: {tmp_path / 'nowhere.toml'}: ") and "no such" in err, err


def test_an_html_file_that_cannot_be_written_is_refused_first(tmp_path):
    users = tmp_path / "c.html"
    users.write_text("my notes")
    code, out, err = run_deflect(["compare", DEMO_JOB, DEMO_JOB, "--html", users])
    assert code == 2 and err.startswith("error: --html: ") and "deflect did not write it" in err, err
    assert "predicting" not in err and files_in(tmp_path) == ["c.html"] and users.read_text() == "my notes"


def test_a_job_against_the_same_job_calibrated(tmp_path):
    """B read with a first article's calibration (written here by hand: the finishing tool's forces halved):
    the same part; B's figures are `deflect predict --calibration`'s, and half the force leaves less material."""
    job = write_job(tmp_path, "sleeve", sleeve())
    calibration = tmp_path / "calibration.toml"
    calibration.write_text('[calibration]\nfitted_per = "tool"\n\n[[calibration.factor]]\napplies_to = "T1"\n'
                           'kind = "force"\nvalue = 0.5\nlow = 0.4\nhigh = 0.6\nidentified = true\n')
    code, out, err = run_deflect(["compare", job, job, "--calibration", calibration, "--json", "--quiet"])
    assert code == 0, err
    payload = json.loads(out)
    code, text, err = run_deflect(["predict", job, "--calibration", calibration, "--json", "--quiet"])
    assert code == 0, err
    calibrated = json.loads(text)
    assert payload["same_part"] and payload["a"]["calibration"] is None
    assert payload["b"]["calibration"]["factors"][0]["value"] == 0.5
    assert payload["b"]["mass_g"] == pytest.approx(calibrated["predicted"]["mass_g"], rel=SAME_FLOAT)
    assert payload["change"]["most_material_left_mm"] < 0.0


def test_a_small_ra_margin_is_printed_to_the_hundredth():
    """An Ra margin of -0.02 um is 'OUT (-0.02 um)', not 'OUT (-0.0 um)'; a diameter's margin (in mm) keeps
    0.1 um."""
    from types import SimpleNamespace

    from deflect.output.compare_report import _verdict

    assert _verdict(SimpleNamespace(unit="um", meets=False, margin=-0.02)) == "OUT (-0.02 um)"
    assert _verdict(SimpleNamespace(unit="mm", meets=True, margin=0.0123)) == "in (+12.3 um)"
