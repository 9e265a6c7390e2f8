"""Natural frequencies and mode shapes of the held wall, and its frequency response where the tool bears.

Takes a `compliance.WallModel` (the shell of revolution of one held section, mm, N, MPa) and the material's
density [g/cm3]; gives the lowest modes of the part as held, per circumferential wave number n and meridional
order m (m = 1 the lowest of its n), and at a loaded boundary point the wall's 2 x 2 frequency response in the
meridian plane (normal into the material, along the boundary) as a modal sum with a residual.

Units: mm, N, s and mass in tonnes (1 N = 1 t mm / s^2); a density of 1 g/cm3 is 1e-9 t/mm3. The stiffness of
harmonic n is K_n = K0 + n K1 + n^2 K2 (`shell.harmonic`) and the consistent mass M is the same for every n
(`shell.harmonic.mass_matrix`), both without the circumferential factor, which cancels in K_n phi = w^2 M phi.

Solver: per harmonic, the lowest eigenpairs of K_n phi = w^2 M phi on the free DOFs by ARPACK's Lanczos
method (scipy.sparse.linalg.eigsh) on the equivalent standard problem U^-T M U^-1 y = (1 / w^2) y, y = U phi,
with K_n = U^T U its banded Cholesky factor (LAPACK's dpbtrf, the triangular solves dtbtrs): the spectral
transformation of the shift-invert mode at sigma = 0 (T. Ericsson and A. Ruhe, "The spectral transformation
Lanczos method for the numerical solution of large sparse generalized symmetric eigenvalue problems", Math.
Comp. 35 (1980) 1251-1268; cited from memory), whose largest eigenvalues are the lowest frequencies, without
the M-inner products ARPACK's generalized mode asks for at every step. On the chatter stations of the shipped
examples it took 0.44 of the time of eigsh's shift-invert mode with a sparse LU factor (SuperLU), the
frequencies within 1e-12. A dense solver (scipy.linalg.eigh) is not used: it costs O(N^3) per harmonic where
the band of K_n keeps its factor at O(N b^2) for the few modes wanted (a dense eigh of M phi = (1 / w^2) K_n
phi, which needs only K_n definite as M is only semi-definite, the drilling rotation moving no material, took
over ten times as long on those stations). A held part has K_n positive definite; an unheld part shows as a
failed factor or a zero frequency and is refused.

Frequency response. A unit force f at theta = 0 excites the cosine set of every harmonic; with mass-
normalised modes (phi^T M phi = 1) the point response is
    G_ij(w) = sum_n w_n sum_m (f_i . phi_nm)(f_j . phi_nm) / (w_nm^2 - w^2 + 2 i zeta_nm w_nm w) + R_ij,
w_n the same harmonic weights as the static compliance (1/(2 pi) for n = 0, g_n^2 / pi for n >= 1, g_n the
patch factor). The modes kept are those up to FREQUENCY_SPAN times the lowest; the others respond
quasi-statically below their resonance and enter as the residual R = C_static - sum over the kept modes at
w = 0 (the mode-acceleration correction: R. R. Craig, A. J. Kurdila, Fundamentals of Structural Dynamics,
2nd ed., Wiley 2006, section on modal truncation), so that G(0) equals the static compliance exactly.
Damping: a modal damping ratio per mode (viscous, light damping assumed), given by the caller.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse.linalg as sla
from scipy.linalg import LinAlgError, cholesky_banded
from scipy.linalg.lapack import dtbtrs

from deflect.errors import ModelError
from deflect.mechanics.compliance import WallModel
from deflect.mechanics.shell.harmonic import harmonic_weights, mass_matrix
from deflect.mechanics.shell.mesh import DOFS_PER_NODE

T_MM3_PER_G_CM3 = 1e-9           # 1 g/cm3 = 1e-9 t/mm3 (mm, N, s)
MODES_PER_HARMONIC = 4           # eigenpairs asked per harmonic first (more if all lie inside the span)
FREQUENCY_SPAN = 6.0             # modes kept up to this times the part's lowest natural frequency: the residual
                                 # of the others is then within 0.6 % of the static compliance up to twice the
                                 # lowest frequency (4: 2.2 %; tests/test_modes.py)
MOST_HARMONICS = 80              # the search over n stops here at the latest
ARPACK_TOL = 1e-10               # relative accuracy of the eigenvalues
RIGID_SHARE = 1e-10              # an eigenvalue below this share of the largest stiffness-to-mass diagonal ratio
                                 # is a rigid-body motion


@dataclass(frozen=True, eq=False)
class Mode:
    """One natural mode of the held part."""

    n: int                       # circumferential waves (harmonic)
    m: int                       # meridional order within its n: 1 the lowest
    frequency_hz: float
    shape: np.ndarray            # (N nodes, 6) amplitudes, mass-normalised (phi^T M phi = 1) [1/sqrt(t)]


@dataclass(frozen=True, eq=False)
class PointResponse:
    """Modal data of the wall at one loaded boundary point: everything its frequency response needs.

    Directions: 0 normal (into the material), 1 along the boundary (counter-clockwise tangent).
    """

    r_mm: float
    z_mm: float
    n: np.ndarray                # (K,) harmonic of each kept mode
    m: np.ndarray                # (K,) meridional order
    frequency_hz: np.ndarray     # (K,) natural frequency as modelled
    residues: np.ndarray         # (K, 2, 2) w_n (f_i . phi)(f_j . phi) [1/t]
    static_mm_per_n: np.ndarray  # (2, 2) static compliance of the point (all harmonics)
    residual_mm_per_n: np.ndarray  # (2, 2) the part of it the kept modes leave out

    def frf(self, frequency_hz: np.ndarray, damping: np.ndarray, natural_hz: np.ndarray | None = None) -> np.ndarray:
        """(F, 2, 2) complex receptance [mm/N] at the given frequencies.

        damping : (K,) modal damping ratio of each mode
        natural_hz : (K,) natural frequencies to use instead of the modelled ones (a tap test's); the
            residue of a mode is kept, so its modal mass stays and its stiffness follows the frequency
        """
        w = 2.0 * math.pi * np.asarray(frequency_hz, float)[:, None]
        wn = 2.0 * math.pi * (self.frequency_hz if natural_hz is None else np.asarray(natural_hz, float))[None, :]
        zeta = np.asarray(damping, float)[None, :]
        weights = 1.0 / (wn * wn - w * w + 2j * zeta * wn * w)  # (F, K)
        resonant = np.einsum("fk,kij->fij", weights, self.residues)
        # the residual is the static share of the modes beyond the span; a tap test moving a kept mode's
        # frequency changes that mode's own static share, not the residual
        return resonant + self.residual_mm_per_n[None, :, :]


def harmonic_modes(shell, mass, n: int, count: int, free_masses: dict | None = None) -> list[Mode]:
    """The `count` lowest modes of harmonic n (fewer if the free DOFs allow fewer), lowest first.

    free_masses : the mass matrix on the free DOFs by the set of them, kept between the calls on one shell (the
        held DOFs are the same for most n, and the mass matrix is the same for every n)
    """
    free = ~shell.fixed_mask(n).ravel()
    n_free = int(free.sum())
    count = min(count, n_free - 2)
    if count < 1:
        return []
    stiffness = shell.stiffness(n)[free][:, free]
    free_masses = {} if free_masses is None else free_masses
    if free.tobytes() not in free_masses:
        free_masses[free.tobytes()] = mass[free][:, free]
    mass_free = free_masses[free.tobytes()]
    try:
        factor = cholesky_banded(upper_band(stiffness), check_finite=False)
    except LinAlgError:
        # K_n is not positive definite: a rigid-body motion of this harmonic is not stopped
        raise ModelError(f"{_UNHELD} (harmonic n = {n} has a rigid-body motion)") from None

    def transformed(y: np.ndarray) -> np.ndarray:
        # U^-T M U^-1 y, with K_n = U^T U
        x = dtbtrs(factor, y.reshape(-1, 1), uplo="U", trans="N")[0]
        return dtbtrs(factor, mass_free @ x, uplo="U", trans="T")[0]

    operator = sla.LinearOperator(stiffness.shape, dtype=float, matvec=transformed)
    inverse_values, transformed_vectors = sla.eigsh(operator, k=count, which="LA", tol=ARPACK_TOL)
    values = 1.0 / inverse_values
    vectors = dtbtrs(factor, transformed_vectors, uplo="U", trans="N")[0]
    order = np.argsort(values)
    values, vectors = values[order], vectors[:, order]
    # the scale of the eigenvalues: diagonal stiffness over mass of the displacement DOFs (the rotations carry
    # little or, about the normal, no mass)
    translation = (np.arange(shell.n_dofs) % DOFS_PER_NODE < 3)[free]
    scale = np.max(stiffness.diagonal()[translation] / mass_free.diagonal()[translation])
    if np.any(values <= RIGID_SHARE * scale):
        raise ModelError(f"{_UNHELD} (harmonic n = {n} has a natural frequency of zero)")
    modes = []
    for index in range(len(values)):
        phi = vectors[:, index]
        phi = phi / math.sqrt(float(phi @ (mass_free @ phi)))
        full = np.zeros(shell.n_dofs)
        full[free] = phi
        modes.append(Mode(n=n, m=index + 1, frequency_hz=math.sqrt(values[index]) / (2.0 * math.pi),
                          shape=full.reshape(-1, DOFS_PER_NODE)))
    return modes


def upper_band(matrix) -> np.ndarray:
    """A symmetric sparse matrix in LAPACK's upper banded storage: band[w + i - j, j] = a[i, j] for i <= j,
    w the number of diagonals above the main one."""
    entries = matrix.tocoo()
    entries.sum_duplicates()
    upper = entries.row <= entries.col
    row, col = entries.row[upper], entries.col[upper]
    width = int(np.max(col - row))
    band = np.zeros((width + 1, matrix.shape[0]))
    band[width + row - col, col] = entries.data[upper]
    return band


def wall_modes(shell, mass, span: float = FREQUENCY_SPAN) -> list[Mode]:
    """The modes of the held shell up to `span` times its lowest natural frequency, lowest first.

    Harmonics n = 0, 1, 2, ... are searched until, past n = 2, the lowest frequency of a harmonic lies above
    the span and above that of the harmonic before (beyond its lowest point a shell's frequency rises with n,
    bending growing like n^4). Within a harmonic, more modes are asked for while all found lie in the span.
    """
    kept: list[Mode] = []
    free_masses: dict = {}
    lowest = math.inf
    previous_first = math.inf
    for n in range(MOST_HARMONICS + 1):
        count = MODES_PER_HARMONIC
        while True:
            found = harmonic_modes(shell, mass, n, count, free_masses)
            if not found or found[-1].frequency_hz > span * min(lowest, found[0].frequency_hz) or len(found) < count:
                break
            count *= 2
        if not found:
            continue
        first = found[0].frequency_hz
        lowest = min(lowest, first)
        kept = [mode for mode in kept if mode.frequency_hz <= span * lowest]
        kept += [mode for mode in found if mode.frequency_hz <= span * lowest]
        if n > 2 and first > span * lowest and first > previous_first:
            break
        previous_first = first
    return sorted(kept, key=lambda mode: mode.frequency_hz)


class WallDynamics:
    """The modes of one held section and its frequency response at boundary points.

    wall : the shell model of the section (`compliance.WallModel`)
    density_g_cm3 : the material's density [g/cm3]
    span : modes kept up to this times the lowest natural frequency; the others enter as a residual
    """

    def __init__(self, wall: WallModel, density_g_cm3: float, span: float = FREQUENCY_SPAN):
        self.wall = wall
        self.mass = mass_matrix(wall.geometry.mesh, density_g_cm3 * T_MM3_PER_G_CM3)
        self.modes = wall_modes(wall.shell, self.mass, span)

    def response_at(self, contacts_rz: list[tuple[float, float]], normals: list) -> list[PointResponse]:
        """Modal data where a tool bears: at the boundary points nearest to the given points, loaded along
        the given outward normals of the cut surface, over the wall model's contact patch."""
        wall = self.wall
        placed = []
        for (r, z), normal in zip(contacts_rz, normals):
            arclength = wall.snap(r, z)[0]
            point, _ = wall.section.point_at(arclength)
            point, normal = np.asarray(point, float), np.asarray(normal, float)
            placed.append((wall.load_at(arclength, point, normal), point, normal))
        static = wall.solve(placed)
        n = np.array([mode.n for mode in self.modes], int)
        m = np.array([mode.m for mode in self.modes], int)
        frequency = np.array([mode.frequency_hz for mode in self.modes])
        shapes = np.stack([mode.shape.ravel() for mode in self.modes], axis=1)  # (n_dofs, K)
        out = []
        for (load, point, normal), compliance in zip(placed, static):
            directions = np.array([-normal, [-normal[1], normal[0]]])  # into the material, CCW tangent
            vectors = wall.shell.load_vectors(load, directions)[:, [0, 2]]  # (n_dofs, 2): normal, along
            projection = vectors.T @ shapes  # (2, K)
            weight = harmonic_weights(n, load.half_angle_rad)
            residues = weight[:, None, None] * np.einsum("ik,jk->kij", projection, projection)
            omega2 = (2.0 * math.pi * frequency) ** 2
            static_2x2 = compliance.matrix_mm_per_n[np.ix_([0, 2], [0, 2])]
            residual = static_2x2 - np.einsum("k,kij->ij", 1.0 / omega2, residues)
            out.append(PointResponse(r_mm=float(point[0]), z_mm=float(point[1]), n=n, m=m, frequency_hz=frequency,
                                     residues=residues, static_mm_per_n=static_2x2, residual_mm_per_n=residual))
        return out


_UNHELD = "the part is not held: it would move as a rigid body"


# ----------------------------------------------------------------------------------------------------
# the boring bar

# A steel bar: 7.85 g/cm3 (from memory; steel handbooks). A carbide bar (about 14.5 g/cm3 with three times the
# modulus) rings about a quarter higher than a steel bar of the same stiffness would.
BAR_DENSITY_G_CM3 = 7.85
# beta_1 L of the first bending mode of a clamped-free beam, root of cos x cosh x = -1 (R. D. Blevins,
# Formulas for Natural Frequency and Mode Shape, Van Nostrand Reinhold 1979, table 8-1).
CANTILEVER_FIRST_ROOT = 1.8751040687


def bar_natural_hz(bar) -> float:
    """First bending frequency of the boring bar as an Euler-Bernoulli cantilever [Hz]:
    (beta_1 L)^2 / (2 pi L^2) sqrt(E I / (rho A))."""
    area = math.pi * bar.diameter_mm**2 / 4.0
    inertia = math.pi * bar.diameter_mm**4 / 64.0
    rho = BAR_DENSITY_G_CM3 * T_MM3_PER_G_CM3
    stiffness_per_mass = bar.E_mpa * inertia / (rho * area)
    return CANTILEVER_FIRST_ROOT**2 / (2.0 * math.pi * bar.overhang_mm**2) * math.sqrt(stiffness_per_mass)


def bar_frf(bar, frequency_hz: np.ndarray, damping: float) -> np.ndarray:
    """Receptance of the bar's tip [mm/N] as one mode: the static compliance of the static model, L^3 / (3 E I)
    (`tooling.BoringBar`), resonating at the first bending frequency with the damping ratio given."""
    ratio = np.asarray(frequency_hz, float) / bar_natural_hz(bar)
    return bar.compliance_mm_per_n() / (1.0 - ratio * ratio + 2j * damping * ratio)
