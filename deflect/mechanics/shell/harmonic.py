"""Shell of revolution under circumferential Fourier harmonics: stiffness, solution and compliance sum.

Takes a `ShellMesh` (straight two-node frustum elements along the meridian, see `mesh.py`) and the elastic
constants E [MPa], nu; gives, for each circumferential harmonic n, the stiffness of the wall, its solution
under nodal loads, and the compliance of the wall under a loaded patch summed over the harmonics.

Method. A degenerated-solid ("Ahmad-type") shell element: the 3-D solid between the wall faces is described
by the mid-surface displacement u and the rotation vector omega, U(s, zeta) = u(s) + zeta (omega x n), with
the exact small strains of a solid in cylindrical coordinates at the true radius r(s, zeta), plane stress
normal to the wall and Mindlin transverse shear (factor 5/6):
    S. Ahmad, B. M. Irons, O. C. Zienkiewicz, "Analysis of thick and thin shell structures by curved finite
    elements", Int. J. Numer. Meth. Engng 2 (1970) 419-451.
Its linear axisymmetric form with reduced integration of the transverse shear:
    O. C. Zienkiewicz, J. Bauer, K. Morgan, E. Onate, "A simple and efficient element for axisymmetric
    shells", Int. J. Numer. Meth. Engng 11 (1977) 1545-1558.
Fourier (semi-analytical) treatment around the circumference:
    J. H. Percy, T. H. H. Pian, S. Klein, D. R. Navaratna, "Application of matrix displacement method to
    linear elastic analysis of shells of revolution", AIAA J. 3 (1965) 2138-2145;
    O. C. Zienkiewicz, R. L. Taylor, The Finite Element Method, vol. 2 (semi-analytical methods).

Conventions. Harmonic n, symmetric set: u_r, u_z, w_theta go with cos(n theta); u_theta, w_r, w_z with
sin(n theta). The strain operator is linear in n, B(n) = B0 + n B1, so the stiffness is
K_n = K0 + n K1 + n^2 K2; the stored K_n carries no circumferential factor (K_n = integral of B^T D B
r ds dzeta); the compliance sum carries the factors (pi for n >= 1, 2 pi for n = 0) in its weights.
A circumferential (tangential) load excites the antisymmetric set, whose stiffness T K_n T with
T = diag(+1 cos group, -1 sin group) gives the same quadratic form, so one factorisation serves both.

Solution. Nodes are put in reverse Cuthill-McKee order (scipy.sparse.csgraph) and cut into breadth-first
levels, so K_n is block tridiagonal over the levels. `displacement` solves one harmonic with a banded
Cholesky factor (scipy.linalg.cholesky_banded). `harmonic_terms` needs only f^T K_n^-1 f for loads that touch
a few neighbouring nodes: it computes the entries of K_n^-1 within a few levels of the diagonal by the
block form of the Takahashi-Fagan-Chin recursion (K. Takahashi, J. Fagan, M.-S. Chin, "Formation of a sparse
bus impedance matrix and its application to short circuit study", 8th PICA Conf., 1973), for many
harmonics at once (numpy batched over n), with no inverse of the whole matrix. On a cup of 146 nodes and
200 patch loads that is about 20 times faster than a banded Cholesky solve per harmonic with 3 right-hand
sides per load (tests/bench_compliance.py), which remains the path for loads spread along much of the meridian.
"""

import math
from dataclasses import dataclass
from functools import cached_property

import numpy as np
import scipy.linalg
import scipy.linalg.lapack
import scipy.sparse as sp
from scipy.sparse import csgraph

from deflect.errors import ModelError
from deflect.mechanics.shell.mesh import DOFS_PER_NODE, ShellMesh

SHEAR_FACTOR = 5.0 / 6.0  # Mindlin/Reissner transverse shear correction for a homogeneous wall
# Rotation about the wall normal ("drilling") has no stiffness of its own in a shell element. It is tied to
# the in-plane rotation of the displacement field, (1/2) n . curl U, by a penalty of modulus beta G (T. J. R.
# Hughes, F. Brezzi, "On drilling degrees of freedom", Comput. Methods Appl. Mech. Engrg 72 (1989) 105-121),
# which costs nothing in a rigid motion. On a faceted curved meridian the tie is needed, not cosmetic: a
# rotation about one facet's normal is a rotation about the next facet's tangent, so a weak tie lets that
# rotation jump between facets (pinched hemisphere, n = 2 term: 0.19 with a tie of 1e-6 of the bending
# stiffness E h^3 / L, 0.0904 with beta >= 1e-2). Moving beta a factor sqrt(10) either way changes results
# by < 2e-4, less as the mesh is refined (tests/test_harmonic.py).
DRILLING_PENALTY = 0.1
# A pivot of the factorisation below this fraction of its diagonal means a mechanism (a singular K_n).
PIVOT_FLOOR = 1e-12
HARMONIC_BLOCK = 128  # most harmonics evaluated together in one batched sweep (harmonic_terms)
LEVEL_DOFS = 6  # breadth-first levels are merged until a block holds at least this many free DOFs
WIDEST_WINDOW = 24  # loads reaching across more blocks than this are solved for directly
DIRECT_LOADS = 4  # this few loads are solved for directly (a key station of the machining simulation: 1)

_GAUSS2 = (np.array([-1.0, 1.0]) / np.sqrt(3.0), np.array([1.0, 1.0]))
_GAUSS3 = (np.array([-np.sqrt(0.6), 0.0, np.sqrt(0.6)]), np.array([5.0, 8.0, 5.0]) / 9.0)
_COS_GROUP = np.array([0, 2, 4])  # u_r, u_z, w_theta
_SIN_GROUP = np.array([1, 3, 5])  # u_theta, w_r, w_z


@dataclass(frozen=True)
class ShellLoad:
    """A unit force spread over sub-points along the meridian and over a half-angle around.

    element : (k,) element of each sub-point
    xi : (k,) position along that element, 0 at node a, 1 at node b
    weight : (k,) share of the unit force (sum 1); a uniform traction gives weights proportional to r ds
    arm_rz : (k, 2) offset (r, z) from the mid-surface point to the loaded surface point [mm]
    half_angle_rad : patch half-width around the circumference [rad]; 0 = point load; pi = full ring
    """

    element: np.ndarray
    xi: np.ndarray
    weight: np.ndarray
    arm_rz: np.ndarray
    half_angle_rad: float


def patch_factor(n: np.ndarray, half_angle_rad: float) -> np.ndarray:
    """g_n = sin(n a) / (n a): the patch average of cos(n theta) over |theta| < a (1 for a point load)."""
    return np.sinc(np.asarray(n, dtype=float) * half_angle_rad / np.pi)


def harmonic_weights(n: np.ndarray, half_angle_rad: float) -> np.ndarray:
    """w_n = g_n^2 / pi (n >= 1), 1 / (2 pi) (n = 0): compliance = sum_n w_n f^T K_n^-1 f.

    A unit force spread evenly over |theta| < a has the cosine series 1/(2 pi) + sum g_n/pi cos(n theta)
    (per radian); the response of harmonic n is averaged over the patch with the factor g_n again.
    """
    n = np.asarray(n, dtype=float)
    return np.where(n == 0, 0.5, patch_factor(n, half_angle_rad) ** 2) / np.pi


# ----------------------------------------------------------------------------------------------------
# element matrices


def _element_geometry(mesh: ShellMesh) -> dict[str, np.ndarray]:
    a, b = mesh.elements[:, 0], mesh.elements[:, 1]
    d = mesh.nodes_rz[b] - mesh.nodes_rz[a]
    length = np.hypot(d[:, 0], d[:, 1])
    if np.any(length <= 0.0):
        raise ModelError(f"shell element(s) {np.flatnonzero(length <= 0).tolist()} have zero length",
                         key="part.outline")
    t_r, t_z = d[:, 0] / length, d[:, 1] / length
    return {
        "r_a": mesh.nodes_rz[a, 0], "L": length, "t_r": t_r, "t_z": t_z,
        "n_r": t_z, "n_z": -t_r,  # wall normal n = (t_z, -t_r)
        "h_a": mesh.thickness_mm[a], "h_b": mesh.thickness_mm[b],
    }


def _strain_operator(g: dict[str, np.ndarray], s: np.ndarray, zeta: np.ndarray):
    """B0, B1 (M, 5, 12) at (s, zeta) of every element: strain = (B0 + n B1) q for the 12 element DOFs.

    Strains, in the wall's frame (t along the meridian, theta, n normal), of the displacement
    U = u + zeta (omega x n), with (omega x n) = (w_theta n_z, w_r t_r + w_z t_z, -w_theta n_r) in (r, theta, z):
    U_t = u_t - zeta w_theta, U_n = u_n, U_theta = u_theta + zeta omega_t. With d/ds = t.grad, d/dzeta = n.grad
    and the 3-D small strains in cylindrical coordinates at the true radius r:
        e_tt = dU_t/ds,  e_hoop = (U_r + n U_theta)/r,  g_ttheta = dU_theta/ds - t_r U_theta/r - n U_t/r,
        g_tn = dU_t/dzeta + dU_n/ds,  g_ntheta = dU_theta/dzeta - n_r U_theta/r - n U_n/r.
    Rows: e_tt, e_hoop, g_ttheta (in-plane), g_tn, g_ntheta (transverse shear).
    """
    t_r, t_z, n_r, n_z, length = g["t_r"], g["t_z"], g["n_r"], g["n_z"], g["L"]
    r = g["r_a"] + s * t_r + zeta * n_r
    inv_r = 1.0 / r
    m = len(s)
    b0 = np.zeros((m, 5, 12))
    b1 = np.zeros((m, 5, 12))
    for node, (shape, slope) in enumerate(((1.0 - s / length, -1.0 / length), (s / length, 1.0 / length))):
        ur, ut, uz, wr, wt, wz = (6 * node + k for k in range(6))
        # e_tt
        b0[:, 0, ur] = t_r * slope
        b0[:, 0, uz] = t_z * slope
        b0[:, 0, wt] = -zeta * slope
        # e_hoop
        b0[:, 1, ur] = shape * inv_r
        b0[:, 1, wt] = zeta * n_z * shape * inv_r
        b1[:, 1, ut] = shape * inv_r
        b1[:, 1, wr] = zeta * t_r * shape * inv_r
        b1[:, 1, wz] = zeta * t_z * shape * inv_r
        # g_ttheta
        d_theta = slope - t_r * shape * inv_r
        b0[:, 2, ut] = d_theta
        b0[:, 2, wr] = zeta * t_r * d_theta
        b0[:, 2, wz] = zeta * t_z * d_theta
        b1[:, 2, ur] = -t_r * shape * inv_r
        b1[:, 2, uz] = -t_z * shape * inv_r
        b1[:, 2, wt] = zeta * shape * inv_r
        # g_tn
        b0[:, 3, wt] = -shape
        b0[:, 3, ur] = n_r * slope
        b0[:, 3, uz] = n_z * slope
        # g_ntheta
        b0[:, 4, ut] = -n_r * shape * inv_r
        b0[:, 4, wr] = t_r * shape * (1.0 - n_r * zeta * inv_r)
        b0[:, 4, wz] = t_z * shape * (1.0 - n_r * zeta * inv_r)
        b1[:, 4, ur] = -n_r * shape * inv_r
        b1[:, 4, uz] = -n_z * shape * inv_r
    return b0, b1, r


def _element_matrices(mesh: ShellMesh, e_mpa: float, nu: float, drilling: float):
    """K0, K1, K2 (M, 12, 12) of every element: K_n = K0 + n K1 + n^2 K2 (no circumferential factor).

    Selective integration along the meridian: 2-point Gauss for the in-plane strains, 1 point (the middle)
    for transverse shear, which frees the linear element from shear locking (Zienkiewicz et al. 1977);
    3-point Gauss through the thickness (the 1/r metric makes the integrand rational).
    """
    g = _element_geometry(mesh)
    in_plane = e_mpa / (1.0 - nu**2) * np.array([[1.0, nu, 0.0], [nu, 1.0, 0.0], [0.0, 0.0, (1.0 - nu) / 2.0]])
    shear = SHEAR_FACTOR * e_mpa / (2.0 * (1.0 + nu)) * np.eye(2)
    k = np.zeros((3, len(g["L"]), 12, 12))
    rules = ((_GAUSS2, slice(0, 3), in_plane), ((np.array([0.0]), np.array([2.0])), slice(3, 5), shear))
    for (xs, ws), rows, d in rules:
        for x, w in zip(xs, ws):
            s = g["L"] * (1.0 + x) / 2.0
            h = g["h_a"] + (g["h_b"] - g["h_a"]) * s / g["L"]
            for eta, w_eta in zip(*_GAUSS3):
                b0, b1, r = _strain_operator(g, s, eta * h / 2.0)
                if np.any(r <= 0.0):
                    raise ModelError("the wall reaches across the spin axis: a shell element lies closer to "
                                     "the axis than half its thickness; the section is too thick there",
                                     key="part.outline")
                dv = (r * w * g["L"] / 2.0 * w_eta * h / 2.0)[:, None, None]
                b0, b1 = b0[:, rows], b1[:, rows]
                db0, db1 = d @ b0, d @ b1
                k[0] += dv * np.einsum("mai,maj->mij", b0, db0)
                cross = np.einsum("mai,maj->mij", b0, db1)
                k[1] += dv * (cross + np.swapaxes(cross, 1, 2))
                k[2] += dv * np.einsum("mai,maj->mij", b1, db1)
    # drilling tie, 2-point Gauss along the element (one point would leave an alternating drilling mode on a
    # straight meridian): omega . n minus the in-plane rotation of the displacement field at the mid-surface,
    # (1/2) n . curl U = (1/2)(-n U_t / r - dU_theta/ds - t_r U_theta / r), energy beta G h (..)^2 r ds
    scale = drilling * e_mpa / (2.0 * (1.0 + nu)) * (g["h_a"] + g["h_b"]) / 2.0 * g["L"] / 2.0
    for x in _GAUSS2[0]:
        s = g["L"] * (1.0 + x) / 2.0
        r = g["r_a"] + s * g["t_r"]
        d0 = np.zeros((len(s), 12))
        d1 = np.zeros((len(s), 12))
        for node, (shape, slope) in enumerate(((1.0 - s / g["L"], -1.0 / g["L"]), (s / g["L"], 1.0 / g["L"]))):
            d0[:, 6 * node + 3] = g["n_r"] * shape
            d0[:, 6 * node + 5] = g["n_z"] * shape
            d0[:, 6 * node + 1] = 0.5 * (slope + g["t_r"] * shape / r)
            d1[:, 6 * node + 0] = 0.5 * g["t_r"] * shape / r
            d1[:, 6 * node + 2] = 0.5 * g["t_z"] * shape / r
        w = (scale * r)[:, None, None]  # beta G h r ds
        k[0] += w * d0[:, :, None] * d0[:, None, :]
        k[1] += w * (d0[:, :, None] * d1[:, None, :] + d1[:, :, None] * d0[:, None, :])
        k[2] += w * d1[:, :, None] * d1[:, None, :]
    return k


# ----------------------------------------------------------------------------------------------------
# the model


class HarmonicShell:
    """Stiffness of a shell of revolution for each circumferential harmonic, and its solution.

    mesh : the mid-surface mesh (nodes, thickness, elements, fixed DOFs)
    E_mpa : Young's modulus [MPa]
    nu : Poisson's ratio [-]
    extra_fixed : optional {n: (N, 6) bool mask}: DOFs held at zero for harmonic n only, on top of
        mesh.fixed (benchmarks, e.g. a symmetry point that stops the n = 0 turning mode)
    drilling_penalty : beta, the modulus of the drilling tie as a fraction of the shear modulus G
    """

    def __init__(self, mesh: ShellMesh, E_mpa: float, nu: float,
                 extra_fixed: dict[int, np.ndarray] | None = None, *, drilling_penalty: float = DRILLING_PENALTY):
        self.mesh = mesh
        self.E_mpa = float(E_mpa)
        self.nu = float(nu)
        self.extra_fixed = {int(n): np.asarray(m, dtype=bool) for n, m in (extra_fixed or {}).items()}
        self.n_dofs = mesh.n_nodes * DOFS_PER_NODE
        self._element_k = _element_matrices(mesh, self.E_mpa, self.nu, drilling_penalty)  # (3, M, 12, 12)
        self._element_dofs = (DOFS_PER_NODE * mesh.elements[:, :, None] + np.arange(DOFS_PER_NODE)).reshape(-1, 12)
        self._node_order, self._node_level = _level_structure(mesh)
        self._setups: dict[bytes, _Setup] = {}

    @cached_property
    def _k(self) -> list[sp.csr_matrix]:
        """K0, K1, K2 assembled over all DOFs (the solver itself works from the element matrices)."""
        dofs = self._element_dofs
        rows = np.broadcast_to(dofs[:, :, None], self._element_k.shape[1:]).ravel()
        cols = np.broadcast_to(dofs[:, None, :], self._element_k.shape[1:]).ravel()
        return [sp.csr_matrix((kc.ravel(), (rows, cols)), shape=(self.n_dofs, self.n_dofs)) for kc in self._element_k]

    # -- matrices ----------------------------------------------------------------------------------
    def stiffness(self, n: int) -> sp.csr_matrix:
        """K_n = K0 + n K1 + n^2 K2 over all DOFs (fixed ones included), no circumferential factor."""
        return (self._k[0] + n * self._k[1] + n * n * self._k[2]).tocsr()

    def fixed_mask(self, n: int) -> np.ndarray:
        """(N, 6) DOFs held at zero for harmonic n."""
        mask = np.array(self.mesh.fixed, dtype=bool)
        if n in self.extra_fixed:
            mask |= self.extra_fixed[n]
        return mask

    # -- loads -------------------------------------------------------------------------------------
    def load_vectors(self, load: ShellLoad, directions_rz: np.ndarray) -> np.ndarray:
        """(n_dofs, 3) nodal load vectors of a unit force: columns dir0, circumferential, dir1.

        directions_rz : (2, 2) two unit vectors in the meridian plane, (e_r, e_z) each.
        A sub-point's force acts on the mid-surface through a rigid arm d to the loaded surface point, so it
        carries the moment d x e (Ahmad et al. 1970: the load is referred to the mid-surface node).
        """
        nodes, mask, vectors = self._local_loads([load], np.asarray(directions_rz, dtype=float)[None])
        full = np.zeros((self.mesh.n_nodes, DOFS_PER_NODE, 3))
        full[nodes[mask]] = vectors[mask]
        return full.reshape(self.n_dofs, 3)

    def _local_loads(self, loads: list[ShellLoad], directions: np.ndarray):
        """Support nodes (P, k) of each load (padding: mask False) and their load vectors (P, k, 6, 3)."""
        counts = [np.size(load.element) for load in loads]
        owner = np.repeat(np.arange(len(loads)), counts)
        element = np.concatenate([np.ravel(load.element) for load in loads]).astype(int)
        xi = np.concatenate([np.ravel(load.xi) for load in loads]).astype(float)
        weight = np.concatenate([np.ravel(load.weight) for load in loads]).astype(float)
        arm = np.concatenate([np.reshape(load.arm_rz, (-1, 2)) for load in loads]).astype(float)
        d_r, d_z = arm[:, 0], arm[:, 1]
        per_point = np.zeros((len(element), DOFS_PER_NODE, 3))
        for col, k in ((0, 0), (2, 1)):
            e_r, e_z = directions[owner, k, 0], directions[owner, k, 1]
            per_point[:, 0, col] = e_r
            per_point[:, 2, col] = e_z
            per_point[:, 4, col] = d_z * e_r - d_r * e_z  # (d x e)_theta; d x e has no r, z part here
        per_point[:, 1, 1] = 1.0  # circumferential force e_theta ...
        per_point[:, 3, 1] = -d_z  # ... and its moment d x e_theta = (-d_z, 0, d_r)
        per_point[:, 5, 1] = d_r
        n_nodes = self.mesh.n_nodes
        key = owner[:, None] * n_nodes + self.mesh.elements[element]  # (k, 2): (load, node) of both ends
        shares = np.stack([1.0 - xi, xi], axis=1) * weight[:, None]
        unique, where = np.unique(key.ravel(), return_inverse=True)
        vectors = np.zeros((len(unique), DOFS_PER_NODE, 3))
        np.add.at(vectors, where, shares.ravel()[:, None, None] * np.repeat(per_point, 2, axis=0))
        load_of, node_of = unique // n_nodes, unique % n_nodes
        slot = np.arange(len(unique)) - np.searchsorted(load_of, load_of)  # rank within its load
        width = int(slot.max(initial=-1)) + 1
        nodes = np.zeros((len(loads), width), dtype=int)
        mask = np.zeros((len(loads), width), dtype=bool)
        padded = np.zeros((len(loads), width, DOFS_PER_NODE, 3))
        nodes[load_of, slot], mask[load_of, slot], padded[load_of, slot] = node_of, True, vectors
        return nodes, mask, padded

    # -- solution ----------------------------------------------------------------------------------
    def displacement(self, n: int, load_vectors: np.ndarray) -> np.ndarray:
        """Nodal amplitudes (N, 6, k) of harmonic n under nodal loads (n_dofs, k) [N/rad, N mm/rad].

        Loads are per radian of circumference (K_n carries no circumferential factor): a load p cos(n theta)
        per radian has the amplitude p. Solved with a banded Cholesky factor on the free DOFs.
        """
        loads = np.asarray(load_vectors, dtype=float).reshape(self.n_dofs, -1)
        setup = self._setup(n)
        self._check_held(n, setup.fixed)
        out = np.zeros((self.n_dofs, loads.shape[1]))
        out[setup.free] = self._solve_banded(n, setup, loads[setup.free])
        return out.reshape(self.mesh.n_nodes, DOFS_PER_NODE, -1)

    def _solve_banded(self, n: int, setup: "_Setup", rhs: np.ndarray) -> np.ndarray:
        """K_n^-1 rhs on the free DOFs (in the level order), banded Cholesky (LAPACK pbtrf/pbtrs)."""
        factor = self._factor(n, setup)
        return scipy.linalg.cho_solve_banded((factor, False), rhs, check_finite=False)

    def _factor(self, n: int, setup: "_Setup") -> np.ndarray:
        """U of K_n = U^T U on the free DOFs, upper banded storage (LAPACK pbtrf, called directly: the
        wrapper's checks cost as much as the factorisation on a wall of a few hundred DOFs)."""
        band = setup.band(n)
        factor, info = scipy.linalg.lapack.dpbtrf(band, lower=0)
        if info != 0 or np.any(factor[-1] ** 2 < PIVOT_FLOOR * band[-1]):
            raise ModelError(_UNHELD + " (the stiffness matrix is singular)", key="held")
        return factor

    def harmonic_terms(self, loads: list[ShellLoad], directions: np.ndarray, n_values) -> np.ndarray:
        """f_i^T K_n^-1 f_j for each harmonic and load, WITHOUT the weights w_n: (len(n_values), P, 3, 3).

        directions : (P, 2, 2) for each load two unit vectors in the meridian plane (e.g. the boundary's
            normal and tangent). Order of i, j: dir0, circumferential, dir1. The circumferential load excites
            the antisymmetric set; its cross terms with the meridian-plane directions vanish by symmetry.
        """
        n_values = np.atleast_1d(np.asarray(n_values, dtype=int))
        prepared = self._prepare(loads, directions)
        out = np.zeros((len(n_values), len(loads), 3, 3))
        everyone = np.arange(len(loads))
        for start in range(0, len(n_values), HARMONIC_BLOCK):
            block = slice(start, start + HARMONIC_BLOCK)
            out[block] = self._terms(prepared, n_values[block], everyone)
        return out

    # -- internals ---------------------------------------------------------------------------------
    def _mask_groups(self, n_values: np.ndarray):
        """Split the harmonics into groups that share one set of fixed DOFs: (harmonics, their indices)."""
        special = np.isin(n_values, list(self.extra_fixed))
        groups = []
        if np.any(~special):
            groups.append((n_values[~special], np.flatnonzero(~special)))
        for n in np.unique(n_values[special]):
            picks = np.flatnonzero(n_values == n)
            groups.append((n_values[picks], picks))
        return groups

    def _prepare(self, loads: list[ShellLoad], directions: np.ndarray) -> dict:
        """Loads in local form, and (filled lazily per set of fixed DOFs) where they sit in the band."""
        directions = np.asarray(directions, dtype=float).reshape(len(loads), 2, 2)
        return {"local": self._local_loads(loads, directions), "gathers": {}}

    def _terms(self, prepared: dict, ns: np.ndarray, active: np.ndarray) -> np.ndarray:
        """(len(ns), len(active), 3, 3) unweighted terms of the loads `active`, harmonics ns."""
        out = np.zeros((len(ns), len(active), 3, 3))
        for group_ns, picks in self._mask_groups(ns):
            setup = self._setup(int(group_ns[0]))
            for n in group_ns:
                if n in (0, 1):
                    self._check_held(int(n), setup.fixed)
            if not len(setup.free):
                continue  # everything held: nothing moves
            key = id(setup)
            if key not in prepared["gathers"]:
                prepared["gathers"][key] = [setup.gather(prepared["local"], group)
                                            for group in (_COS_GROUP, _SIN_GROUP)]
            merid, circ = prepared["gathers"][key]
            span = max(merid.span, circ.span)
            if span > WIDEST_WINDOW or len(active) <= DIRECT_LOADS:
                # loads spread along much of the meridian, or only a few of them: solving K_n u = f for each
                # harmonic is cheaper than the band of K_n^-1
                out[picks] = self._terms_banded(prepared, group_ns, active, setup)
                continue
            band = setup.inverse_band(group_ns, span)
            entries = np.ascontiguousarray(band.reshape(len(group_ns), -1).T)  # (n_free * W, H)
            m = merid.quadratic(entries, band.shape[2], active)  # (H, P, 3): dir0 dir0, dir0 dir1, dir1 dir1
            c = circ.quadratic(entries, band.shape[2], active)  # (H, P, 1)
            out[picks, :, 0, 0] = m[..., 0]
            out[picks, :, 0, 2] = out[picks, :, 2, 0] = m[..., 1]
            out[picks, :, 2, 2] = m[..., 2]
            out[picks, :, 1, 1] = c[..., 0]
        return out

    def _terms_banded(self, prepared: dict, ns: np.ndarray, active: np.ndarray, setup: "_Setup") -> np.ndarray:
        """As `_terms`, by solving K_n u = f for every load vector (banded Cholesky per harmonic)."""
        nodes, mask, vectors = (part[active] for part in prepared["local"])
        full = np.zeros((self.mesh.n_nodes, len(active), DOFS_PER_NODE, 3))
        which = np.nonzero(mask)
        full[nodes[which], which[0]] = vectors[which]
        full = np.moveaxis(full, 1, 2)
        rhs = full.reshape(self.n_dofs, -1)[setup.free]
        out = np.zeros((len(ns), len(active), 3, 3))
        for h, n in enumerate(ns):
            # f^T K^-1 f = |y|^2 with U^T y = f: one triangular solve instead of the two of K u = f
            y, info = scipy.linalg.lapack.dtbtrs(self._factor(int(n), setup), rhs, uplo="U", trans="T")
            y = y.reshape(-1, len(active), 3)
            quad = np.einsum("dpi,dpj->pij", y, y)
            quad[:, 0, 1] = quad[:, 1, 0] = quad[:, 1, 2] = quad[:, 2, 1] = 0.0  # the two sets do not couple
            out[h] = quad
        return out

    def _setup(self, n: int) -> "_Setup":
        fixed = self.fixed_mask(n)
        key = np.packbits(fixed).tobytes()
        if key not in self._setups:
            self._setups[key] = _Setup(self._element_k, self._element_dofs, fixed, self._node_order, self._node_level)
        return self._setups[key]

    def _check_held(self, n: int, fixed: np.ndarray) -> None:
        """Raise ModelError if a rigid-body motion of harmonic n (0 or 1) is not stopped by a fixed DOF."""
        r, z = self.mesh.nodes_rz[:, 0], self.mesh.nodes_rz[:, 1]
        one, zero = np.ones_like(r), np.zeros_like(r)
        if n == 0:
            # axial movement; turning about the axis (u_theta = r, w_z = 1)
            modes = {"axial movement": [np.stack([zero, zero, one, zero, zero, zero], axis=1)],
                     "turning about the spin axis": [np.stack([zero, r, zero, zero, zero, one], axis=1)]}
        elif n == 1:
            # sideways shift (u_r = 1, u_theta = -1) and tilt about a diameter
            modes = {"sideways shift or tilt": [np.stack([one, -one, zero, zero, zero, zero], axis=1),
                                                np.stack([z, -z, -r, one, one, zero], axis=1)]}
        else:
            return
        for name, vectors in modes.items():
            held = np.stack([v[fixed] for v in vectors], axis=1)  # rows: fixed DOFs
            rank = np.linalg.matrix_rank(held, tol=1e-9 * max(1.0, np.abs(held).max(initial=0.0)))
            if rank < len(vectors):
                raise ModelError(f"{_UNHELD}: {name} is not stopped (harmonic n = {n}); hold the part "
                                 "in a box that covers some of its material", key="held")


_UNHELD = "the part is not held: it would move as a rigid body"


def _level_structure(mesh: ShellMesh):
    """Nodes in reverse Cuthill-McKee order and the breadth-first level of each node in that order.

    Edges join nodes of the same or neighbouring levels only, so the stiffness is block tridiagonal over the
    levels (E. Cuthill, J. McKee, "Reducing the bandwidth of sparse symmetric matrices", 1969).
    """
    n = mesh.n_nodes
    a, b = mesh.elements[:, 0], mesh.elements[:, 1]
    graph = sp.csr_matrix((np.ones(2 * len(a)), (np.r_[a, b], np.r_[b, a])), shape=(n, n))
    order = csgraph.reverse_cuthill_mckee(graph, symmetric_mode=True)
    _, component = csgraph.connected_components(graph, directed=False)
    level = np.zeros(n)
    offset = 0.0
    # breadth-first distance from each component's last node in the order (its search root); components
    # one after the other as they appear in the order
    for comp in dict.fromkeys(component[order]):
        members = order[component[order] == comp]
        dist = csgraph.shortest_path(graph, unweighted=True, indices=members[-1])[members]
        level[members] = offset + dist.max() - dist
        offset += dist.max() + 1.0
    order = order[np.argsort(level[order], kind="stable")]  # levels contiguous, RCM order within a level
    return order, level[order]


class _Gather:
    """Where the entries of f^T G f of many loads sit in the row-window band of G = K^-1.

    Only pairs a <= b of each load's support are kept (G is symmetric), listed load after load (no padding:
    a load spread over a corner reaches many more nodes than the rest); `products` holds
    f_a,i f_b,j + f_b,i f_a,j (a < b) or f_a,i f_a,j (a = b) for the wanted (i, j).
    """

    def __init__(self, load: np.ndarray, rows: np.ndarray, cols: np.ndarray, products: np.ndarray, n_loads: int,
                 span: int):
        self.load = load  # (N,) load of each pair, non-decreasing
        self.rows = rows  # (N,) band row (free DOF) of each pair
        self.cols = cols  # (N,) band column of each pair, counted from the row's window start
        self.products = products  # (N, c) load-vector products of each pair
        self.n_loads = n_loads
        self.span = span  # most blocks a load reaches across
        self._maps: dict[int, sp.csr_matrix] = {}

    def quadratic(self, entries: np.ndarray, width: int, active: np.ndarray) -> np.ndarray:
        """(H, P_active, c) quadratic forms of the loads `active` from the band's entries laid out harmonic-last,
        (n_free * W, H): a sparse map from those entries to each load's (i, j) sums, times the entries, so no
        entry is copied (gathering them per pair and harmonic was most of the time of a 1000-point map)."""
        c = self.products.shape[1]
        if width not in self._maps:
            self._maps[width] = sp.csr_matrix(
                (self.products.ravel(), ((self.load[:, None] * c + np.arange(c)).ravel(),
                                         np.repeat(self.rows * width + self.cols, c))),
                shape=(self.n_loads * c, entries.shape[0]))
        wanted = (np.asarray(active)[:, None] * c + np.arange(c)).ravel()
        out = self._maps[width][wanted] @ entries  # (P_active * c, H)
        return out.reshape(len(active), c, -1).transpose(2, 0, 1)


class _Setup:
    """Free DOFs of one fixed mask, laid out in levels, with K0, K1, K2 in LAPACK's upper banded storage over
    the level order (direct solves) and, when the batched selected inverse asks for them, as level blocks."""

    def __init__(self, element_k: np.ndarray, element_dofs: np.ndarray, fixed: np.ndarray, node_order: np.ndarray,
                 node_level: np.ndarray):
        self.fixed = fixed
        dof_order = (DOFS_PER_NODE * node_order[:, None] + np.arange(DOFS_PER_NODE)).ravel()
        keep = ~fixed.ravel()[dof_order]
        self.free = dof_order[keep]  # free DOFs in level order
        self.position = np.full(fixed.size, -1)
        self.position[self.free] = np.arange(len(self.free))
        dof_level = np.repeat(node_level, DOFS_PER_NODE)[keep]
        # merge breadth-first levels into blocks of at least LEVEL_DOFS free DOFs
        cuts = [0]
        for i in np.flatnonzero(np.diff(dof_level)) + 1:
            if i - cuts[-1] >= LEVEL_DOFS:
                cuts.append(i)
        if len(self.free) - cuts[-1] < LEVEL_DOFS and len(cuts) > 1:
            cuts.pop()
        self.starts = np.array(cuts + [len(self.free)])
        self.block_of = np.repeat(np.arange(len(cuts)), np.diff(self.starts))
        self.sizes = np.diff(self.starts)
        self.row_start = np.repeat(self.starts[:-1], self.sizes)
        # every element entry between two free DOFs: (row, column) in the level order and K0, K1, K2 values
        # (entries of neighbouring elements on the same pair are summed where they land)
        at = self.position[element_dofs]  # (M, 12)
        rows = np.broadcast_to(at[:, :, None], element_k.shape[1:]).ravel()
        cols = np.broadcast_to(at[:, None, :], element_k.shape[1:]).ravel()
        both = (rows >= 0) & (cols >= 0)
        self._rows, self._cols = rows[both], cols[both]
        self._values = element_k.reshape(3, -1)[:, both]
        n_free = len(self.free)
        diagonal = self._rows == self._cols
        self.k_diag = np.stack([np.bincount(self._rows[diagonal], weights=v[diagonal], minlength=n_free)
                                for v in self._values])  # (3, n_free)
        width = int(np.abs(self._cols - self._rows).max(initial=0))
        upper = self._cols >= self._rows
        band_index = (width + self._rows[upper] - self._cols[upper]) * n_free + self._cols[upper]
        self.band_parts = np.stack([np.bincount(band_index, weights=v[upper], minlength=(width + 1) * n_free)
                                    for v in self._values]).reshape(3, width + 1, n_free)

    @cached_property
    def _blocks(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """(diag_at, off_at, diag_flat, off_flat): the K0, K1, K2 blocks of every level side by side (row-major),
        so K_n of all levels is one matrix product (`inverse_band`)."""
        bi, bj = self.block_of[self._rows], self.block_of[self._cols]
        if np.any(np.abs(bi - bj) > 1):
            raise RuntimeError("internal: the stiffness is not block tridiagonal over the node levels")
        li, lj = self._rows - self.starts[bi], self._cols - self.starts[bj]
        diag_at = np.r_[0, np.cumsum(self.sizes**2)]
        off_at = np.r_[0, np.cumsum(self.sizes[:-1] * self.sizes[1:])]
        same, up = bi == bj, bj == bi + 1
        diag_index = diag_at[bi[same]] + li[same] * self.sizes[bi[same]] + lj[same]
        off_index = off_at[bi[up]] + li[up] * self.sizes[bj[up]] + lj[up]
        diag_flat = np.stack([np.bincount(diag_index, weights=v[same], minlength=diag_at[-1]) for v in self._values])
        off_flat = np.stack([np.bincount(off_index, weights=v[up], minlength=off_at[-1]) for v in self._values])
        return diag_at, off_at, diag_flat, off_flat

    def band(self, n: int) -> np.ndarray:
        """K_n = K0 + n K1 + n^2 K2 on the free DOFs, upper banded storage (diagonal in the last row)."""
        return self.band_parts[0] + n * self.band_parts[1] + (n * n) * self.band_parts[2]

    def gather(self, local, group: np.ndarray) -> _Gather:
        """Index the support of each load (one DOF group: cos or sin) for `_Gather.quadratic`."""
        nodes, mask, vectors = local
        wanted = [(0, 0), (0, 2), (2, 2)] if group is _COS_GROUP else [(1, 1)]
        n_loads = len(nodes)
        pos = np.where(mask[:, :, None], self.position[DOFS_PER_NODE * nodes[:, :, None] + group], -1)
        pos = pos.reshape(n_loads, -1)  # (P, k) free position of each support DOF, -1 if none
        vec = vectors[:, :, group, :].reshape(n_loads, -1, 3) * (pos >= 0)[:, :, None]
        a, b = np.triu_indices(pos.shape[1])
        valid = (pos[:, a] >= 0) & (pos[:, b] >= 0)
        keep = valid.any(axis=0)
        a, b, valid = a[keep], b[keep], valid[:, keep]
        lo = np.where(valid, np.minimum(pos[:, a], pos[:, b]), 0)
        hi = np.where(valid, np.maximum(pos[:, a], pos[:, b]), 0)
        # the pair (a, b) stands for G_ab and G_ba: f_a,i f_b,j + f_b,i f_a,j, halved on the diagonal
        half = np.where(a == b, 0.5, 1.0) * valid
        products = np.stack([half * (vec[:, a, i] * vec[:, b, j] + vec[:, b, i] * vec[:, a, j]) for i, j in wanted],
                            axis=1)
        block = np.where(pos >= 0, self.block_of[np.maximum(pos, 0)], -1)
        reach = block.max(axis=1) - np.where(pos >= 0, block, np.iinfo(int).max).min(axis=1)
        span = int(reach[block.max(axis=1) >= 0].max(initial=0))
        load, pair = np.nonzero(valid)  # row-major: load after load
        lo, hi = lo[load, pair], hi[load, pair]
        return _Gather(load, lo, hi - self.row_start[lo], products.transpose(0, 2, 1)[load, pair], n_loads, span)

    def inverse_band(self, ns: np.ndarray, width: int):
        """Entries of K_n^-1 within `width` blocks right of the diagonal block, for all n in ns at once.

        Block LDL^T (S_i Schur complements, X_i = S_i^-1 K_i,i+1) forwards, then backwards
        G_ii = S_i^-1 + X_i G_i+1,i+1 X_i^T and G_ij = -X_i G_i+1,j (j > i) (Takahashi et al. 1973).
        Returns the band (H, n_free, W), band[h, p, c] = G_n[p, row_start[p] + c], where row_start[p] is the
        first free DOF of p's block.
        A singular block (a mechanism) shows as a diagonal of S_i^-1 that is not positive or is beyond
        1 / (PIVOT_FLOOR K_jj): for a positive semi-definite K, (S_i^-1)_jj >= 1 / K_jj always.
        """
        ns = np.asarray(ns, dtype=float)
        diag_at, off_at, diag_flat, off_flat = self._blocks
        coef = np.stack([np.ones_like(ns), ns, ns * ns], axis=1)  # (H, 3)
        diag_all = coef @ diag_flat  # (H, sum m_i^2): all levels' K_n blocks in one product
        off_all = coef @ off_flat
        nb, h = len(self.sizes), len(ns)
        s_inv, x = [], []
        inv_diag = np.empty((h, len(self.free)))
        coupling = None  # K_i-1,i
        for i in range(nb):
            m = self.sizes[i]
            k_ii = diag_all[:, diag_at[i]: diag_at[i + 1]].reshape(h, m, m)
            s = k_ii - np.swapaxes(coupling, 1, 2) @ x[-1] if i else k_ii
            try:
                inv = np.linalg.inv(s)
            except np.linalg.LinAlgError:
                raise ModelError(_UNHELD + " (the stiffness matrix is singular)", key="held") from None
            inv_diag[:, self.starts[i]: self.starts[i + 1]] = np.diagonal(inv, axis1=1, axis2=2)
            s_inv.append(inv)
            if i + 1 < nb:
                coupling = off_all[:, off_at[i]: off_at[i + 1]].reshape(h, m, self.sizes[i + 1])
                x.append(inv @ coupling)
        scaled = inv_diag * (coef @ self.k_diag)
        if not np.all((scaled > 0.0) & (scaled < 1.0 / PIVOT_FLOOR)):
            raise ModelError(_UNHELD + " (the stiffness matrix is singular)", key="held")
        width = max(width, 1)  # G_ii needs G_i,i+1
        widths = [int(self.starts[min(i + width + 1, nb)] - self.starts[i]) for i in range(nb)]
        band = np.empty((h, len(self.free), max(widths)))  # entries past a row's width are never read
        last = slice(self.starts[-2], self.starts[-1])
        band[:, last, : widths[-1]] = s_inv[-1]
        for i in range(nb - 2, -1, -1):
            here, m = slice(self.starts[i], self.starts[i + 1]), self.sizes[i]
            nxt = band[:, self.starts[i + 1]: self.starts[i + 2], : widths[i] - m]  # G_i+1,j
            x_g = x[i] @ nxt  # -G_i,j for the blocks j right of i
            np.negative(x_g, out=band[:, here, m: widths[i]])
            band[:, here, :m] = s_inv[i] + x_g[:, :, : self.sizes[i + 1]] @ np.swapaxes(x[i], 1, 2)
        return band


# ----------------------------------------------------------------------------------------------------
# the harmonic sum

MERIDIAN_PLANE = [0, 2]  # the entries (dir0, dir1) whose error decides where the sum stops
FIRST_CHECK = 12         # the tail is first fitted at this harmonic: below it the terms are not yet a power of n
CHECK_EVERY = 4          # ... and then every this many harmonics
FIT_SPAN = 4             # the power of n is fitted through the terms at N - 4 and N
STENCIL = 4              # exact terms each interpolated one is drawn through (`interpolated_terms`)
# The fitted tail's sum, measured against the fully summed series (n to 3000) of 332 loads (the key stations
# of the shipped examples, compliance maps of three of them, the 3-D solid check's points), came out
# between 15 % below and 45 % above the true remainder of the diagonal entries from N = 12 on; half of it
# is the error estimate (tests/test_shell_convergence.py checks the result against the full series).
TAIL_UNCERTAINTY = 0.5
EXPLICIT_PERIODS = 8.0   # the tail is summed term by term up to n a = 8; beyond that sin^2(n a) averages 1/2
MOST_EXPLICIT = 4096     # most terms summed one by one in a tail (a patch of a few degrees or wider needs < 400)
FIRST_BLOCK = FIRST_CHECK  # harmonics 1..12 first, then blocks of a few checks
# harmonics per block for a few loads (solved directly, one harmonic at a time): with the terms between the checks
# interpolated (`compliance`) a block of two checks costs two factorisations, and the loop's own work per block
# (the fit, the weights) then costs more than a harmonic computed past where the sum stops (the 122 key stations
# of the shipped examples: 0.54 s against 0.65 s in blocks of one check)
BLOCK_FEW = 2 * CHECK_EVERY
BLOCK_MANY = 8 * CHECK_EVERY   # ... for many loads (the batched selected inverse costs little per extra harmonic)
TAIL_WORK = 2_000_000    # most (load, term) entries of one explicit tail sum at once


def compliance(shell: HarmonicShell, loads: list[ShellLoad], directions: np.ndarray, tol: float = 1e-3,
               n_max: int = 4000, floor_mm_per_n: float = 0.0, sampled: bool = True) -> tuple[np.ndarray, int]:
    """Compliance (P, 3, 3) [mm/N] of each load, C_ij = sum_n w_n f_i^T K_n^-1 f_j, and the highest n used.

    loads : unit-force patches; directions : (P, 2, 2) two meridian-plane unit vectors per load.
    Order of i, j: dir0, circumferential, dir1.

    The series is summed, not truncated. Past the patch's first few harmonics the unweighted terms
    f^T K_n^-1 f fall off as a smooth power of n (bending, then transverse shear: the local exponent drifts
    slowly from about 2 to 1); with the patch's known weights w_n = g_n^2 / pi, g_n = sin(n a) / (n a), the
    remainder after harmonic N is summed from the power law through the terms at N - 4 and N (`tail_sums`),
    the off-diagonal entry's with the correlation of the last term held. That extrapolated whole sum is the
    result; its error is estimated as TAIL_UNCERTAINTY times the fitted remainder (sqrt(T_ii T_jj) off the
    diagonal: the Cauchy-Schwarz scale of a positive semi-definite sum). A load's sum stops at the first check
    (n = 12, 16, 20, ...) where the estimate of every meridian-plane entry (dir0, dir1: the normal and
    along-the-boundary directions, the ones that move the cut surface) is below tol * sqrt(|C_ii C_jj|), or
    below tol * floor_mm_per_n where the compliance is smaller than that floor (a point in or next to a held
    zone, whose compliance is near zero and whose relative error means nothing); so a load's result does
    not depend on which other loads are computed with it. A full ring (half-angle pi) is done after n = 0.
    The circumferential entry gets its fitted tail where its terms decay faster than 1/n; on a thick region
    loaded at its surface (a hub, a junction) its raw terms tend to a constant, the rigid fibre turning a
    circumferential force into a twisting moment, and it is known only to about 1/n_used there.

    Each harmonic's term costs a factorisation of K_n, so with `sampled` (the default) only the terms up to
    FIRST_CHECK and at the checks (every CHECK_EVERY: the tail's fit uses those two only) are computed, with
    any harmonic that has its own fixed DOFs; the terms in between are interpolated, plain interpolation of a
    smooth sequence (`interpolated_terms`: a cubic through the three computed terms below and the one above, in
    log T against log n, where a power of n is a straight line; the (dir0, dir1) entry through its correlation). Against
    every harmonic computed (sampled=False), on the 122 key stations of the four shipped examples' simulations
    the sums differ by at most 4.4e-5 of sqrt(|C_ii C_jj|) and stop at the same harmonic, with about half the
    factorisations (tests/test_shell_convergence.py; the compliance maps of the examples and the validation
    shells there: at most 5.2e-5).
    Raises ModelError if a load has not converged by n_max (a patch too small for the mesh).
    """
    directions = np.asarray(directions, dtype=float).reshape(len(loads), 2, 2)
    half = np.array([load.half_angle_rad for load in loads])
    prepared = shell._prepare(loads, directions)
    total = np.zeros((len(loads), 3, 3))
    partial = np.zeros((len(loads), 3, 3))  # sum of the weighted terms so far
    recent = np.zeros((len(loads), 0, 3, 3))  # the last FIT_SPAN raw terms of each active load, for the fit
    samples_n = np.zeros(0, dtype=int)  # the last STENCIL - 1 harmonics computed exactly ...
    samples = np.zeros((len(loads), 0, 3, 3))  # ... and their raw terms, for the interpolation
    active = np.arange(len(loads))
    n_used, start, size = 0, 0, 1  # n = 0 on its own: a full ring (half-angle pi) is done after it
    while start <= n_max:
        if start == 1:
            ring = half[active] >= np.pi  # a full ring loads n = 0 only: its sum is that term
            total[active[ring]] = partial[active[ring]]
            active, recent, samples = active[~ring], recent[~ring], samples[~ring]
            if not len(active):
                return total, n_used
        ns = np.arange(start, min(start + size, n_max + 1))
        exact = _computed(shell, ns, sampled)
        raw = np.zeros((len(ns), len(active), 3, 3))
        raw[exact] = shell._terms(prepared, ns[exact], active)  # (H, P_active, 3, 3)
        regular = exact & ~np.isin(ns, list(shell.extra_fixed))
        samples_n = np.concatenate([samples_n, ns[regular]])
        samples = np.concatenate([samples, np.moveaxis(raw[regular], 0, 1)], axis=1)
        if not np.all(exact):
            raw[~exact] = interpolated_terms(samples_n, samples, ns[~exact])
        samples_n, samples = samples_n[-(STENCIL - 1):], samples[:, -(STENCIL - 1):]
        weighted = harmonic_weights(ns[:, None], half[active][None, :])[:, :, None, None] * raw
        sums = partial[active] + np.cumsum(weighted, axis=0)  # partial sums after each harmonic
        history = np.concatenate([recent, np.moveaxis(raw, 0, 1)], axis=1)  # (P_active, past + H, 3, 3)
        finished = np.zeros(len(active), dtype=bool)
        for h in np.flatnonzero((ns >= FIRST_CHECK) & (ns % CHECK_EVERY == 0)):
            at = history.shape[1] - len(ns) + h  # harmonic ns[h] in the history
            open_ = np.flatnonzero(~finished)
            tail, error = fitted_tail(history[open_, at], history[open_, at - FIT_SPAN], int(ns[h]),
                                      half[active[open_]])
            whole = sums[h, open_] + tail
            diag = np.abs(np.diagonal(whole, axis1=1, axis2=2))
            scale = tol * np.maximum(np.sqrt(diag[:, :, None] * diag[:, None, :]), floor_mm_per_n) + 1e-300
            met = np.all((error <= scale)[:, MERIDIAN_PLANE][:, :, MERIDIAN_PLANE], axis=(1, 2))
            total[active[open_[met]]] = whole[met]
            finished[open_[met]] = True
            if met.any():
                n_used = max(n_used, int(ns[h]))
        partial[active] = sums[-1]
        recent = history[~finished, -FIT_SPAN:]
        samples = samples[~finished]
        active = active[~finished]
        if not len(active):
            return total, n_used
        start = int(ns[-1]) + 1
        size = FIRST_BLOCK if start == 1 else (BLOCK_FEW if len(active) <= DIRECT_LOADS else BLOCK_MANY)
    raise ModelError(f"the harmonic sum of the compliance did not converge to {tol:g} by n = {n_max}: "
                     "the loaded patch is too small for the shell mesh (or the tolerance too tight); use a larger "
                     "patch or a looser tolerance", key="--patch")


def _computed(shell: HarmonicShell, ns: np.ndarray, sampled: bool) -> np.ndarray:
    """Which of the harmonics ns (one block) are computed exactly: all of them unless `sampled`; else those
    up to FIRST_CHECK and the checks (every CHECK_EVERY). All of a block that does not end on a check (the
    last one before n_max: no sample to its right) or that holds a harmonic past FIRST_CHECK with its own
    fixed DOFs (its term is not on the others' curve)."""
    special = np.isin(ns, list(shell.extra_fixed)) & (ns > FIRST_CHECK)
    if not sampled or ns[-1] % CHECK_EVERY or special.any():
        return np.ones(len(ns), dtype=bool)
    return (ns <= FIRST_CHECK) | (ns % CHECK_EVERY == 0)


def interpolated_terms(samples_n: np.ndarray, samples: np.ndarray, ns: np.ndarray) -> np.ndarray:
    """(len(ns), P, 3, 3) unweighted terms at the harmonics ns, interpolated between exact ones.

    samples_n : (k,) increasing harmonics computed exactly; samples : (P, k, 3, 3) their terms. Each n uses the
    STENCIL samples ending at the first sample above it: three below n, one above (the terms further out are
    not yet known when a check needs the sum, and a load's result must not depend on how far the loads
    computed with it go). Diagonal entries: a cubic in (log n, log T_ii) (they fall as a slowly drifting
    power of n); where a sample is not positive (a held point) linear in n between the two neighbours. The
    (dir0, dir1) entry through its correlation rho = T_02 / sqrt(T_00 T_22) (a cubic in log n, kept in
    [-1, 1]); the others (zero by symmetry) linear.
    """
    right = np.searchsorted(samples_n, ns)  # index of the first sample above each n
    if np.any(right < STENCIL - 1) or np.any(right >= len(samples_n)):
        raise RuntimeError("internal: a harmonic to interpolate is not inside the exact samples")
    stencil = right[:, None] + np.arange(1 - STENCIL, 1)  # (H, S)
    x = np.log(samples_n[stencil].astype(float))  # (H, S)
    basis = _lagrange(x, np.log(ns.astype(float)))  # (H, S)
    values = np.moveaxis(samples[:, stencil], 0, 1)  # (H, P, S, 3, 3)
    lo, hi = samples_n[right - 1].astype(float), samples_n[right].astype(float)
    share = ((ns - lo) / (hi - lo))[:, None, None, None]
    out = (1.0 - share) * values[:, :, -2] + share * values[:, :, -1]  # linear in n, every entry
    diag = np.diagonal(values, axis1=3, axis2=4)  # (H, P, S, 3)
    positive = np.all(diag > 0.0, axis=2)  # (H, P, 3)
    with np.errstate(divide="ignore", invalid="ignore"):
        log_diag = np.einsum("hs,hpsi->hpi", basis, np.log(np.where(diag > 0.0, diag, 1.0)))
        power = np.exp(log_diag)
        out[..., [0, 1, 2], [0, 1, 2]] = np.where(positive, power, np.diagonal(out, axis1=2, axis2=3))
        rho = values[..., 0, 2] / np.sqrt(diag[..., 0] * diag[..., 2])  # (H, P, S)
        rho = np.clip(np.einsum("hs,hps->hp", basis, rho), -1.0, 1.0)
        pair = positive[..., 0] & positive[..., 2]
        out[..., 0, 2] = out[..., 2, 0] = np.where(pair, rho * np.sqrt(power[..., 0] * power[..., 2]), out[..., 0, 2])
    return out


def _lagrange(x: np.ndarray, at: np.ndarray) -> np.ndarray:
    """(H, S) Lagrange basis of the nodes x (H, S) evaluated at `at` (H,): the interpolant is basis @ values."""
    diff = at[:, None] - x  # (H, S)
    gaps = x[:, :, None] - x[:, None, :]  # (H, S, S)
    s = x.shape[1]
    off = ~np.eye(s, dtype=bool)
    numer = np.stack([np.prod(diff[:, off[j]], axis=1) for j in range(s)], axis=1)
    denom = np.stack([np.prod(gaps[:, j, off[j]], axis=1) for j in range(s)], axis=1)
    return numer / denom


def fitted_tail(raw_last: np.ndarray, raw_before: np.ndarray, n_last: int,
                half_angle: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The remainder of each load's series after harmonic N = n_last, fitted, and its error estimate.

    raw_last, raw_before : (P, 3, 3) unweighted terms at N and N - FIT_SPAN; half_angle : (P,) [rad].
    Each diagonal entry's terms are taken as A n^-p through the two (`tail_sums` weights them); the
    off-diagonal (dir0, dir1) entry as rho sqrt(A_0 A_2) n^-(p_0 + p_2)/2 with the correlation rho of the term
    at N held. Returns (tail (P, 3, 3), error (P, 3, 3)): the error is TAIL_UNCERTAINTY sqrt(T_ii T_jj), or
    inf for an entry whose terms do not yet fall (the fit means nothing there); a term that vanishes (a
    held point) has no tail.
    """
    last = np.diagonal(raw_last, axis1=1, axis2=2)  # (P, 3)
    before = np.diagonal(raw_before, axis1=1, axis2=2)
    with np.errstate(divide="ignore", invalid="ignore"):
        exponent = np.log(before / last) / math.log(n_last / (n_last - FIT_SPAN))
    vanished = last <= 0.0
    falling = ~vanished & (before > last) & np.isfinite(exponent)
    exponent = np.where(falling, exponent, 2.0)
    pair = 0.5 * (exponent[:, 0] + exponent[:, 2])
    factors = tail_sums(n_last, np.column_stack([exponent, pair]), half_angle)  # (P, 4)
    diagonal_tail = np.where(falling, last * factors[:, :3], 0.0)
    known = (falling | vanished) & np.isfinite(diagonal_tail)
    tail = np.zeros_like(raw_last)
    tail[:, [0, 1, 2], [0, 1, 2]] = np.where(known, diagonal_tail, 0.0)
    both = known[:, 0] & known[:, 2] & falling[:, 0] & falling[:, 2] & np.isfinite(factors[:, 3])
    tail[:, 0, 2] = tail[:, 2, 0] = np.where(both, raw_last[:, 0, 2] * factors[:, 3], 0.0)
    spread = np.where(known, TAIL_UNCERTAINTY * np.abs(diagonal_tail), np.inf)
    with np.errstate(invalid="ignore"):
        error = np.sqrt(spread[:, :, None] * spread[:, None, :])
    return tail, np.where(np.isnan(error), np.inf, error)


def tail_sums(n_last: int, exponent: np.ndarray, half_angle: np.ndarray) -> np.ndarray:
    """(P, k) sums over m > N of w_m (m / N)^-p, the patch's weights w_m = g_m^2 / pi (`harmonic_weights`),
    for exponents p (P, k) and half-angles a (P,) [rad]; inf where the sum diverges.

    A point load (a = 0): sum m^-p by the midpoint rule, N^p (N + 1/2)^(1 - p) / (p - 1), finite for p > 1.
    A patch: term by term up to n a = EXPLICIT_PERIODS (at most MOST_EXPLICIT terms), and beyond that with
    sin^2(n a) replaced by its mean 1/2: N^p (M + 1/2)^-(p + 1) / (2 a^2 (p + 1)), the midpoint rule again.
    """
    n = float(n_last)
    out = np.full(exponent.shape, np.inf)
    point = half_angle <= 0.0
    p = exponent[point]
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        out[point] = np.where(p > 1.0, n**p * (n + 0.5) ** (1.0 - p) / (p - 1.0), np.inf) / np.pi
    patch = np.flatnonzero(~point)
    if not len(patch):
        return out
    # each load's own extent, so that its result does not depend on the loads computed with it
    extent = np.minimum(MOST_EXPLICIT, np.ceil(EXPLICIT_PERIODS / half_angle[patch])).astype(int)
    m = np.arange(n_last + 1, n_last + extent.max() + 1, dtype=float)
    log_ratio = np.log(m / n)
    rows = max(1, TAIL_WORK // (len(m) * exponent.shape[1]))
    for first in range(0, len(patch), rows):
        picks = patch[first: first + rows]
        a, p, last = half_angle[picks], exponent[picks], n_last + extent[first: first + rows]
        weights = np.where(m[None, :] <= last[:, None], harmonic_weights(m[None, :], a[:, None]), 0.0)  # (p, M)
        explicit = np.einsum("pm,pkm->pk", weights, np.exp(-p[:, :, None] * log_ratio[None, None, :]))
        beyond = np.exp(p * math.log(n) - (p + 1.0) * np.log(last[:, None] + 0.5)) / (2.0 * np.pi * a[:, None] ** 2
                                                                                       * (p + 1.0))
        out[picks] = explicit + beyond
    return out


# ----------------------------------------------------------------------------------------------------
# the consistent mass, for the wall's modes (`deflect.mechanics.modes`)

_GAUSS4 = np.polynomial.legendre.leggauss(4)


def _element_mass(mesh: ShellMesh, density_t_mm3: float) -> np.ndarray:
    """(M, 12, 12) consistent mass of every element: integral of rho N^T N r ds dzeta (no circumferential factor).

    N is the degenerated-solid displacement of the stiffness, U = u + zeta (omega x n) at the true radius
    r(s, zeta), so the rotary inertia of the wall fibre, rho h^3 / 12 per unit area on a flat wall, comes with
    it (Ahmad, Irons, Zienkiewicz 1970, the mass of the same element). In (r, theta, z):
        U_r = u_r + zeta n_z w_theta,  U_theta = u_theta + zeta (t_r w_r + t_z w_z),  U_z = u_z - zeta n_r w_theta.
    The rotation about the wall normal (drilling) moves no material and carries no mass. The displacement
    amplitudes of harmonic n go with cos or sin n theta whose squares integrate to the same pi, so one mass
    matrix serves every harmonic (2 pi for n = 0, as the stiffness). Exact quadrature: the integrand is of
    degree 6 along the element (4-point Gauss) and 3 through the thickness (3-point Gauss).
    """
    g = _element_geometry(mesh)
    t_r, t_z, n_r, n_z, length = g["t_r"], g["t_z"], g["n_r"], g["n_z"], g["L"]
    mass = np.zeros((len(length), 12, 12))
    for x, w in zip(*_GAUSS4):
        s = length * (1.0 + x) / 2.0
        h = g["h_a"] + (g["h_b"] - g["h_a"]) * s / length
        for eta, w_eta in zip(*_GAUSS3):
            zeta = eta * h / 2.0
            r = g["r_a"] + s * t_r + zeta * n_r
            shape_matrix = np.zeros((len(s), 3, 12))
            for node, shape in enumerate((1.0 - s / length, s / length)):
                ur, ut, uz, wr, wt, wz = (6 * node + k for k in range(6))
                shape_matrix[:, 0, ur] = shape
                shape_matrix[:, 0, wt] = zeta * n_z * shape
                shape_matrix[:, 1, ut] = shape
                shape_matrix[:, 1, wr] = zeta * t_r * shape
                shape_matrix[:, 1, wz] = zeta * t_z * shape
                shape_matrix[:, 2, uz] = shape
                shape_matrix[:, 2, wt] = -zeta * n_r * shape
            dv = density_t_mm3 * r * w * length / 2.0 * w_eta * h / 2.0
            mass += dv[:, None, None] * np.einsum("mai,maj->mij", shape_matrix, shape_matrix)
    return mass


def mass_matrix(mesh: ShellMesh, density_t_mm3: float) -> sp.csr_matrix:
    """Consistent mass [t] of the shell over all DOFs (fixed ones included), the same for every harmonic.

    density_t_mm3 : density in tonnes per mm3 (1 g/cm3 = 1e-9 t/mm3), so that with mm, N and s the
        eigenvalues of K_n phi = omega^2 M phi come out in rad^2/s^2 (1 N = 1 t mm / s^2).
    """
    if not (np.isfinite(density_t_mm3) and density_t_mm3 > 0.0):
        raise ModelError(f"the density must be a positive number, got {density_t_mm3}")
    me = _element_mass(mesh, float(density_t_mm3))
    n_dofs = mesh.n_nodes * DOFS_PER_NODE
    dofs = (DOFS_PER_NODE * mesh.elements[:, :, None] + np.arange(DOFS_PER_NODE)).reshape(-1, 12)
    rows = np.broadcast_to(dofs[:, :, None], me.shape).ravel()
    cols = np.broadcast_to(dofs[:, None, :], me.shape).ravel()
    return sp.csr_matrix((me.ravel(), (rows, cols)), shape=(n_dofs, n_dofs))
