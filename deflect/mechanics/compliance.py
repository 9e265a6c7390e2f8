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

DEFAULT_TOLERANCE = 1e-3          # relative truncation error of the harmonic series
CORNER_ANGLE_DEG = 45.0           # the patch stays on its face: it stops where the boundary turns more than this
PATCH_POINTS = 8                  # Gauss-Legendre points along the patch (meridian direction)
FAR_FROM_BOUNDARY_MM = 1.0        # an --at point farther than this (or 2 % of the part's size) is refused


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
        half = self.patch.length_mm / 2.0
        low, high = self.face_span(arclength, normal, half)
        if self.strict_patch and min(arclength - low, high - arclength) < half:
            # the whole patch must lie on the point's face: near a corner it slides away from the corner so
            # that all A mm of it bear on the face (the load's centre moves by the overhang, under A/2)
            face = self.face_span(arclength, normal, 1.5 * self.patch.length_mm)
            if face[1] - face[0] < self.patch.length_mm * (1.0 - 1e-6):
                raise InputError("--patch", f"the patch is {self.patch.length_mm:g} mm long but the face it sits "
                                            f"on is only {face[1] - face[0]:.3g} mm between its corners; "
                                            "give a shorter patch")
            low = min(max(arclength - half, face[0]), face[1] - self.patch.length_mm)
            high = low + self.patch.length_mm
        return low, high

    def face_span(self, arclength: float, normal: np.ndarray, limit_mm: float) -> tuple[float, float]:
        """Arclength interval of the face a point lies on, up to limit_mm each way: as far as the boundary
        turns less than CORNER_ANGLE_DEG from the point's normal."""
        cos_corner = math.cos(math.radians(CORNER_ANGLE_DEG))
        ends = []
        for sign in (-1.0, 1.0):
            reach = 0.0
            while reach < limit_mm:
                step = min(self.step_mm, limit_mm - reach)
                _, n_next = self.section.point_at(arclength + sign * (reach + step))
                if np.dot(n_next, normal) < cos_corner:
                    break
                reach += step
            ends.append(reach)
        return arclength - ends[0], arclength + ends[1]

    def load_at(self, arclength: float, point: np.ndarray, normal: np.ndarray) -> ShellLoad:
        """The unit load spread over the patch, as load points on the shell's mid-surface."""
        if self.strict_patch and (point[0] <= 0.0 or self.patch.width_mm / (2.0 * point[0]) > math.pi / 2.0):
            raise InputError("--patch", f"the patch is {self.patch.width_mm:g} mm wide but the circumference at "
                                        f"r = {point[0]:.3g} mm is only {2 * math.pi * point[0]:.3g} mm; "
                                        "give a narrower patch or a point at a larger radius")
        low, high = self.patch_span(arclength, normal)
        nodes, gauss_weights = np.polynomial.legendre.leggauss(PATCH_POINTS)
        arclengths = 0.5 * (low + high) + 0.5 * (high - low) * nodes
        samples = [self.section.point_at(s) for s in arclengths]
        points = np.array([p for p, _ in samples], float)
        normals = np.array([n for _, n in samples], float)
        # uniform traction: each point carries a share proportional to the area it stands for, r ds
        weights = gauss_weights * points[:, 0]
        element, xi, arm = self.geometry.attach(points, -normals)
        return ShellLoad(element=element, xi=xi, weight=weights / weights.sum(), arm_rz=arm,
                         half_angle_rad=self.half_angle_rad(float(point[0])))

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
        placed = []
        for i, s in enumerate(arclengths):
            point, normal = self.section.point_at(s)
            if normals is not None:
                normal = normals[i]
            point, normal = np.asarray(point, float), np.asarray(normal, float)
            placed.append((self.load_at(s, point, normal), point, normal))
        return self.solve(placed, arclengths)

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
        placed, arclengths = [], []
        for s, segment in zip(samples.arclength, samples.segment):
            if self.section.on_axis(int(segment)):
                continue
            point, normal = (np.asarray(v, float) for v in self.section.point_at(float(s)))
            try:
                placed.append((self.load_at(float(s), point, normal), point, normal))
            except InputError:
                continue   # a face shorter than the patch (a thin rim face): no value there
            arclengths.append(float(s))
        if not placed:
            raise InputError("--patch", f"a patch of {self.patch.length_mm:g} by {self.patch.width_mm:g} mm fits no "
                                        "face of the part; give a smaller patch")
        return self.solve(placed, arclengths)
