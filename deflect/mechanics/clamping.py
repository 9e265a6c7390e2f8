"""The part squeezed in the chuck, and the shape of a surface cut round in it once it is released.

Takes the section, the material's E [MPa] and nu, the `Holding` and its `Contact` (`deflect.job.holding`); gives
the displacement of boundary points in the chuck as a cosine series around the circumference (`Squeeze`,
per newton of grip), and from it the released deviation of the surfaces finished in that setup
(`released_deviation`, a `ReleasedDeviation`: the mean size change and the roundness at each point).

The loads. N jaws at theta_j = 2 pi j / N press on the gripped surface, each over `width` around the
circumference (half-angle a = width / (2 R) at the gripped radius R) and over the contact's z extent along
the meridian, with a uniform pressure (weights r ds); the total force F is shared equally, radially inward
for an OD grip, outward for a bore grip. One jaw's load per radian has the cosine series
(F/N) [1/(2 pi) + sum_n g_n / pi cos(n (theta - theta_j))], g_n = sin(n a) / (n a) (the Fourier series of a
rectangular pulse); summed over the N jaws, sum_j cos(n (theta - theta_j)) is N cos(n theta) when N divides n and 0 otherwise, so only
n = 0, N, 2N, ... are excited, with amplitudes F / (2 pi) and F g_n / pi. A collet or mandrel is a pressure
all round: n = 0 alone.

The model. Each harmonic is solved on the shell of `deflect.mechanics.shell.harmonic` (`HarmonicShell.displacement`)
with the part NOT held in a rigid box: the jaws are not a support of the part, they ARE its load. A held box
at the contact would take the grip force straight into a rigid support and leave the wall unsqueezed, and a
held box anywhere else would carry part of the grip that in the chuck has nowhere to go but through the part.
The jaw loads are in equilibrium by themselves: for N >= 2 no harmonic n >= 2 has a rigid-body motion, n = 1
is not excited, and the n = 0 term (a uniform radial pressure) has no axial resultant and no torque. Only
n = 0 needs restraint, against the axial slide and the turn about the axis, which its stiffness cannot stop:
u_z and u_theta are held at one node for n = 0 only (`extra_fixed`). Their reactions are zero, so they
only pick the position of a body that does not move; they change no strain. Friction at the contact is
ignored here (the jaws press, they do not pull along the surface), and the jaws are taken as rigid and the
pressure as uniform over their face, as for soft jaws bored to the part; hard jaws on a round part bear along
lines, for which a narrow `width` is the model.

Release. A surface cut round to R_c while displaced by u(theta) along its outward normal is, once the jaws let
go and the wall springs back, at R_c - u(theta): the released deviation along the outward normal is -u(theta).
Its n = 0 part changes the size (a bore cut in an OD-gripped part comes out larger); the rest makes it out of
round with the jaws' lobes. Roundness is reported as the peak to valley over theta (radial, the width of the
zone between two concentric circles).

The series. Terms are summed for n = N, 2N, ... until, for 2 lobe harmonics in a row from the third on, the
estimated tail after harmonic n, term_n n / (2N) (terms falling like n^-3 or faster; the patch factor's
envelope min(1, 1/(n a)) in place of g_n, which swings through zero), lies below SERIES_TOLERANCE times the
largest first-lobe amplitude over the points asked for.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from deflect.errors import ModelError
from deflect.geometry.section import Section
from deflect.job.holding import Contact, Holding, contact_of
from deflect.mechanics.compliance import Patch, element_size_mm
from deflect.mechanics.shell.harmonic import HarmonicShell, ShellLoad, patch_factor
from deflect.mechanics.shell.mesh import DOFS_PER_NODE
from deflect.mechanics.shell.midsurface import shell_from_section

SERIES_TOLERANCE = 1e-3   # tail of the lobe series relative to the largest first-lobe amplitude
CONVERGED_IN_A_ROW = 2    # lobe harmonics in a row that must meet it
FIRST_TAIL_TERM = 3       # the tail estimate is trusted from the third lobe harmonic (n = 3N) on
MAX_HARMONIC = 4000       # a series still running here has a jaw far narrower than the mesh resolves
THETA_PER_PERIOD = 8      # samples of theta per period of the highest harmonic, for the peak to valley
MIN_THETA_SAMPLES = 181   # ... and at least this many over half a lobe (0 to pi / N)
FLAT_SHARE = 1e-9         # steps below this share of the peak to valley count as flat (no lobe)


@dataclass(frozen=True)
class Squeeze:
    """Displacement along the outward normal of boundary points in the chuck, per newton of total grip.

    harmonics : (H,) n = 0, N, 2N, ... (just 0 for a grip all round)
    amplitudes_mm_per_n : (H, k) amplitude of cos(n theta) [mm/N], theta = 0 at the middle of a jaw
    jaws : N; 0 for a grip all round
    """

    harmonics: np.ndarray
    amplitudes_mm_per_n: np.ndarray
    jaws: int

    @property
    def mean_mm_per_n(self) -> np.ndarray:
        """(k,) the n = 0 part: the change of radius (along the outward normal) in the chuck [mm/N]."""
        return self.amplitudes_mm_per_n[0]

    def around(self, theta_rad: np.ndarray) -> np.ndarray:
        """(k, M) displacement at the angles theta [mm/N]."""
        return self.amplitudes_mm_per_n.T @ np.cos(np.outer(self.harmonics, theta_rad))

    def _half_lobe(self) -> np.ndarray:
        """Angles over half a lobe, 0 to pi / N: the pattern repeats every 2 pi / N and is even about 0."""
        terms = len(self.harmonics) - 1
        return np.linspace(0.0, math.pi / self.jaws, max(MIN_THETA_SAMPLES, THETA_PER_PERIOD * terms // 2 + 1))

    @property
    def roundness_mm_per_n(self) -> np.ndarray:
        """(k,) peak to valley of the displacement over theta [mm/N] (0 for a grip all round)."""
        if self.jaws == 0:
            return np.zeros(self.amplitudes_mm_per_n.shape[1])
        values = self.around(self._half_lobe())
        return values.max(axis=1) - values.min(axis=1)

    def _lobes_released(self, theta: np.ndarray, even_only: bool) -> np.ndarray:
        """(k, M) the released deviation's lobes at theta, the uniform (n = 0) part left out [mm/N]; with
        even_only, its even harmonics alone: (d(theta) + d(theta + pi)) / 2 less the mean, the half of a
        two-point size's change the lobes make."""
        keep = self.harmonics > 0
        if even_only:
            keep &= self.harmonics % 2 == 0
        return -(self.amplitudes_mm_per_n[keep].T @ np.cos(np.outer(self.harmonics[keep], theta)))

    @property
    def peak_mm_per_n(self) -> np.ndarray:
        """(k,) the released lobes' highest point above the mean surface, along the outward normal [mm/N]
        (>= 0; 0 all round): where a ring or plug gauge meets the surface first."""
        if self.jaws == 0:
            return np.zeros(self.amplitudes_mm_per_n.shape[1])
        return np.maximum(self._lobes_released(self._half_lobe(), even_only=False).max(axis=1), 0.0)

    @property
    def two_point_mm_per_n(self) -> tuple[np.ndarray, np.ndarray]:
        """((k,), (k,)) least and most of the two-point half-size change the released lobes make, around the
        circumference [mm/N] (<= 0 and >= 0; 0 all round). Odd harmonics cancel between opposite points, so
        a pure odd lobe (3 jaws: cos 3 theta) leaves the two-point size constant, why a 3-lobed ring measures
        round with a micrometer."""
        if self.jaws == 0:
            zeros = np.zeros(self.amplitudes_mm_per_n.shape[1])
            return zeros, zeros
        half = self._lobes_released(self._half_lobe(), even_only=True)
        return np.minimum(half.min(axis=1), 0.0), np.maximum(half.max(axis=1), 0.0)

    @property
    def envelope_mm_per_n(self) -> np.ndarray:
        """(k,) the share of a diameter band the released form takes, per newton [mm/N] (0 all round).

        The envelope requirement (Taylor's principle; ISO 14405-1, the modifier (E); ASME Y14.5-2018 Rule #1)
        passes a surface when a GO gauge at the maximum-material size (a full ring over an OD, a full plug in
        a bore) goes over it and a two-point NO-GO measurement at the least-material size finds no local size
        beyond it. With the size set at its best, the form may take half the diameter band: the lobes'
        highest point above the mean (the gauge's contact) less the lowest two-point half-size change,
        `peak_mm_per_n` - `two_point_mm_per_n`[0]. Pure lobes d = A cos(N theta): for odd N it is A, half the
        radial peak to valley 2 A (the two-point size stays constant), so the roundness may reach the whole
        band; for even N it is 2 A, the whole peak to valley, which may reach half the band.
        """
        return self.peak_mm_per_n - self.two_point_mm_per_n[0]

    def lobes(self, index: int) -> int:
        """Number of lobes (maxima of the released shape) around the circumference at point `index`."""
        if self.jaws == 0:
            return 0
        theta = np.linspace(0.0, 2.0 * math.pi, 2 * self.jaws * len(self._half_lobe()), endpoint=False)
        released = -self.around(theta)[index]
        step = np.roll(released, -1) - released          # forward difference, round the circumference
        rising = np.sign(np.where(np.abs(step) > FLAT_SHARE * (np.ptp(released) + 1e-300), step, 0.0))
        rising = rising[rising != 0.0]
        peaks = (rising > 0.0) & (np.roll(rising, -1) < 0.0)   # the slope turns from up to down
        return int(peaks.sum())


@dataclass(frozen=True)
class ReleasedDeviation:
    """The released shape of surface points cut round in the chuck, along their outward normals.

    mean_mm : (k,) n = 0 part of the released deviation [mm] (> 0: more material than as cut; a bore that comes
        out larger reads < 0)
    roundness_mm : (k,) peak to valley of the released deviation over theta [mm]
    peak_mm : (k,) the lobes' highest point above the mean, along the outward normal [mm] (`Squeeze.peak_mm_per_n`)
    two_point_low_mm, two_point_high_mm : (k,) least and most two-point half-size change the lobes make [mm]
        (`Squeeze.two_point_mm_per_n`)
    lobes : lobes around the circumference at the point of the largest roundness (0 all round)
    force_n : the total grip during the cut [N]
    highest_harmonic : the highest harmonic summed
    """

    points_rz: np.ndarray
    normals: np.ndarray
    mean_mm: np.ndarray
    roundness_mm: np.ndarray
    peak_mm: np.ndarray
    two_point_low_mm: np.ndarray
    two_point_high_mm: np.ndarray
    lobes: int
    force_n: float
    highest_harmonic: int


def grip_amplitudes(harmonics: np.ndarray, half_angle_rad: float) -> np.ndarray:
    """Load per radian of N equal jaws of total force 1 N at harmonics n = 0, N, 2N, ...: 1 / (2 pi) at n = 0,
    g_n / pi above (module docstring)."""
    n = np.asarray(harmonics, dtype=float)
    return np.where(n == 0, 0.5, patch_factor(n, half_angle_rad)) / math.pi


def squeeze_series(solve, operator: np.ndarray, jaws: int, half_angle_rad: float,
                   tolerance: float = SERIES_TOLERANCE) -> Squeeze:
    """Sum the grip's harmonics at the points of `operator`.

    solve : n -> (n_dofs,) nodal displacements of harmonic n under the unit meridian load of the contact
        (a load of 1 N per radian with amplitude cos(n theta))
    operator : (k, n_dofs) the displacement along each point's outward normal from the nodal displacements
    jaws : N (0 or a jaw set that closes round: the n = 0 term alone)
    half_angle_rad : a = width / (2 R)
    Raises ModelError when the series has not converged by MAX_HARMONIC.
    """
    if not len(operator):
        return Squeeze(harmonics=np.array([0]), amplitudes_mm_per_n=np.zeros((1, 0)), jaws=jaws)
    mean = operator @ solve(0) * grip_amplitudes(np.array([0]), half_angle_rad)
    if jaws == 0 or half_angle_rad * jaws >= math.pi * (1.0 - 1e-9):
        return Squeeze(harmonics=np.array([0]), amplitudes_mm_per_n=mean[None, :], jaws=0)
    harmonics, terms = [0], [mean]
    in_a_row = 0
    for k in range(1, MAX_HARMONIC // jaws + 1):
        n = k * jaws
        raw = operator @ solve(n)
        terms.append(grip_amplitudes(np.array([n]), half_angle_rad)[0] * raw)
        harmonics.append(n)
        if k == 1:   # the scale of the tolerance: the largest first-lobe amplitude (never quite 0)
            scale = max(float(np.abs(terms[1]).max()), FLAT_SHARE * float(np.abs(mean).max()))
        envelope = min(1.0, 1.0 / (n * half_angle_rad)) / math.pi
        tail = envelope * float(np.abs(raw).max()) * n / (2.0 * jaws)
        in_a_row = in_a_row + 1 if (k >= FIRST_TAIL_TERM and tail <= tolerance * scale) else 0
        if in_a_row >= CONVERGED_IN_A_ROW:
            return Squeeze(harmonics=np.array(harmonics), amplitudes_mm_per_n=np.array(terms), jaws=jaws)
    raise ModelError(f"the harmonic sum of the squeeze in the chuck did not converge to {tolerance:g} by "
                     f"n = {MAX_HARMONIC}: the jaws' contact is too narrow for the model; give the real width")


class GripModel:
    """The part's shell, free of any held box, under the unit grip load of one contact; solutions per harmonic
    are kept, so other jaw counts, widths and forces on the same contact cost no new solution."""

    def __init__(self, section: Section, E_mpa: float, nu: float, contact: Contact, element_mm: float | None = None):
        """element_mm: meridian element length; by default a quarter of the contact's length, bounded as the
        compliance model's (`compliance.element_size_mm`)."""
        self.contact = contact
        size = element_mm or element_size_mm(section, Patch(contact.length_mm, contact.length_mm))
        self.geometry = shell_from_section(section, [], size)
        mesh = self.geometry.mesh
        # n = 0 only: the axial slide and the turn about the axis are stopped at the node nearest the contact
        # (off the axis); the grip has no axial resultant and no torque, so these hold nothing (module docstring)
        centre = np.average(contact.points_rz, axis=0, weights=contact.weights)
        distance = np.hypot(*(mesh.nodes_rz - centre).T) + np.where(mesh.nodes_rz[:, 0] > 0.0, 0.0, np.inf)
        stop = np.zeros((mesh.n_nodes, DOFS_PER_NODE), dtype=bool)
        stop[int(np.argmin(distance)), [1, 2]] = True
        self.shell = HarmonicShell(mesh, E_mpa, nu, extra_fixed={0: stop})
        element, xi, arm = self.geometry.attach(contact.points_rz, -contact.normals)
        load = ShellLoad(element=element, xi=xi, weight=contact.weights, arm_rz=arm, half_angle_rad=0.0)
        inward = -1.0 if contact.grip == "od" else 1.0   # jaws press in on an OD, out in a bore
        self._load = self.shell.load_vectors(load, np.array([[inward, 0.0], [0.0, 1.0]]))[:, 0]
        self._solved: dict[int, np.ndarray] = {}

    def solve(self, n: int) -> np.ndarray:
        """(n_dofs,) nodal displacements of harmonic n under the unit meridian load of the contact."""
        if n not in self._solved:
            self._solved[n] = self.shell.displacement(n, self._load[:, None])[:, :, 0].ravel()
        return self._solved[n]

    def operator(self, points_rz: np.ndarray, normals: np.ndarray) -> np.ndarray:
        """(k, n_dofs): displacement along each point's outward normal from the nodal displacements.

        A boundary point rides on its mid-surface point through the rigid wall fibre d (Ahmad et al. 1970, as
        the loads in `HarmonicShell.load_vectors`): U_r = u_r + w_theta d_z, U_z = u_z - w_theta d_r, the
        nodal values interpolated linearly along the element."""
        points = np.asarray(points_rz, float).reshape(-1, 2)
        normals = np.asarray(normals, float).reshape(-1, 2)
        element, xi, arm = self.geometry.attach(points, -normals)
        nodes = self.geometry.mesh.elements[element]              # (k, 2)
        shares = np.stack([1.0 - xi, xi], axis=1)                  # (k, 2)
        per_dof = np.stack([normals[:, 0], normals[:, 1],
                            normals[:, 0] * arm[:, 1] - normals[:, 1] * arm[:, 0]], axis=1)   # u_r, u_z, w_theta
        out = np.zeros((len(points), self.shell.n_dofs))
        rows = np.arange(len(points))
        for end in range(2):
            for column, dof in enumerate((0, 2, 4)):
                np.add.at(out, (rows, DOFS_PER_NODE * nodes[:, end] + dof), shares[:, end] * per_dof[:, column])
        return out

    def squeeze(self, holding: Holding, points_rz: np.ndarray, normals: np.ndarray,
                tolerance: float = SERIES_TOLERANCE) -> Squeeze:
        """The grip of `holding` (jaws, width) on this contact, at the given boundary points."""
        half_angle = 0.0 if holding.all_round else holding.width_mm / (2.0 * self.contact.radius_mm)
        return squeeze_series(self.solve, self.operator(points_rz, normals), holding.jaws, half_angle, tolerance)


def released_deviation(job, holding: Holding, points_rz: np.ndarray, normals: np.ndarray,
                       force_n: float | None = None) -> ReleasedDeviation:
    """The released deviation along the outward normals of boundary points cut round in the chuck.

    job : a `deflect.job.reader.Job` (its section and material)
    holding : the checked holding (`deflect.job.holding.holding_from_table`)
    points_rz : (k, 2) boundary points [mm]; normals : (k, 2) their unit outward normals
    force_n : the total grip during the cut [N]; by default the holding's force at standstill (the loss of grip
        at speed is the caller's: `deflect.machining.grip.grip_in_cut_n`)
    """
    contact = contact_of(job.section, holding)
    model = GripModel(job.section, job.material.E_mpa, job.material.nu, contact)
    squeeze = model.squeeze(holding, points_rz, normals)
    force = holding.force_n if force_n is None else float(force_n)
    roundness = force * squeeze.roundness_mm_per_n
    low, high = squeeze.two_point_mm_per_n
    return ReleasedDeviation(points_rz=np.asarray(points_rz, float), normals=np.asarray(normals, float),
                             mean_mm=-force * squeeze.mean_mm_per_n, roundness_mm=roundness,
                             peak_mm=force * squeeze.peak_mm_per_n, two_point_low_mm=force * low,
                             two_point_high_mm=force * high,
                             lobes=squeeze.lobes(int(np.argmax(roundness))) if len(roundness) else 0,
                             force_n=force, highest_harmonic=int(squeeze.harmonics[-1]))
