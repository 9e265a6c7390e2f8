"""The shell model of a wall thinned at its free end (a short stub above a step) against a 3-D solid.

Check solver: `solid_of_revolution.py` beside this module (test-only, nothing imported from deflect.mechanics),
the semi-analytical finite-element method for axisymmetric solids under non-axisymmetric loads,
    E. L. Wilson, "Structural analysis of axisymmetric solids", AIAA Journal 3 (1965) 2269-2274;
    O. C. Zienkiewicz, R. L. Taylor, The Finite Element Method, vol. 1 (axisymmetric solids) and vol. 2
    (semi-analytical finite-element processes),
checked against closed forms in `test_against_3d_solid.py` (Lame's thick cylinder, a Timoshenko cantilever tube,
harmonic patch tests).

The case: the demo housing as the first pass (rough OD, feeding from the rim towards the flange) leaves it at
its first key station, made of rectangles (the small fillets dropped): flange r 8..30, z 0..5, bottom r 8..22.6
up to z 6, the stock wall r 22.6..26.2 up to the step, and above the step the stub the tool has already
turned to r 25.3, up to the rim at z = 46; held in the jaws' box r 29..31, z 0..5. Aluminium E 68900 MPa,
nu 0.33; the simulation's contact patch, 1 mm along the wall by 2 mm round it. The shell is built as the
simulation builds it (`section_of_polygon` of the outline, strict_patch=False, element 0.5 mm, harmonic
tolerance 1e-3). On the demo's own in-process shapes (fillets and all, cut as the simulation cuts them) the shell
reads 1.0592e-4 mm/N at the first key station (stub 1.9 mm, pruned) and 1.0701e-4 at the second (stub 3.8 mm,
kept), 0.3 % and 0.8 % from its readings on these rectilinear outlines.

The shell's mid-surface is the pruned medial axis of the section (H. Blum, "A transformation for extracting new
descriptors of shape", in Models for the Perception of Speech and Visual Form, MIT Press, 1967). A tip branch
reaching less than two radii of the disc at its junction is pruned as a corner artefact; here the stub's branch
reaches 0.98 of that at 1.9 mm, so a stub 2.7 mm thick and shorter than 2 mm (1.95 mm pruned, 2.0 mm kept) goes
with the step corner's bisector and the stock wall's mid-surface (r 24.4, t 3.6) runs on to the rim: the shell sees
no stub. From 2 mm on the stub stays (nodes at t 2.7 to the rim, at r 23.95, or drifting to 23.7 at the rim of a
stub only just kept; the thickness tapers from 3.6 to 2.7 over the 1.5 mm below the step, where the mid-surface
jogs by 0.45 mm).

Measured (shell / solid - 1; the solid refined: 0.125 mm at the patch ends, 0.5 mm away, harmonics to 1e-4):

| stub mm | shell's mesh | contact (25.3, step+0.5) | rim (25.3, 45.5) | wall (26.2, step-2) | wall (26.2, 30) |
| 1.0     | stub pruned  | -4.2 %                   | (= contact)      | -0.3 %              | -0.3 %          |
| 1.9     | stub pruned  | -7.0 %                   | -10.1 %          | -2.9 %              | -0.7 %          |
| 1.95 *  | stub pruned  | -6.9 %                   | -10.3 %          | -2.8 %              |                 |
| 2.0 *   | stub kept    | +13.3 %                  | +12.9 %          | +9.6 %              |                 |
| 3.0     | stub kept    | +11.2 %                  | +10.7 %          | +8.6 %              | +1.2 %          |
| 3.8     | stub kept    | +10.5 %                  | +9.7 %           | +8.2 %              | +1.4 %          |
| 6.0     | stub kept    | +8.7 %                   | +6.9 %           | +7.2 %              | +1.7 %          |

(* against the test's solid, 0.25 % below the refined one.) Between 1.95 and 2.0 mm of stub the shell's
compliance at the tool jumps by 21 % while the solid's moves by 0.5 %.

The pruned shell is the stock wall to the rim (its compliance at the rim, 1.2135e-4 mm/N, is that of a plain
3.6 mm wall, 1.2146e-4), so it misses the stub's lost stiffness and reads low, -7 % at the tool. Measured once
with the stub's tip branch forced to stay (the pruning test wrapped in a scratch script, deflect unchanged), the
1.9 mm stub reads +13.6 % at the tool (+13.2 % at the rim, +9.5 % below the step), the 1.0 mm one +12.5 %: 22 %
above the pruned shell and farther from the solid, as the longer kept stubs are (+9 .. +11 %). Of that, about
+5 % is the shell's error on a plain 2.7 mm wall at this height (measured +4.9 % at z 44.6 on a wall r 22.6..25.3
from the flange to the rim, +3.4 % on the 3.6 mm one) and the rest is the step: in the solid the wall is
full-thickness metal up to the step, in the shell it thins over the 1.5 mm below it.

Along the demo's first pass the shell's compliance at the tool hardly changes from the first key station to the
second (+1 %: the stub appears just as the tool moves down), where the solid's falls by 15 %.

So at the tool the pruned short stub is within the 10 % aim near junctions (the acceptance check's words, as in
`test_against_3d_solid.py`) and closer to the solid than keeping the stub would be; the rim of the 1.9 mm stub,
-10.1 %, sits at the aim's edge and is not asserted here (the test's coarse solid reads it at -10.0 %, so a pass
or a strict xfail would hang on the mesh's last 0.1 %).

Convergence, checked once by refinement: the test's solid (0.5 mm at the patch ends growing to 2 mm, harmonics to
1e-4) is within 0.35 % of the refined one above (contact -0.24 %, mid-height -0.32 %), which the next coarser
(0.25 / 1 mm) already matches to 0.11 %; harmonics summed to 1e-5 instead of 1e-4 move that one by at most
0.26 %. The shell at element 0.125 mm and tolerance 1e-4 moves by at most 0.26 % from the simulation's 0.5 mm and
1e-3 (0.47 % on the 3.8 mm stub). The test takes about 3 s.
"""

import numpy as np
import pytest
from solid_of_revolution import Rect, face_patch, structured_solid
from threadpoolctl import threadpool_limits

from deflect.geometry.boxes import HeldBox
from deflect.machining.simulate import section_of_polygon
from deflect.mechanics.compliance import Patch, WallModel

E_MPA, NU = 68900.0, 0.33                  # aluminium, as test_against_3d_solid.py
PATCH_MM = (1.0, 2.0)                      # the simulation's contact patch (simulate.CONTACT_PATCH)
SHELL_TOL, SHELL_ELEMENT_MM = 1e-3, 0.5    # the simulation's harmonic tolerance and element size
SOLID_MESH = (0.5, 2.0, 1e-4)              # fine / coarse element mm, harmonic tolerance: within 0.25 % of refined
JUNCTION_AIM = 0.10                        # the acceptance check: 10 % on thick walls and near junctions

RIM_Z, STUB_MM = 46.0, 1.9                 # the demo's first key station: the tool at r 25.3, z 44.1
STEP_Z = RIM_Z - STUB_MM
STOCK_OD, CUT_OD, BORE = 26.2, 25.3, 22.6
OUTLINE = [[8.0, 0.0], [30.0, 0.0], [30.0, 5.0], [STOCK_OD, 5.0], [STOCK_OD, STEP_Z], [CUT_OD, STEP_Z],
           [CUT_OD, RIM_Z], [BORE, RIM_Z], [BORE, 6.0], [8.0, 6.0]]
RECTS = [Rect((8.0, 30.0), (0.0, 5.0)), Rect((8.0, BORE), (5.0, 6.0)), Rect((BORE, STOCK_OD), (5.0, STEP_Z)),
         Rect((BORE, CUT_OD), (STEP_Z, RIM_Z))]
HELD = ((29.0, 31.0), (0.0, 5.0))          # the job's jaws on the flange
POINTS = {                                 # on OD faces, outward normal +r
    "tool contact on the stub": (CUT_OD, STEP_Z + 0.5 * PATCH_MM[0]),   # half a patch behind the tool tip
    "stock wall below the step": (STOCK_OD, STEP_Z - 2.0),
    "stock wall mid-height": (STOCK_OD, 30.0),
}


@pytest.fixture(scope="module")
def compared():
    """{point: (solid, shell)} normal compliance [mm/N], and the shell's thickness at its top node [mm]."""
    fine_mm, coarse_mm, tol = SOLID_MESH
    patches = [face_patch(point, (1.0, 0.0), *PATCH_MM) for point in POINTS.values()]
    with threadpool_limits(limits=1):
        solid = structured_solid(RECTS, [Rect(*HELD)], patches, E_MPA, NU, fine_mm, coarse_mm)
        solid_values, _ = solid.patch_compliance(patches, tol)
        model = WallModel(section_of_polygon(np.array(OUTLINE)), [HeldBox(*HELD, "held[0]")], E_MPA, NU,
                          Patch(*PATCH_MM), SHELL_TOL, strict_patch=False, element_mm=SHELL_ELEMENT_MM)
        results = model.at_contacts(list(POINTS.values()), [np.array([1.0, 0.0])] * len(POINTS))
    for result, point in zip(results, POINTS.values()):   # the same point as the solid's
        assert (result.r_mm, result.z_mm) == pytest.approx(point, abs=1e-6)
    mesh = model.geometry.mesh
    rim_thickness_mm = float(mesh.thickness_mm[np.argmax(mesh.nodes_rz[:, 1])])
    table = {name: (value, result.matrix_mm_per_n[0, 0])
             for name, value, result in zip(POINTS, solid_values, results)}
    return table, rim_thickness_mm


@pytest.mark.parametrize("point", list(POINTS))
def test_short_thinned_stub_against_solid(compared, point):
    """Measured against the refined solid (module docstring): tool contact -7.0 %, below the step -2.9 %,
    mid-height -0.7 %; the shell's mesh has no stub (stock-thick, 3.6 mm, to the rim)."""
    table, rim_thickness_mm = compared
    solid, shell = table[point]
    print(f"stub {STUB_MM} mm, {point}: solid {solid:.4e} mm/N, shell {shell:.4e} mm/N ({shell / solid - 1:+.2%}, "
          f"aim {JUNCTION_AIM:.0%}); shell thickness at the rim {rim_thickness_mm:.2f} mm")
    assert solid > 0 and shell > 0
    assert abs(shell / solid - 1.0) < JUNCTION_AIM
