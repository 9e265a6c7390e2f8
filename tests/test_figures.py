"""What the figures say (issue 10.9): each figure is drawn from plain results built here, kept open, and read
back through matplotlib's own objects.

* the compliance map's x axis is the position along the boundary in mm (the arclength between the points,
  summed here), not a point index, and its legends cover no axis label (their boxes on the rendered canvas);
* the section figure's magnification is set by the finished surfaces: stock no pass removed (tenths of a
  millimetre) must not shrink the push-off's micrometres out of sight; the factor is the 1-2-5 number nearest
  (on a log scale) to 5 % of the part's size over the largest material left on the finished surfaces;
* the released-shape figure carries a scale bar whose drawn length is its stated length in um times the
  figure's magnification.
"""

from __future__ import annotations

import math
import sys
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from test_report_predict import hand_made_prediction  # noqa: E402

from deflect.machining.grip import ReleasedProfile  # noqa: E402
from deflect.mechanics.compliance import PointCompliance  # noqa: E402
from deflect.output import figures  # noqa: E402


@pytest.fixture
def kept(monkeypatch):
    """The figures drawn, kept after they are saved."""
    drawn = []
    save = figures._save

    def keep(plt, fig, path):
        save(plt, fig, path)
        drawn.append(fig)
    monkeypatch.setattr(figures, "_save", keep)
    return drawn


def overlaps(a, b) -> bool:
    return a.x0 < b.x1 and b.x0 < a.x1 and a.y0 < b.y1 and b.y0 < a.y1


def test_compliance_map_runs_along_the_boundary_in_mm(kept, tmp_path):
    from deflect.geometry.section import section_from_outline
    section = section_from_outline([[19.0, 0.0], [20.0, 0.0], [20.0, 40.0], [19.0, 40.0]])
    # points up the OD and down the bore, a gap where the rim face was too short for the patch
    rz = [(20.0, z) for z in np.arange(1.0, 40.0, 1.0)] + [(19.0, z) for z in np.arange(39.0, 0.0, -1.0)]
    along = [1.0 + (z - 1.0) for z in np.arange(1.0, 40.0, 1.0)] + [41.0 + (40.0 - z) for z in np.arange(39.0, 0.0, -1.0)]
    points = [PointCompliance(r, z, 1.0 if r == 20.0 else -1.0, 0.0, np.diag([1e-4 * (1 + z), 1e-5, 1e-5]), 40,
                              along_mm=s) for (r, z), s in zip(rz, along)]
    figures.compliance_map_plot(section, points, "sleeve", str(tmp_path / "map.png"))
    fig = kept[-1]
    ax_section, ax_line = fig.axes[0], fig.axes[1]            # the colour bar comes last
    drawn = np.concatenate([line.get_xdata() for line in ax_line.get_lines()])
    assert np.allclose(np.sort(drawn), np.sort(along))
    assert "[mm]" in ax_line.get_xlabel() and "along the boundary" in ax_line.get_xlabel()
    assert len(ax_line.get_lines()) == 2                     # the gap at the rim is left open
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    canvas = FigureCanvasAgg(fig)                            # the saved figure laid out again on a canvas
    canvas.draw()
    renderer = canvas.get_renderer()
    for ax in (ax_section, ax_line):
        legend = ax.get_legend().get_window_extent(renderer)
        for label in (ax.xaxis.label, ax.yaxis.label):
            assert not overlaps(legend, label.get_window_extent(renderer)), label.get_text()


def test_section_magnification_is_set_by_the_finished_surfaces(kept, tmp_path):
    pred = hand_made_prediction()
    d = pred.deviation
    unmachined = np.array([s == "unmachined" for s in d.surface])
    # half a millimetre of stock left on the chuck face, micrometres on the finished surfaces
    left = np.where(unmachined, 0.5, d.deviation_mm)
    pred = replace(pred, deviation=replace(d, deviation_mm=left))
    figures.section_plot(pred, tmp_path / "section.png")
    largest = float(np.abs(left[~unmachined]).max())
    size = float(np.ptp(pred.nominal_rz, axis=0).max())
    wanted = 0.05 * size / largest
    nice = [step * 10.0 ** k for k in range(-1, 6) for step in (1.0, 2.0, 5.0)]
    factor = min(nice, key=lambda c: abs(math.log10(c / wanted)))
    ax = kept[-1].axes[0]
    assert f"x {factor:.0f}" in ax.get_title()
    assert f"largest {1e3 * largest:.1f} um" in ax.get_title()
    red = [line for line in ax.get_lines() if "material left" in str(line.get_label())]
    # the chuck face (z = 0, outward normal -z) would be drawn 0.5 mm x factor below it
    assert red and all(np.asarray(line.get_ydata()).min() >= 0.0 for line in red)


def test_the_released_shape_has_a_scale_bar_in_um(kept, tmp_path):
    theta = np.linspace(0.0, 360.0, 721)
    radial = 0.25e-3 * np.cos(np.radians(3.0 * theta))       # 0.5 um peak to valley, three lobes
    profile = ReleasedProfile(surface="id", r_mm=37.0, z_mm=4.0, theta_deg=theta, deviation_mm=-radial,
                              radial_mm=radial, jaw_deg=np.array([0.0, 120.0, 240.0]), jaw_width_deg=20.0)
    figures.released_shape_plot(profile, "ring", str(tmp_path / "shape.png"))
    ax = kept[-1].axes[0]
    factor = figures.magnification(0.25e-3, 37.0, figures.LOBE_SHARE)
    assert factor >= 1e4                                     # the lobes are drawn ten thousand times larger
    [bar] = [line for line in ax.get_lines() if str(line.get_label()).startswith("scale:")]
    length_um = float(str(bar.get_label()).split()[1])
    assert f"drawn x {factor:g}" in bar.get_label()
    r0, r1 = bar.get_ydata()
    assert (r1 - r0) == pytest.approx(factor * length_um * 1e-3, rel=1e-12)
    assert length_um <= 1e3 * 0.25e-3                        # no longer than the largest deviation
    assert any(text.get_text() == f"{length_um:g} um" for text in ax.texts)
