"""Drawings out: half-sections, predictions and compensated contours as DXF files (written with ezdxf).

Formatting only; no physics is computed here. The drawings follow the convention `deflect.job.drawing`
reads: drawing x is z (along the spin axis), drawing y is r, in millimetres ($INSUNITS = 4), the axis a centre
line on layer AXIS. A section is one closed LWPOLYLINE whose arcs are bulges (bulge = tan(theta / 4), positive
counter-clockwise; DXF reference, LWPOLYLINE group code 42), so a drawn section read back gives the same
lines and arcs. Layers:

    SECTION            the drawn (nominal) half-section
    AXIS               the spin axis (linetype CENTER)
    PREDICTED          the predicted as-machined section, at true scale
    MATERIAL-LEFT-X<k> the material left beyond the drawn surface, drawn k times magnified along the normals
    COMPENSATED        a compensated finishing contour (`deflect tune --contour`)
    NOTES              text: what the file holds, magnification, cautions

Files are written to a temporary name beside the target and moved into place when complete, so a failed
write never leaves half a drawing.
"""

from __future__ import annotations

import math
import os
import tempfile
from pathlib import Path

import numpy as np

from deflect.errors import InputError
from deflect.geometry.section import Arc, Section
from deflect.output.figures import magnification

LAYERS = {"SECTION": 7, "AXIS": 1, "PREDICTED": 5, "COMPENSATED": 3, "NOTES": 8}   # ACI colours
MATERIAL_LEFT_COLOUR = 1
TEXT_HEIGHT_SHARE = 0.02          # text height as a share of the part's size
AXIS_OVERRUN_SHARE = 0.05         # the centre line runs this share of the length beyond the part's ends


def _document():
    import ezdxf

    doc = ezdxf.new("R2010", setup=True)   # setup: the standard linetypes, CENTER among them
    doc.header["$INSUNITS"] = 4            # millimetres
    doc.header["$MEASUREMENT"] = 1         # metric
    for name, colour in LAYERS.items():
        doc.layers.add(name, color=colour, linetype="CENTER" if name == "AXIS" else "CONTINUOUS")
    return doc


def _xy(point) -> tuple[float, float]:
    """(r, z) -> drawing (x, y) = (z, r)."""
    return (float(point[1]), float(point[0]))


def _bulge(seg) -> float:
    """The bulge of a segment drawn with x = z, y = r: swapping the axes mirrors, so a counter-clockwise
    arc in (r, z) runs clockwise on the drawing."""
    if not isinstance(seg, Arc):
        return 0.0
    return math.tan(seg.sweep / 4.0) * (-1.0 if seg.ccw else 1.0)


def add_section(msp, section: Section, layer: str = "SECTION") -> None:
    """The section as one closed polyline of lines and bulged arcs."""
    points = [(*_xy(seg.start), _bulge(seg)) for seg in section.segments]
    msp.add_lwpolyline(points, format="xyb", close=True, dxfattribs={"layer": layer})


def add_polyline(msp, rz: np.ndarray, layer: str, closed: bool) -> None:
    msp.add_lwpolyline([_xy(p) for p in rz], format="xy", close=closed, dxfattribs={"layer": layer})


def add_axis(msp, section: Section) -> None:
    r_min, r_max, z_min, z_max = section.bounds()
    overrun = AXIS_OVERRUN_SHARE * max(z_max - z_min, r_max)
    msp.add_line((z_min - overrun, 0.0), (z_max + overrun, 0.0), dxfattribs={"layer": "AXIS"})


def add_notes(msp, section: Section, lines: list[str]) -> None:
    r_min, r_max, z_min, z_max = section.bounds()
    size = max(z_max - z_min, r_max)
    height = TEXT_HEIGHT_SHARE * size
    for k, line in enumerate(lines):
        msp.add_text(line, height=height, dxfattribs={"layer": "NOTES"}).set_placement(
            (z_min, r_max + (len(lines) - k + 1) * 1.6 * height))


def write_document(doc, path, key: str) -> Path:
    """Write the drawing to path by way of a temporary file in the same folder."""
    path = Path(path)
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        handle, temporary = tempfile.mkstemp(suffix=".dxf.part", dir=path.parent)
        os.close(handle)
        try:
            doc.saveas(temporary)
            os.replace(temporary, path)
        finally:
            if os.path.exists(temporary):
                os.remove(temporary)
    except OSError as exc:
        raise InputError(key, f"cannot write {str(path)!r} ({exc.strerror or exc})") from None
    return path


def section_dxf(section: Section, path, title: str, key: str = "--dxf") -> Path:
    """A drawing of one half-section with its axis."""
    doc = _document()
    msp = doc.modelspace()
    add_section(msp, section)
    add_axis(msp, section)
    add_notes(msp, section, [f"{title}: half-section, x = z along the spin axis, y = r (mm)"])
    return write_document(doc, path, key)


def material_left_runs(deviation, factor: float) -> list[np.ndarray]:
    """The material left drawn `factor` times magnified along the normals, as polylines: one per stretch of
    the boundary sampled without a break (the points on the spin axis are left out of the deviation)."""
    points = deviation.points_rz + factor * deviation.deviation_mm[:, None] * deviation.normals
    steps = np.linalg.norm(np.diff(deviation.points_rz, axis=0), axis=1)
    usual = float(np.median(steps)) if len(steps) else 0.0
    breaks = np.flatnonzero(steps > 3.0 * usual) + 1
    return [run for run in np.split(points, breaks) if len(run) > 1]


def prediction_dxf(pred, section: Section, path, key: str = "--dxf") -> Path:
    """The drawn section, the predicted as-machined section at true scale, and the material left magnified
    (the factor in the layer's name and in a note), with the axis."""
    doc = _document()
    msp = doc.modelspace()
    add_section(msp, section)
    add_axis(msp, section)
    add_polyline(msp, pred.machined_rz, "PREDICTED", closed=True)
    d = pred.deviation
    r_min, r_max, z_min, z_max = section.bounds()
    factor = magnification(float(np.max(np.abs(d.deviation_mm), initial=0.0)), max(z_max - z_min, r_max - r_min))
    layer = f"MATERIAL-LEFT-X{factor:g}"
    doc.layers.add(layer, color=MATERIAL_LEFT_COLOUR)
    for run in material_left_runs(d, factor):
        add_polyline(msp, run, layer, closed=False)
    add_notes(msp, section, [
        f"{pred.title}: drawn section (SECTION), predicted as machined at true scale (PREDICTED)",
        f"material left beyond the drawn surface x {factor:g} on {layer}; largest "
        f"{1e3 * pred.max_deviation_mm.value:.1f} um a side; x = z, y = r (mm)",
        "predictions are estimates: confirm them on a first article"])
    return write_document(doc, path, key)


def contour_dxf(rows: np.ndarray, section: Section, pass_name: str, path, key: str = "--contour") -> Path:
    """A compensated finishing contour (rows of Z, X on diameter, compensation a side) as a polyline on
    COMPENSATED, beside the drawn section."""
    doc = _document()
    msp = doc.modelspace()
    add_section(msp, section)
    add_axis(msp, section)
    rz = np.column_stack([0.5 * rows[:, 1], rows[:, 0]])
    add_polyline(msp, rz, "COMPENSATED", closed=False)
    add_notes(msp, section, [
        f"{pass_name}: compensated finishing contour (COMPENSATED) over the drawn section (SECTION); x = z, y = r",
        "the part's contour, not the tool centre: run it with tool nose radius compensation; prove it out first"])
    return write_document(doc, path, key)
