"""Design revision: for each wall, the thinnest drawn wall that holds the drawing with the recommended
finishing, and what a change of wall costs in mass and axial inertia.

Takes the job as parsed TOML (its `[part]` outline, in the file's units) with its path, and the recommended
finishing (the changes of `tune`'s first option); gives a `WallRevision` per wall. A wall is a cylindrical OD
and a cylindrical bore facing each other over at least `SHORTEST_WALL_MM` of height, no thicker than
`THIN_SHARE` of the OD's radius. The wall is made thinner
or thicker by moving its bore (the OD is more often a fit to something else); the stock must still hold the
part. For every wall tried, the recommended finishing is predicted as it is and, where it does not hold, with
its wear offsets centred again in the band (`tune.recentred`: a stiffer wall pushes off less; a compensated
contour is kept as found for the drawn wall). The material left falls as the wall thickens, so the thinnest wall that holds is found
by bisection on a ladder of `STEP_MM`.
"""

from __future__ import annotations

import copy
from dataclasses import dataclass

import numpy as np

from deflect.decisions.tune import Change, Outcome, Search, recentred, surfaces_of
from deflect.errors import InputError, ModelError
from deflect.geometry.section import Section, mass_properties
from deflect.job.reader import MM_PER_INCH, parse_job
from deflect.machining.simulate import CYLINDER_COS, kept_workers

SHORTEST_WALL_MM = 2.0          # an OD and a bore facing each other over less than this are not a wall
THIN_SHARE = 0.25               # ... nor are they when thicker than this share of the OD radius (a hub, a flange)
STEP_MM = 0.05                  # the ladder of wall thicknesses tried
THINNEST_SHARE = 0.3            # thinnest wall tried, as a share of the drawn one
THICKEST_EXTRA = 1.0            # thickest wall tried: drawn + this share of the drawn one
SAMPLE_MM = 0.1
NODE_SLACK_MM = 2.0             # outline nodes on the bore's radius this far beyond the wall's height still move
                                # (the fillets at its ends shorten the cylindrical stretch)


@dataclass(frozen=True)
class Wall:
    z_low_mm: float              # the height over which the OD and the bore face each other
    z_high_mm: float
    od_radius_mm: float
    bore_radius_mm: float

    @property
    def thickness_mm(self) -> float:
        return self.od_radius_mm - self.bore_radius_mm


@dataclass(frozen=True)
class WallRevision:
    wall: Wall
    thinnest_mm: float | None    # thinnest drawn wall that holds with the recommended finishing (None: none tried)
    note: str                    # where the search stopped and why
    drawn_mass_g: float
    drawn_inertia_kg_mm2: float
    mass_g: float | None         # of the part drawn with the thinnest wall that holds
    inertia_kg_mm2: float | None
    outcome: Outcome | None      # the prediction at that wall


def walls_of(section: Section) -> list[Wall]:
    """Cylindrical OD and bore stretches facing each other: for each OD radius the nearest bore below it."""
    samples = section.sample(SAMPLE_MM)
    points, normals = samples.points, samples.normals
    stretches = {}
    for side, sign in (("od", 1.0), ("id", -1.0)):
        mine = sign * normals[:, 0] > CYLINDER_COS
        for radius in np.unique(np.round(points[mine, 0], 6)):
            z = points[mine & (np.abs(points[:, 0] - radius) < 1e-6), 1]
            stretches.setdefault(side, []).append((float(radius), float(z.min()), float(z.max())))
    walls = []
    for r_od, z0, z1 in stretches.get("od", []):
        facing = [(r, max(z0, a), min(z1, b)) for r, a, b in stretches.get("id", []) if r < r_od]
        facing = [f for f in facing if f[2] - f[1] >= SHORTEST_WALL_MM and r_od - f[0] <= THIN_SHARE * r_od]
        if facing:
            r_bore, low, high = max(facing)
            walls.append(Wall(z_low_mm=low, z_high_mm=high, od_radius_mm=r_od, bore_radius_mm=r_bore))
    return walls


def revised_data(data: dict, wall: Wall, thickness_mm: float) -> dict:
    """The job's TOML data with the wall's bore moved so that the wall is thickness_mm thick."""
    factor = MM_PER_INCH if data.get("job", {}).get("units", "mm") == "inch" else 1.0
    new_r = (wall.od_radius_mm - thickness_mm) / factor
    old_r = wall.bore_radius_mm / factor
    tol = 1e-9 * max(1.0, old_r)
    revised = copy.deepcopy(data)
    for node in revised["part"]["outline"]:
        point = node["to"] if isinstance(node, dict) else node
        on_bore = abs(point[0] - old_r) <= tol
        within = (wall.z_low_mm - NODE_SLACK_MM) / factor <= point[1] <= (wall.z_high_mm + NODE_SLACK_MM) / factor
        if on_bore and within:
            point[0] = new_r
    return revised


def predict_wall(data: dict, path: str, wall: Wall, thickness_mm: float, changes: tuple[Change, ...],
                 tolerances, memo: dict) -> Outcome | None:
    """The part drawn with this wall, finished as recommended; where that does not hold, with its wear
    offsets centred again (`tune.recentred`). None if it cannot be drawn, held by the stock, or predicted."""
    try:
        job = parse_job(revised_data(data, wall, thickness_mm), path)
        search = Search(job=job, tolerances=tolerances, memo=memo)
        outcome = search.evaluate(changes)
        if outcome is None:
            return None
        if not outcome.meets:
            changes = recentred(search, changes, surfaces_of(search.process, outcome.prediction))
        return search.evaluate(changes, with_ranges=True)
    except (InputError, ModelError):
        return None


def revise_walls(data: dict, path: str, job, changes: tuple[Change, ...], tolerances,
                 progress=None) -> list[WallRevision]:
    """For each wall of the drawn part: the thinnest wall on the ladder that holds (module docstring)."""
    with kept_workers():
        return revisions_of(data, path, job, changes, tolerances, progress)


def revisions_of(data: dict, path: str, job, changes: tuple[Change, ...], tolerances, progress) -> list[WallRevision]:
    density = job.material.density_g_cm3
    drawn = mass_properties(job.section, density)
    memo: dict = {}
    revisions = []
    for wall in walls_of(job.section):
        # steps of STEP_MM either side of the drawn wall, the drawn wall itself among them
        steps = np.arange(-int((1.0 - THINNEST_SHARE) * wall.thickness_mm / STEP_MM),
                          int(THICKEST_EXTRA * wall.thickness_mm / STEP_MM) + 1)
        ladder = wall.thickness_mm + STEP_MM * steps
        cache = {}

        def holds(index: int):
            if index not in cache:
                cache[index] = predict_wall(data, path, wall, float(ladder[index]), changes, tolerances, memo)
                if progress:
                    progress()
            outcome = cache[index]
            return outcome is not None and outcome.meets

        drawn_index = int(np.flatnonzero(steps == 0)[0])
        if holds(drawn_index):
            low, high, note = 0, drawn_index, ""
            if holds(low):
                high, note = low, f"holds down to the thinnest wall tried ({ladder[0]:.2f} mm)"
        else:
            low, high, note = drawn_index, len(ladder) - 1, ""
            if not holds(high):
                revisions.append(WallRevision(
                    wall=wall, thinnest_mm=None, drawn_mass_g=drawn.mass_g,
                    drawn_inertia_kg_mm2=drawn.inertia_axial_kg_mm2, mass_g=None, inertia_kg_mm2=None, outcome=None,
                    note=f"does not hold even at {ladder[-1]:.2f} mm (the thickest wall tried) with this finishing, "
                         "or the stock does not hold so thick a wall"))
                continue
        while high - low > 1:
            middle = (low + high) // 2
            if holds(middle):
                high = middle
            else:
                low = middle
        thinnest = float(ladder[high])
        revised = parse_job(revised_data(data, wall, thinnest), path)
        props = mass_properties(revised.section, density)
        revisions.append(WallRevision(wall=wall, thinnest_mm=thinnest, note=note, drawn_mass_g=drawn.mass_g,
                                      drawn_inertia_kg_mm2=drawn.inertia_axial_kg_mm2, mass_g=props.mass_g,
                                      inertia_kg_mm2=props.inertia_axial_kg_mm2, outcome=cache[high]))
    return revisions

