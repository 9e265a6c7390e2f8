"""Compliance of the held part at boundary points, under a contact patch.

Takes the section, its held boxes and the material; gives, for each boundary point asked for, the 3x3
compliance [mm/N] of the wall under a unit force spread uniformly over a patch of `length_mm` along the
section boundary and `width_mm` around the circumference. Axes of the 3x3, in this order:
    0  normal: into the material along the boundary's inward normal (the passive force of a turning tool)
    1  circumferential: +theta (the cutting force)
    2  along the boundary: the section's counter-clockwise tangent (the feed force of an od or id pass)
Entry (i, j) is the patch-averaged displacement along axis i per newton along axis j; positive on the
diagonal when the surface moves with the force.

The wall is the shell model of `deflect.mechanics.shell` (mid-surface derived from the section, Fourier harmonics
around the circumference); the patch enters as its angular window's Fourier series and as load points along
the meridian, and the harmonic sum stops at a stated relative tolerance (see `deflect.mechanics.shell.harmonic`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from deflect.errors import InputError
from deflect.geometry.boxes import HeldBox
from deflect.geometry.section import Section
from deflect.mechanics.shell.harmonic import HarmonicShell, ShellLoad
from deflect.mechanics.shell.harmonic import compliance as harmonic_compliance
from deflect.mechanics.shell.midsurface import ShellGeometry, shell_from_section

DEFAULT_TOLERANCE = 1e-3          # estimated relative error of the summed harmonic series
CORNER_ANGLE_DEG = 45.0           # the patch stays on its face: it stops where the boundary turns more than this
PATCH_POINTS = 8                  # Gauss-Legendre points along the patch (meridian direction)
FAR_FROM_BOUNDARY_MM = 1.0        # an --at point farther than this (or 2 % of the part's size) is refused
_GAUSS_NODES, _GAUSS_WEIGHTS = np.polynomial.legendre.leggauss(PATCH_POINTS)


@dataclass(frozen=True)
class Patch:
    """The contact patch: length along the section boundary and width around the circumference [mm]."""

    length_mm: float = 2.0
    width_mm: float = 2.0


@dataclass(frozen=True)
class PointCompliance:
    """Compliance at one boundary point."""

    r_mm: float                    # the loaded boundary point
    z_mm: float
    nr: float                      # unit outward normal there
    nz: float
    matrix_mm_per_n: np.ndarray    # (3, 3): normal, circumferential, along the boundary (module docstring)
    harmonics: int                 # highest Fourier harmonic summed (over the points computed together)
    along_mm: float | None = None  # where the point lies along the boundary, from the outline's first node
                                   # counter-clockwise [mm] (None for a point given by coordinates alone)

    @property
    def normal_mm_per_n(self) -> float:
        return float(self.matrix_mm_per_n[0, 0])


def check_patch(patch: Patch) -> None:
    for name, value in (("length", patch.length_mm), ("width", patch.width_mm)):
        if not (math.isfinite(value) and value > 0):
            raise InputError("--patch", f"the patch {name} must be a positive number of mm, got {value:g}")


def element_size_mm(section: Section, patch: Patch) -> float:
    """Meridian element length: a quarter of the patch, so the load and the harmonics it excites are resolved,
    bounded so that the mesh has between about 40 and 1600 elements along the boundary."""
    half_perimeter = section.perimeter() / 2.0
    size = min(patch.length_mm, patch.width_mm) / 4.0
    return float(np.clip(size, half_perimeter / 1600.0, half_perimeter / 40.0))


class WallModel:
    """The shell model of one held section, built once and asked for compliance at many points."""

    def __init__(self, section: Section, held: list[HeldBox], E_mpa: float, nu: float,
                 patch: Patch = Patch(), tolerance: float = DEFAULT_TOLERANCE, strict_patch: bool = True,
                 element_mm: float | None = None):
        """strict_patch: refuse a patch longer than the face it sits on or wider than half the circumference
        (the command line's rules: the user chose the patch); the machining simulation passes False, since a
        tool near the part's end bears on what face there is, and near the axis on what circumference there
        is (`half_angle_rad`).
        element_mm: meridian element length; by default `element_size_mm(section, patch)`."""
        check_patch(patch)
        if patch.length_mm > section.perimeter() / 2.0:
            # no face is that long; and the walk along a face must end (a section without corners has none)
            raise InputError("--patch", f"the patch is {patch.length_mm:g} mm long, more than half the section's "
                                        f"boundary ({section.perimeter() / 2.0:.4g} mm); give a shorter patch")
        self.strict_patch = strict_patch
        self.section = section
        self.patch = patch
        self.tolerance = tolerance
        self.geometry: ShellGeometry = shell_from_section(section, held, element_mm or element_size_mm(section, patch))
        self.shell = HarmonicShell(self.geometry.mesh, E_mpa, nu)
        # Where the wall is held, the compliance tends to zero and a relative tolerance means nothing; there
        # the series is summed to tol times the contact scale of the patch, (1 - nu^2) / (E sqrt(A W)) (the
        # order of a half-space's compliance under such a patch, Johnson, Contact Mechanics, 1985, ch. 3).
        self.floor_mm_per_n = (1.0 - nu**2) / (E_mpa * math.sqrt(patch.length_mm * patch.width_mm))
        r_min, r_max, z_min, z_max = section.bounds()
        self.far_mm = max(FAR_FROM_BOUNDARY_MM, 0.02 * max(r_max - r_min, z_max - z_min))
        self.step_mm = section.perimeter() / 4000.0

    def snap(self, r: float, z: float, key: str = "--at") -> tuple[float, np.ndarray, np.ndarray]:
        """Nearest boundary point of an asked point: (arclength, point, outward normal)."""
        point, normal, arclength, distance = self.section.closest_point(r, z)
        if distance > self.far_mm:
            raise InputError(key, f"({r:g}, {z:g}) is {distance:.3g} mm from the part's boundary; the nearest "
                                  f"boundary point is ({point[0]:.4g}, {point[1]:.4g})")
        return arclength, np.asarray(point, float), np.asarray(normal, float)

    def patch_span(self, arclength: float, normal: np.ndarray) -> tuple[float, float]:
        """Arclength interval of the patch: centred on the point, clipped where the face ends at a corner."""
        low, high, problem = self.patch_spans(np.array([arclength]), np.asarray(normal, float)[None])
        if problem[0]:
            raise InputError("--patch", problem[0])
        return float(low[0]), float(high[0])

    def patch_spans(self, arclengths: np.ndarray, normals: np.ndarray) -> tuple[np.ndarray, np.ndarray, list[str]]:
        """`patch_span` of many points: (low (P,), high (P,), the problem with each point's patch or "")."""
        half = self.patch.length_mm / 2.0
        low, high = self.face_spans(arclengths, normals, half)
        problems = [""] * len(arclengths)
        if not self.strict_patch:
            return low, high, problems
        # the whole patch must lie on the point's face: near a corner it slides away from the corner so that all
        # A mm of it bear on the face (the load's centre moves by the overhang, under A/2)
        near = np.flatnonzero(np.minimum(arclengths - low, high - arclengths) < half)
        if len(near):
            face_low, face_high = self.face_spans(arclengths[near], normals[near], 1.5 * self.patch.length_mm)
            short = face_high - face_low < self.patch.length_mm * (1.0 - 1e-6)
            for k in np.flatnonzero(short):
                problems[near[k]] = (f"the patch is {self.patch.length_mm:g} mm long but the face it sits on is only "
                                     f"{face_high[k] - face_low[k]:.3g} mm between its corners; give a shorter patch")
            low[near] = np.minimum(np.maximum(arclengths[near] - half, face_low), face_high - self.patch.length_mm)
            high[near] = low[near] + self.patch.length_mm
        return low, high, problems

    def face_span(self, arclength: float, normal: np.ndarray, limit_mm: float) -> tuple[float, float]:
        """Arclength interval of the face a point lies on, up to limit_mm each way: as far as the boundary
        turns less than CORNER_ANGLE_DEG from the point's normal."""
        low, high = self.face_spans(np.array([arclength]), np.asarray(normal, float)[None], limit_mm)
        return float(low[0]), float(high[0])

    def face_spans(self, arclengths: np.ndarray, normals: np.ndarray, limit_mm: float) -> tuple[np.ndarray, np.ndarray]:
        """`face_span` of many points (P,), (P, 2) at once: each side is walked in steps of step_mm (the last
        one shortened to end at limit_mm) and stops before the first step whose normal has turned too far."""
        cos_corner = math.cos(math.radians(CORNER_ANGLE_DEG))
        reach = np.minimum(self.step_mm * np.arange(1, math.ceil(limit_mm / self.step_mm) + 1), limit_mm)
        before = np.r_[0.0, reach[:-1]]
        ends = []
        for sign in (-1.0, 1.0):
            _, turned = self.section.points_at(arclengths[:, None] + sign * reach[None, :])
            corner = np.einsum("pkj,pj->pk", turned.reshape(len(arclengths), len(reach), 2), normals) < cos_corner
            ends.append(np.where(corner.any(axis=1), before[corner.argmax(axis=1)], limit_mm))
        return arclengths - ends[0], arclengths + ends[1]

    def load_at(self, arclength: float, point: np.ndarray, normal: np.ndarray) -> ShellLoad:
        """The unit load spread over the patch, as load points on the shell's mid-surface."""
        return self.loads_at(np.array([arclength]), np.asarray(point, float)[None], np.asarray(normal, float)[None])[0]

    def loads_at(self, arclengths: np.ndarray, points: np.ndarray, normals: np.ndarray,
                 skip_unfit: bool = False) -> list[ShellLoad | None]:
        """`load_at` for many points at once. With strict_patch, a point whose patch does not fit (wider than
        half the circumference there, or longer than its face) raises InputError, the first such point's, or
        with skip_unfit gets None."""
        arclengths = np.asarray(arclengths, float)
        radius = points[:, 0]
        with np.errstate(divide="ignore"):
            too_wide = (radius <= 0.0) | (self.patch.width_mm / (2.0 * radius) > math.pi / 2.0)
        too_wide &= self.strict_patch  # the simulation's tool bears on what circumference there is
        low, high, problems = self.patch_spans(arclengths, normals)
        for k in range(len(arclengths)):
            if too_wide[k] or problems[k]:
                if skip_unfit:
                    continue
                if too_wide[k]:
                    raise InputError("--patch", f"the patch is {self.patch.width_mm:g} mm wide but the circumference "
                                                f"at r = {radius[k]:.3g} mm is only {2 * math.pi * radius[k]:.3g} mm; "
                                                "give a narrower patch or a point at a larger radius")
                raise InputError("--patch", problems[k])
        fit = np.flatnonzero(~too_wide & np.array([not problem for problem in problems], bool))
        if not len(fit):
            return [None] * len(arclengths)
        gauss = 0.5 * (low[fit] + high[fit])[:, None] + 0.5 * (high[fit] - low[fit])[:, None] * _GAUSS_NODES
        at, outward = self.section.points_at(gauss)
        # uniform traction: each point carries a share proportional to the area it stands for, r ds
        weights = (_GAUSS_WEIGHTS * at[:, 0].reshape(len(fit), PATCH_POINTS))
        element, xi, arm = self.geometry.attach(at, -outward)
        shape = (len(fit), PATCH_POINTS)
        loads: list[ShellLoad | None] = [None] * len(arclengths)
        for row, k in enumerate(fit):
            loads[k] = ShellLoad(element=element.reshape(shape)[row], xi=xi.reshape(shape)[row],
                                 weight=weights[row] / weights[row].sum(), arm_rz=arm.reshape(*shape, 2)[row],
                                 half_angle_rad=self.half_angle_rad(float(radius[k])))
        return loads

    def half_angle_rad(self, r_mm: float) -> float:
        """The patch's half-width around the circumference at radius r_mm, as an angle: W / (2 r), but at most
        a quarter turn (the command line refuses a wider patch, see `load_at`). Near the axis, where the
        circumference 2 pi r is shorter than 2 W (r < W / pi), a tool's contact W wide covers the side of the
        axis it bears on and no more: the patch shrinks with the circumference, to half of it (a flat contact
        of width W at r subtends 2 atan(W / 2r), which tends to the same half turn as r -> 0). Equal to
        W / (2 r) wherever the whole patch fits."""
        if math.pi * r_mm <= self.patch.width_mm:
            return math.pi / 2.0
        return self.patch.width_mm / (2.0 * r_mm)

    def at_boundary(self, arclengths: list[float], normals: list | None = None) -> list[PointCompliance]:
        """Compliance at boundary points given by their arclength, loaded along the boundary's own inward
        normal there, or along the given outward normals (a tool bearing on a corner of the cut)."""
        arclengths = np.asarray(arclengths, float)
        points, boundary_normals = self.section.points_at(arclengths)
        normals = boundary_normals if normals is None else np.asarray(normals, float).reshape(-1, 2)
        loads = self.loads_at(arclengths, points, normals)
        return self.solve(list(zip(loads, points, normals)), arclengths)

    def solve(self, placed: list[tuple[ShellLoad, np.ndarray, np.ndarray]],
              arclengths: list[float] | None = None) -> list[PointCompliance]:
        """Compliance of (load, point, outward normal) triples, all summed over the harmonics together;
        arclengths: where each point lies along the boundary, when known."""
        loads = [load for load, _, _ in placed]
        # axes: into the material, and the CCW tangent (the outward normal turned left)
        directions = np.array([[-n, [-n[1], n[0]]] for _, _, n in placed])
        matrices, harmonics = harmonic_compliance(self.shell, loads, directions, tol=self.tolerance,
                                                  floor_mm_per_n=self.floor_mm_per_n)
        return [PointCompliance(r_mm=float(p[0]), z_mm=float(p[1]), nr=float(n[0]), nz=float(n[1]),
                                matrix_mm_per_n=matrices[i], harmonics=int(harmonics),
                                along_mm=None if arclengths is None else float(arclengths[i]))
                for i, (_, p, n) in enumerate(placed)]

    def at_points(self, points_rz: list[tuple[float, float]]) -> list[PointCompliance]:
        """Compliance at the boundary points nearest to the asked points."""
        arclengths = []
        for r, z in points_rz:
            s, point, normal = self.snap(r, z)
            if point[0] < 1e-9 and normal[0] < -0.999:
                raise InputError("--at", f"the boundary nearest to ({r:g}, {z:g}) lies on the spin axis, "
                                         "which is not a surface of the part")
            arclengths.append(s)
        return self.at_boundary(arclengths)

    def at_contacts(self, points_rz: list[tuple[float, float]], normals: list) -> list[PointCompliance]:
        """Compliance where a tool bears on the part: at the boundary points nearest to the given points,
        loaded along the given outward normals of the cut surface."""
        return self.at_boundary([self.snap(r, z)[0] for r, z in points_rz], normals)

    def map(self, spacing_mm: float | None = None) -> list[PointCompliance]:
        """Compliance along the whole boundary (not on the axis, not where the patch does not fit its face)."""
        spacing = spacing_mm or max(self.patch.length_mm / 2.0, self.section.perimeter() / 300.0)
        samples = self.section.sample(spacing)
        surface = np.array([not self.section.on_axis(int(segment)) for segment in samples.segment], bool)
        arclengths = samples.arclength[surface]
        points, normals = self.section.points_at(arclengths)
        loads = self.loads_at(arclengths, points, normals, skip_unfit=True)
        # a face shorter than the patch (a thin rim face): no value there
        fit = [k for k, load in enumerate(loads) if load is not None]
        if not fit:
            raise InputError("--patch", f"a patch of {self.patch.length_mm:g} by {self.patch.width_mm:g} mm fits no "
                                        "face of the part; give a smaller patch")
        return self.solve([(loads[k], points[k], normals[k]) for k in fit], arclengths[fit])
