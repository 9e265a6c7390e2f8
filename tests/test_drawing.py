"""DXF half-sections in: drawings made here with ezdxf read into sections whose area and volume match the
closed form of the drawn shape (1e-9 for lines and arcs; within the stated tolerance for a spline), and the
round trip job -> DXF -> job keeps the outline.

Closed forms: areas of rectangles, circles, sectors and circular segments (elementary geometry); volumes by
the second theorem of Pappus-Guldinus (V = 2 pi r_c A) or the sphere and spherical shell (4/3 pi R^3);
the centroid of a circular segment of half-angle a at 4 R sin^3(a) / (3 (2 a - sin 2 a)) from the centre.
"""

from __future__ import annotations

import json
import math
import tomllib
from pathlib import Path

import ezdxf
import numpy as np
import pytest

from deflect.cli import main
from deflect.errors import InputError
from deflect.geometry.section import mass_properties, section_from_outline
from deflect.job.drawing import CURVE_TOLERANCE_MM, GAP_MM, drawing_notes, drawing_section, read_drawing
from deflect.job.reader import read_job
from deflect.output.dxf_files import section_dxf

EXACT = 1e-9          # relative: lines and arcs are integrated exactly (rounding only)
MM_PER_INCH = 25.4


def new_drawing(insunits: int = 4):
    doc = ezdxf.new("R2010", setup=True)
    doc.header["$INSUNITS"] = insunits
    return doc, doc.modelspace()


def read_props(path, **options):
    drawing = read_drawing(path, **options)
    section = drawing_section(drawing)
    return drawing, mass_properties(section, 1.0), drawing_notes(drawing, section)


def close(value, exact, rel=EXACT):
    return abs(value - exact) <= rel * abs(exact)


# ---------------------------------------------------------------------------------------------------
# shapes with closed forms

TUBE_AREA = 40.0                                           # r 19..20, z 0..40
TUBE_VOLUME = math.pi * (20.0 ** 2 - 19.0 ** 2) * 40.0


def tube_with_round_rim():
    """A tube r 19..20, z 0..40 whose rim is a half circle of radius 0.5 bulging past z = 40 (a bulge of -1
    on the drawing, where x = z and y = r): (area, volume)."""
    half_disc = 0.5 * math.pi * 0.25
    return TUBE_AREA + half_disc, TUBE_VOLUME + 2.0 * math.pi * 19.5 * half_disc


@pytest.mark.parametrize("insunits, scale", [(4, 1.0), (1, 1.0 / MM_PER_INCH)], ids=["mm", "inch"])
def test_bulged_lwpolyline_in_mm_and_inch(tmp_path, insunits, scale):
    doc, msp = new_drawing(insunits)
    points = [(0.0, 19.0, 0.0), (0.0, 20.0, 0.0), (40.0, 20.0, -1.0), (40.0, 19.0, 0.0)]
    msp.add_lwpolyline([(x * scale, y * scale, b) for x, y, b in points], format="xyb", close=True)
    doc.saveas(tmp_path / "tube.dxf")
    drawing, props, _ = read_props(tmp_path / "tube.dxf")
    area, volume = tube_with_round_rim()
    assert drawing.unit == ("inch" if insunits == 1 else "mm")
    assert close(props.area_mm2, area) and close(props.volume_mm3, volume)
    # the arc stays an arc in the outline
    assert sum(isinstance(item, dict) for item in drawing.outline) == 1


def test_polyline_2d_with_bulges(tmp_path):
    doc, msp = new_drawing()
    polyline = msp.add_polyline2d([(0.0, 19.0), (0.0, 20.0), (40.0, 20.0), (40.0, 19.0)], close=True)
    polyline.vertices[2].dxf.bulge = -1.0
    doc.saveas(tmp_path / "tube2d.dxf")
    _, props, _ = read_props(tmp_path / "tube2d.dxf")
    area, volume = tube_with_round_rim()
    assert close(props.area_mm2, area) and close(props.volume_mm3, volume)


def hemispherical_shell(msp, inner: float, outer: float, mirrored_ocs: bool = False):
    """Lines and ARCs of a quarter annulus: the half-section of a hemispherical shell, one edge on the axis."""
    msp.add_line((0.0, inner), (0.0, outer))                 # the face z = 0, r from inner to outer
    msp.add_line((outer, 0.0), (inner, 0.0))                 # on the spin axis (y = r = 0)
    for radius in (inner, outer):
        if mirrored_ocs:
            # the same arc drawn in a mirrored object coordinate system (extrusion -Z): x flips, the arc
            # runs counter-clockwise there from 90 to 180 deg
            msp.add_arc((0.0, 0.0), radius, 90.0, 180.0, dxfattribs={"extrusion": (0.0, 0.0, -1.0)})
        else:
            msp.add_arc((0.0, 0.0), radius, 0.0, 90.0)


@pytest.mark.parametrize("mirrored_ocs", [False, True], ids=["arcs", "arcs-extrusion-minus-z"])
def test_arcs_and_an_edge_on_the_axis(tmp_path, mirrored_ocs):
    doc, msp = new_drawing()
    hemispherical_shell(msp, 8.0, 10.0, mirrored_ocs)
    doc.saveas(tmp_path / "shell.dxf")
    _, props, _ = read_props(tmp_path / "shell.dxf")
    assert close(props.area_mm2, 0.25 * math.pi * (100.0 - 64.0))
    assert close(props.volume_mm3, 2.0 / 3.0 * math.pi * (1000.0 - 512.0))


def test_arc_of_more_than_a_half_circle(tmp_path):
    """A round section with a flat: a circle of radius 3 about (r, z) = (10, 30) less the 90 deg segment on
    its outer side, drawn as a chord and a 270 deg bulge (split into arcs of at most a half turn)."""
    radius, half = 3.0, math.pi / 4.0
    c = radius * math.cos(half)
    p, q = (30.0 + c, 10.0 + c), (30.0 - c, 10.0 + c)           # drawing (x = z, y = r)
    doc, msp = new_drawing()
    msp.add_lwpolyline([(*p, -math.tan(1.5 * math.pi / 4.0)), (*q, 0.0)], format="xyb", close=True)
    doc.saveas(tmp_path / "flat.dxf")
    drawing, props, _ = read_props(tmp_path / "flat.dxf")
    segment = 0.5 * radius ** 2 * (2.0 * half - math.sin(2.0 * half))
    centroid = 4.0 * radius * math.sin(half) ** 3 / (3.0 * (2.0 * half - math.sin(2.0 * half)))
    area = math.pi * radius ** 2 - segment
    volume = 2.0 * math.pi * (10.0 * math.pi * radius ** 2 - (10.0 + centroid) * segment)
    assert close(props.area_mm2, area) and close(props.volume_mm3, volume)
    assert sum(isinstance(item, dict) for item in drawing.outline) == 2


def test_a_circle_alone_is_the_outline(tmp_path):
    doc, msp = new_drawing()
    msp.add_circle((30.0, 10.0), 3.0)                     # a ring of round section (a torus)
    doc.saveas(tmp_path / "torus.dxf")
    _, props, _ = read_props(tmp_path / "torus.dxf")
    assert close(props.area_mm2, 9.0 * math.pi)
    assert close(props.volume_mm3, 2.0 * math.pi * 10.0 * 9.0 * math.pi)


def test_a_circle_beside_the_outline_is_ignored_with_a_note(tmp_path):
    doc, msp = new_drawing()
    msp.add_lwpolyline([(0.0, 19.0), (0.0, 20.0), (40.0, 20.0), (40.0, 19.0)], close=True)
    msp.add_circle((20.0, 30.0), 2.0)
    doc.saveas(tmp_path / "with-hole.dxf")
    _, props, notes = read_props(tmp_path / "with-hole.dxf")
    assert close(props.area_mm2, TUBE_AREA)
    assert any("circle" in n for n in notes)


# ---------------------------------------------------------------------------------------------------
# the full profile, the axis

def test_full_profile_of_a_tube_mirrored(tmp_path):
    doc, msp = new_drawing()
    for sign in (1.0, -1.0):
        msp.add_lwpolyline([(0.0, 19.0 * sign), (0.0, 20.0 * sign), (40.0, 20.0 * sign), (40.0, 19.0 * sign)],
                           close=True)
    doc.saveas(tmp_path / "full-tube.dxf")
    _, props, notes = read_props(tmp_path / "full-tube.dxf")
    assert close(props.area_mm2, TUBE_AREA) and close(props.volume_mm3, TUBE_VOLUME)
    assert any("full profile" in n for n in notes)


def test_full_profile_across_the_axis(tmp_path):
    """A bar of radius 10 and length 30 with a hemispherical end, drawn whole: one closed polyline across the
    axis; its half above is a rectangle and a quarter disc."""
    doc, msp = new_drawing()
    msp.add_lwpolyline([(0.0, -10.0, 0.0), (30.0, -10.0, 1.0), (30.0, 10.0, 0.0), (0.0, 10.0, 0.0)],
                       format="xyb", close=True)
    doc.saveas(tmp_path / "bar.dxf")
    _, props, _ = read_props(tmp_path / "bar.dxf")
    assert close(props.area_mm2, 300.0 + 25.0 * math.pi)
    assert close(props.volume_mm3, math.pi * 100.0 * 30.0 + 2.0 / 3.0 * math.pi * 1000.0)


def test_a_sphere_drawn_as_a_circle_on_the_axis(tmp_path):
    doc, msp = new_drawing()
    msp.add_circle((5.0, 0.0), 4.0)
    doc.saveas(tmp_path / "ball.dxf")
    _, props, _ = read_props(tmp_path / "ball.dxf")
    assert close(props.area_mm2, 8.0 * math.pi) and close(props.volume_mm3, 4.0 / 3.0 * math.pi * 64.0)


def test_half_section_drawn_below_the_axis(tmp_path):
    doc, msp = new_drawing()
    msp.add_lwpolyline([(0.0, -19.0), (0.0, -20.0), (40.0, -20.0), (40.0, -19.0)], close=True)
    doc.saveas(tmp_path / "below.dxf")
    _, props, _ = read_props(tmp_path / "below.dxf")
    assert close(props.volume_mm3, TUBE_VOLUME)


@pytest.mark.parametrize("how", ["linetype", "layer", "option"])
def test_axis_away_from_y_zero(tmp_path, how):
    doc, msp = new_drawing()
    if how == "linetype":
        msp.add_line((-5.0, 50.0), (45.0, 50.0), dxfattribs={"linetype": "CENTER"})
    elif how == "layer":
        doc.layers.add("AXIS")
        msp.add_line((-5.0, 50.0), (45.0, 50.0), dxfattribs={"layer": "AXIS"})
    msp.add_lwpolyline([(0.0, 69.0), (0.0, 70.0), (40.0, 70.0), (40.0, 69.0)], close=True)
    doc.saveas(tmp_path / "axis.dxf")
    drawing, props, _ = read_props(tmp_path / "axis.dxf", axis="y=50" if how == "option" else None)
    assert drawing.axis.at == 50.0
    assert close(props.volume_mm3, TUBE_VOLUME)


def test_vertical_axis_given(tmp_path):
    """Drawn with the axis upright at x = 12: x - 12 is the radius, y runs along the axis."""
    doc, msp = new_drawing()
    msp.add_lwpolyline([(31.0, 0.0), (32.0, 0.0), (32.0, 40.0), (31.0, 40.0)], close=True)
    doc.saveas(tmp_path / "upright.dxf")
    _, props, _ = read_props(tmp_path / "upright.dxf", axis="x=12")
    assert close(props.volume_mm3, TUBE_VOLUME)


# ---------------------------------------------------------------------------------------------------
# splines, gaps, blocks, units

def test_spline_within_the_stated_tolerance(tmp_path):
    """A quadratic Bezier (an open spline of degree 2) as the OD: r(t) = sum B_i(t) P_i, z = 10 t. Area
    and volume from the Bernstein integrals, done here with numpy polynomials."""
    control_r = [20.25, 19.75, 20.25]
    doc, msp = new_drawing()
    msp.add_line((0.0, 19.0), (0.0, control_r[0]))
    msp.add_open_spline([(0.0, control_r[0]), (5.0, control_r[1]), (10.0, control_r[2])], degree=2)
    msp.add_line((10.0, control_r[2]), (10.0, 19.0))
    msp.add_line((10.0, 19.0), (0.0, 19.0))
    doc.saveas(tmp_path / "spline.dxf")
    drawing, props, notes = read_props(tmp_path / "spline.dxf")
    t = np.polynomial.Polynomial([0.0, 1.0])
    r = control_r[0] * (1 - t) ** 2 + 2 * control_r[1] * t * (1 - t) + control_r[2] * t ** 2
    area = 10.0 * ((r - 19.0).integ()(1.0) - (r - 19.0).integ()(0.0))
    volume = 10.0 * math.pi * ((r * r - 361.0).integ()(1.0) - (r * r - 361.0).integ()(0.0))
    length = 10.0 * 1.001                      # the curve is 10 mm long and nearly straight (slope <= 0.1)
    assert abs(props.area_mm2 - area) <= CURVE_TOLERANCE_MM * length
    assert abs(props.volume_mm3 - volume) <= 2.0 * math.pi * 20.25 * CURVE_TOLERANCE_MM * length
    assert len(drawing.curves) == 1 and drawing.curves[0].deviation_mm <= CURVE_TOLERANCE_MM
    assert any("SPLINE" in n and "z = 0" in n for n in notes)


def test_small_gaps_are_joined_and_reported(tmp_path):
    doc, msp = new_drawing()
    msp.add_line((0.0, 19.0), (0.0, 20.0))
    msp.add_line((0.0, 20.004), (40.0, 20.0))              # 4 um gap at its start
    msp.add_arc((40.0, 19.5), 0.5, 270.0, 90.0)            # round rim, counter-clockwise on the drawing
    msp.add_line((40.0, 19.0), (0.003, 19.0))              # 3 um short of closing
    doc.saveas(tmp_path / "gaps.dxf")
    _, props, notes = read_props(tmp_path / "gaps.dxf")
    gaps = [n for n in notes if n.startswith("joined a gap")]
    assert len(gaps) == 2 and "0.004 mm" in " ".join(gaps) and "0.003 mm" in " ".join(gaps)
    area, volume = tube_with_round_rim()
    # joined at one of the two ends: the area moves by at most the gap times the length it spans
    assert abs(props.area_mm2 - area) <= 0.004 * 40.0


def test_gap_wider_than_the_join_is_an_open_outline(tmp_path):
    doc, msp = new_drawing()
    msp.add_lwpolyline([(0.0, 19.0), (0.0, 20.0), (40.0, 20.0), (40.0, 19.0), (2.0 * GAP_MM, 19.0)])
    doc.saveas(tmp_path / "open.dxf")
    with pytest.raises(InputError, match=r"open.*x = 0.02, y = 19"):
        read_drawing(tmp_path / "open.dxf")


def test_blocks_are_exploded(tmp_path):
    doc, msp = new_drawing()
    block = doc.blocks.new("SLEEVE")
    block.add_lwpolyline([(0.0, 19.0), (0.0, 20.0), (40.0, 20.0), (40.0, 19.0)], close=True)
    msp.add_blockref("SLEEVE", (5.0, 0.0))
    doc.saveas(tmp_path / "block.dxf")
    drawing, props, _ = read_props(tmp_path / "block.dxf")
    assert close(props.volume_mm3, TUBE_VOLUME)
    assert drawing.outline[0][1] in (5.0, 45.0)


def test_units_option_and_unitless_drawing(tmp_path):
    doc, msp = new_drawing(0)
    msp.add_lwpolyline([(0.0, 0.75), (0.0, 0.8), (1.5, 0.8), (1.5, 0.75)], close=True)
    doc.saveas(tmp_path / "unitless.dxf")
    drawing, props, notes = read_props(tmp_path / "unitless.dxf")
    assert drawing.unit == "mm" and any("$INSUNITS = 0" in n for n in notes)
    assert any("inches" in n for n in notes)                  # 1.6 mm across: probably inches
    drawing, props, notes = read_props(tmp_path / "unitless.dxf", units="inch")
    assert drawing.unit == "inch"
    assert close(props.area_mm2, 1.5 * 0.05 * MM_PER_INCH ** 2)


# ---------------------------------------------------------------------------------------------------
# round trip and the job

ROUND_TRIP_OUTLINE = [[8.0, 0.0], [30.0, 0.0, 0.5], [30.0, 5.0, 0.5], [25.0, 5.0, 1.0], [25.0, 45.0],
                      {"to": [23.8, 45.0], "radius": 0.8}, [23.8, 6.0, 1.0], [8.0, 6.0]]


def test_round_trip_job_to_dxf_to_job(tmp_path, capsys):
    section = section_from_outline(ROUND_TRIP_OUTLINE)
    section_dxf(section, tmp_path / "housing.dxf", "housing")
    main(["import", str(tmp_path / "housing.dxf"), "--material", "al-6061-t6", "--out", str(tmp_path / "job.toml")])
    job = tomllib.loads((tmp_path / "job.toml").read_text())
    again = section_from_outline(job["part"]["outline"])
    assert len(again.segments) == len(section.segments)
    size = 45.0
    for a, b in zip(again.segments, section.segments):
        assert type(a) is type(b)
        assert math.dist(a.start, b.start) <= 1e-11 * size and math.dist(a.end, b.end) <= 1e-11 * size
    first, second = mass_properties(section, 2.7), mass_properties(again, 2.7)
    assert close(second.volume_mm3, first.volume_mm3) and close(second.inertia_axial_kg_mm2,
                                                                 first.inertia_axial_kg_mm2)
    # the written job runs as it is
    main(["section", str(tmp_path / "job.toml"), "--json"])
    assert '"mass_g"' in capsys.readouterr().out


def test_shipped_example_drawing_is_the_housing():
    """data/examples/housing.dxf (tests/make_example_drawing.py) reproduces the demo job's section."""
    examples = Path(__file__).resolve().parents[1] / "data" / "examples"
    drawn = read_job(examples / "housing.toml").section
    read = drawing_section(read_drawing(examples / "housing.dxf"))
    assert len(read.segments) == len(drawn.segments)
    for a, b in zip(read.segments, drawn.segments):
        assert type(a) is type(b) and math.dist(a.start, b.start) <= 1e-12 and math.dist(a.end, b.end) <= 1e-12


def test_job_names_its_drawing(tmp_path):
    doc, msp = new_drawing(1)
    msp.add_lwpolyline([(0.0, 0.75), (0.0, 0.8), (1.5, 0.8), (1.5, 0.75)], close=True, dxfattribs={"layer": "PART"})
    msp.add_lwpolyline([(-1.0, 0.0), (3.0, 0.0), (3.0, 2.0), (-1.0, 2.0)], close=True, dxfattribs={"layer": "FRAME"})
    doc.saveas(tmp_path / "sleeve.dxf")
    (tmp_path / "job.toml").write_text('[material]\nname = "al-6061-t6"\n[part]\ndrawing = "sleeve.dxf"\n'
                                       'layer = "part"\n')
    job = read_job(tmp_path / "job.toml")
    assert job.drawing is not None and job.drawing.unit == "inch"
    assert close(mass_properties(job.section, 1.0).area_mm2, 1.5 * 0.05 * MM_PER_INCH ** 2)


# ---------------------------------------------------------------------------------------------------
# bad drawings: one error line, exit 2

def run_import(path, *options):
    try:
        main(["import", str(path), *options])
    except SystemExit as exc:
        return exc.code
    return 0


def two_outlines(msp):
    msp.add_lwpolyline([(0.0, 19.0), (0.0, 20.0), (40.0, 20.0), (40.0, 19.0)], close=True,
                       dxfattribs={"layer": "A"})
    msp.add_lwpolyline([(0.0, 29.0), (0.0, 30.0), (40.0, 30.0), (40.0, 29.0)], close=True,
                       dxfattribs={"layer": "B"})


BAD = {
    "open chain": (lambda msp: msp.add_lwpolyline([(0.0, 19.0), (0.0, 20.0), (40.0, 20.0)]), "outline is open"),
    "two outlines": (two_outlines, "2 closed outlines"),
    "only the axis": (lambda msp: msp.add_line((0.0, 0.0), (40.0, 0.0)), "on the axis"),
    "only a centre line": (lambda msp: msp.add_line((0.0, 5.0), (40.0, 5.0), dxfattribs={"linetype": "CENTER"}),
                           "only centre lines"),
    "no entities": (lambda msp: None, "no entities"),
    "three ends meet": (lambda msp: [msp.add_lwpolyline([(0.0, 19.0), (0.0, 20.0), (40.0, 20.0), (40.0, 19.0)],
                                                       close=True), msp.add_line((40.0, 20.0), (50.0, 25.0))],
                        "3 ends meet at (x = 40, y = 20 mm)"),
}


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_drawings(tmp_path, capsys, case):
    draw, words = BAD[case]
    doc, msp = new_drawing()
    draw(msp)
    doc.saveas(tmp_path / "bad.dxf")
    assert run_import(tmp_path / "bad.dxf") == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert err[-1].startswith(f"error: {tmp_path / 'bad.dxf'}: ") and words in err[-1]
    assert "Traceback" not in "\n".join(err)


@pytest.mark.parametrize("content, words", [(b"", "is empty"), (b"[part]\noutline = 1\n", "not a DXF"),
                                            (b"0\nSECTION\n2\nENTITIES\n0\nLINE\n10\nx\n", "damaged")])
def test_not_a_dxf(tmp_path, capsys, content, words):
    (tmp_path / "bad.dxf").write_bytes(content)
    assert run_import(tmp_path / "bad.dxf") == 2
    assert words in capsys.readouterr().err


def test_unknown_layer_lists_the_layers(tmp_path, capsys):
    doc, msp = new_drawing()
    two_outlines(msp)
    doc.saveas(tmp_path / "two.dxf")
    assert run_import(tmp_path / "two.dxf", "--layer", "C") == 2
    assert '"A" (1), "B" (1)' in capsys.readouterr().err
    assert run_import(tmp_path / "two.dxf", "--layer", "b") == 0


def test_job_with_a_bad_drawing_names_the_key(tmp_path, capsys):
    (tmp_path / "job.toml").write_text('[material]\nname = "al-6061-t6"\n[part]\ndrawing = "missing.dxf"\n')
    try:
        main(["section", str(tmp_path / "job.toml")])
    except SystemExit as exc:
        assert exc.code == 2
    assert "part.drawing: missing.dxf: file: no such file" in capsys.readouterr().err
    (tmp_path / "both.toml").write_text('[material]\nname = "al-6061-t6"\n[part]\ndrawing = "a.dxf"\n'
                                        "outline = [[1.0, 0.0], [2.0, 0.0], [2.0, 1.0]]\n")
    with pytest.raises(InputError, match="either outline or drawing"):
        read_job(tmp_path / "both.toml")


def test_import_never_overwrites(tmp_path, capsys):
    doc, msp = new_drawing()
    msp.add_lwpolyline([(0.0, 19.0), (0.0, 20.0), (40.0, 20.0), (40.0, 19.0)], close=True)
    doc.saveas(tmp_path / "tube.dxf")
    (tmp_path / "job.toml").write_text("mine")
    assert run_import(tmp_path / "tube.dxf", "--out", str(tmp_path / "job.toml")) == 2
    assert (tmp_path / "job.toml").read_text() == "mine"


# ---------------------------------------------------------------------------------------------------
# drawings out

PREDICT_JOB = """
[job]
title = "sleeve"
[material]
name = "al-6061-t6"
[part]
outline = [[19.0, 0.0], [20.0, 0.0], [20.0, 30.0, 0.3], [19.0, 30.0]]
[[held]]
r = [0.0, 100.0]
z = [0.0, 5.0]
[stock]
outline = [[19.0, 0.0], [20.3, 0.0], [20.3, 30.0], [19.0, 30.0]]
[[tool]]
name = "T1"
insert = "DCMT11T304"
approach = 93.0
[[pass]]
name = "finish OD"
surface = "od"
tool = "T1"
allowance = 0.0
feed = 0.1
speed = 200.0
z = [31.0, 5.0]
"""


def test_predict_writes_the_drawn_and_predicted_sections(tmp_path, capsys):
    (tmp_path / "job.toml").write_text(PREDICT_JOB)
    main(["predict", str(tmp_path / "job.toml"), "--json", "--dxf", str(tmp_path / "out.dxf")])
    payload = json.loads(capsys.readouterr().out)
    assert "rules" in payload and "findings" in payload["rules"]
    drawn = drawing_section(read_drawing(tmp_path / "out.dxf", layer="SECTION"))
    job = read_job(tmp_path / "job.toml")
    assert close(mass_properties(drawn, 2.7).mass_g, payload["nominal"]["mass_g"])
    predicted = drawing_section(read_drawing(tmp_path / "out.dxf", layer="PREDICTED"))
    assert close(mass_properties(predicted, 2.7).mass_g, payload["predicted"]["mass_g"], rel=1e-9)
    doc = ezdxf.readfile(tmp_path / "out.dxf")
    magnified = [layer.dxf.name for layer in doc.layers if layer.dxf.name.startswith("MATERIAL-LEFT-X")]
    assert len(magnified) == 1
    assert any(e.dxf.layer == magnified[0] for e in doc.modelspace())
    assert len(job.section.segments) == len(drawn.segments)
