"""Check solver for the tests: a solid of revolution under circumferential Fourier harmonics.

Test-only, written independently of `deflect.mechanics.shell` (nothing is imported from the package): it gives the
3-D elastic answer that the shell model of the wall is measured against in `test_against_3d_solid.py`.

Takes a section made of axis-parallel rectangles (a sleeve, a cup = wall + bottom plate, a flange), the grid
lines of a structured mesh, the elastic constants E [MPa], nu and held boxes; gives the stiffness of each
harmonic, its solution, and the patch-averaged compliance [mm/N] under a uniform traction over a patch of the
boundary.

Method: the semi-analytical finite-element method for axisymmetric solids under non-axisymmetric loads,
    E. L. Wilson, "Structural analysis of axisymmetric solids", AIAA Journal 3 (1965) 2269-2274;
    O. C. Zienkiewicz, R. L. Taylor, The Finite Element Method, vol. 1 (axisymmetric solids) and vol. 2
    (semi-analytical finite-element processes: use of orthogonal functions).
Full 3-D isotropic elasticity in cylindrical coordinates. Harmonic n (symmetric set):
    u_r = U(r, z) cos n theta,  u_theta = V(r, z) sin n theta,  u_z = W(r, z) cos n theta,
so that, with 1/r at the true radius,
    e_r = U,r   e_theta = (U + n V)/r   e_z = W,z   g_rz = U,z + W,r          (times cos n theta)
    g_rtheta = -n U/r + V,r - V/r     g_thetaz = V,z - n W/r                  (times sin n theta).
The strains are linear in n, B(n) = B0 + n B1, so K_n = K0 + n K1 + n^2 K2 with K = integral of B^T D B r dr dz
(no circumferential factor: integral of cos^2 = integral of sin^2 = pi for n >= 1; for n = 0 only the cosine
terms exist, 2 pi, and V, the torsion of the other set, is held at zero). 9-node Lagrange rectangles
(biquadratic), 3 x 3 Gauss points, scipy.sparse assembly, one sparse LU factorisation per harmonic.

Patch load. A unit force into the material, spread uniformly over |theta| < a and an interval of the
boundary (length A along it): its traction has the cosine series (1 / (2 a int r ds)) (2a/(2 pi) +
sum_n (2 sin(n a) / (n pi)) cos n theta). With f = int N^T d r ds / int r ds (d the inward unit normal) and
g_n = sin(n a)/(n a), harmonic n carries the load c_n f (c_0 = 1/(2 pi), c_n = g_n / pi), and the patch average
of its displacement along d is g_n f^T U_n. Hence
    compliance = sum_n w_n f^T K_n^-1 f,   w_0 = 1/(2 pi),   w_n = g_n^2 / pi,
summed until the terms (with g_n^2 replaced by its envelope min(1, 1/(n a))^2, so that a zero of g_n does not
stop the sum early) have been below `tol` of the sum for three harmonics in a row.

Modes (test_against_3d_solid_modes.py): the consistent mass M = integral of rho N^T N r dr dz for each of U, V, W,
the same for every harmonic (the circumferential factor pi, or 2 pi for n = 0, is common to K_n and M), and the
lowest eigenpairs of K_n q = w^2 M q by scipy.sparse.linalg.eigsh in shift-invert mode (sigma = 0).

Limits: rectangles only, a structured tensor grid (cells whose centre lies in a rectangle are material);
unheld nodes on the spin axis are refused (no axis conditions are implemented; hold the hub or leave a hole).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import eigsh, splu

GAUSS3_X = np.array([-math.sqrt(0.6), 0.0, math.sqrt(0.6)])
GAUSS3_W = np.array([5.0, 8.0, 5.0]) / 9.0
DOFS = 3                        # U, V, W per node
IN_A_ROW = 3                    # harmonics in a row below tol before the sum stops
FIRST_STOP_HARMONIC = 4         # the sum never stops before this harmonic
GRID_SAMPLES = 4001             # samples of the spacing function per interval of `graded_lines`


@dataclass(frozen=True)
class Rect:
    """A rectangle of the half-plane [mm]: material, or a held box (closed)."""

    r_mm: tuple[float, float]
    z_mm: tuple[float, float]

    def contains(self, r: np.ndarray, z: np.ndarray, eps: float = 0.0) -> np.ndarray:
        return ((r >= self.r_mm[0] - eps) & (r <= self.r_mm[1] + eps)
                & (z >= self.z_mm[0] - eps) & (z <= self.z_mm[1] + eps))


@dataclass(frozen=True)
class SurfacePatch:
    """A uniform unit force on a straight piece of the boundary, from `start` to `end` (r, z) [mm], pushing
    along the unit vector `inward` (into the material), over |theta| < half_angle_rad."""

    start: tuple[float, float]
    end: tuple[float, float]
    inward: tuple[float, float]
    half_angle_rad: float


def face_patch(point_rz, outward_normal, length_mm: float, width_mm: float) -> SurfacePatch:
    """The patch of a unit force into the material at a point of a straight face: `length_mm` along the face,
    centred on the point, and `width_mm` around the circumference at the point's radius."""
    point = np.asarray(point_rz, float)
    normal = np.asarray(outward_normal, float)
    along = 0.5 * length_mm * np.array([-normal[1], normal[0]])
    return SurfacePatch(tuple(point - along), tuple(point + along), tuple(-normal), width_mm / (2.0 * point[0]))


def graded_lines(breaks, fine_mm: float, coarse_mm: float, foci=(), growth: float = 0.2) -> np.ndarray:
    """Grid lines through every break, spacing h(x) = min(coarse, fine + growth * distance to the nearest focus)
    (just `coarse` without foci): each interval between breaks gets ceil(int dx / h) equal steps of the
    stretched coordinate int dx / h."""
    breaks = np.unique(np.asarray(breaks, float))
    foci = np.asarray(foci, float)
    lines = [breaks[:1]]
    for low, high in zip(breaks[:-1], breaks[1:]):
        x = np.linspace(low, high, GRID_SAMPLES)
        dist = np.min(np.abs(x[:, None] - foci[None, :]), axis=1) if foci.size else np.full_like(x, np.inf)
        density = 1.0 / np.minimum(coarse_mm, fine_mm + growth * dist)
        stretched = np.concatenate([[0.0], np.cumsum(0.5 * (density[1:] + density[:-1]) * np.diff(x))])
        steps = max(1, math.ceil(stretched[-1] - 1e-9))
        lines.append(np.interp(np.linspace(0.0, stretched[-1], steps + 1), stretched, x)[1:])
    return np.concatenate(lines)


def structured_solid(rects: list[Rect], held: list[Rect], patches: list[SurfacePatch], E_mpa: float, nu: float,
                     fine_mm: float, coarse_mm: float, growth: float = 0.2) -> SolidOfRevolution:
    """The solid on a grid through every edge of the rectangles and held boxes (inside the part's extent) and
    every patch end, `fine_mm` at the patch ends growing to `coarse_mm` away from them (`graded_lines`)."""
    lines = []
    for axis in (0, 1):  # r, then z
        spans = [(box.r_mm, box.z_mm)[axis] for box in rects + held]
        low = min(min(span) for span in spans[: len(rects)])
        high = max(max(span) for span in spans[: len(rects)])
        ends = [x for patch in patches for x in (patch.start[axis], patch.end[axis])]
        breaks = [x for span in spans for x in span] + ends
        breaks = [x for x in breaks if low <= x <= high]
        lines.append(graded_lines(breaks, fine_mm, coarse_mm, ends, growth))
    return SolidOfRevolution(rects, lines[0], lines[1], E_mpa, nu, held)


def quadratic_shape(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """1-D quadratic Lagrange functions on nodes -1, 0, 1 and their derivatives, (len(x), 3) each."""
    x = np.asarray(x, float)
    values = np.stack([0.5 * x * (x - 1.0), 1.0 - x * x, 0.5 * x * (x + 1.0)], axis=-1)
    slopes = np.stack([x - 0.5, -2.0 * x, x + 0.5], axis=-1)
    return values, slopes


def elasticity_matrix(E_mpa: float, nu: float) -> np.ndarray:
    """Isotropic D for (e_r, e_theta, e_z, g_rz, g_rtheta, g_thetaz) [MPa]."""
    lam = E_mpa * nu / ((1.0 + nu) * (1.0 - 2.0 * nu))
    mu = E_mpa / (2.0 * (1.0 + nu))
    d = np.zeros((6, 6))
    d[:3, :3] = lam
    d[np.arange(3), np.arange(3)] += 2.0 * mu
    d[np.arange(3, 6), np.arange(3, 6)] = mu
    return d


class SolidOfRevolution:
    """Solid of revolution on a structured grid of 9-node rectangles.

    rects : material rectangles (their union is the section)
    r_lines, z_lines : grid lines [mm], covering the rectangles and through all their edges
    E_mpa, nu : Young's modulus [MPa], Poisson's ratio
    held : boxes; every node inside one (closed, with a tolerance of 1e-9 of the part's size) is fixed
    """

    def __init__(self, rects: list[Rect], r_lines, z_lines, E_mpa: float, nu: float, held: list[Rect]):
        self.r_lines = np.asarray(r_lines, float)
        self.z_lines = np.asarray(z_lines, float)
        size = max(np.ptp(self.r_lines), np.ptp(self.z_lines))
        self.eps = 1e-9 * size
        rc = 0.5 * (self.r_lines[1:] + self.r_lines[:-1])
        zc = 0.5 * (self.z_lines[1:] + self.z_lines[:-1])
        rr, zz = np.meshgrid(rc, zc, indexing="ij")
        self.active = np.zeros(rr.shape, bool)
        for rect in rects:
            self.active |= rect.contains(rr, zz)
        self._mesh()
        self._assemble(elasticity_matrix(E_mpa, nu))
        held_node = np.zeros(len(self.nodes), bool)
        for box in held:
            held_node |= box.contains(self.nodes[:, 0], self.nodes[:, 1], self.eps)
        on_axis = self.nodes[:, 0] < self.eps
        if np.any(on_axis & ~held_node):
            raise ValueError("unheld nodes on the spin axis: hold the hub or leave a hole (no axis conditions)")
        fixed = np.repeat(held_node, DOFS)
        torsion = np.zeros(self.n_dofs, bool)
        torsion[1::DOFS] = True
        self.free = {0: np.flatnonzero(~(fixed | torsion)), 1: np.flatnonzero(~fixed)}
        self._reduced = {key: [part[dofs][:, dofs].tocsc() for part in self._parts]
                         for key, dofs in self.free.items()}
        for parts in self._reduced.values():
            for part in parts[1:]:
                same = np.array_equal(part.indices, parts[0].indices) and np.array_equal(part.indptr, parts[0].indptr)
                if not same:
                    raise RuntimeError("internal: K0, K1, K2 do not share one sparsity pattern")

    # -- mesh and matrices -------------------------------------------------------------------------
    def _mesh(self) -> None:
        """Nodes at the grid corners, edge mid-points and cell centres of the active cells."""
        nr, nz = self.active.shape
        r2 = np.empty(2 * nr + 1)
        r2[0::2], r2[1::2] = self.r_lines, 0.5 * (self.r_lines[1:] + self.r_lines[:-1])
        z2 = np.empty(2 * nz + 1)
        z2[0::2], z2[1::2] = self.z_lines, 0.5 * (self.z_lines[1:] + self.z_lines[:-1])
        p, q = np.nonzero(self.active)
        a, b = np.meshgrid(np.arange(3), np.arange(3), indexing="ij")
        grid_index = (2 * p[:, None, None] + a) * (2 * nz + 1) + (2 * q[:, None, None] + b)  # (M, 3, 3)
        used, local = np.unique(grid_index.ravel(), return_inverse=True)
        self.connect = local.reshape(len(p), 9)  # node (a, b) of an element at 3 a + b
        self.nodes = np.stack([r2[used // (2 * nz + 1)], z2[used % (2 * nz + 1)]], axis=1)
        self.cell = np.stack([p, q], axis=1)
        self.element_of_cell = np.full(self.active.shape, -1)
        self.element_of_cell[p, q] = np.arange(len(p))
        self.n_dofs = DOFS * len(self.nodes)

    def _assemble(self, d: np.ndarray) -> None:
        """K0, K1, K2 over all DOFs (module docstring)."""
        p, q = self.cell[:, 0], self.cell[:, 1]
        r0, dr = self.r_lines[p], np.diff(self.r_lines)[p]
        dz = np.diff(self.z_lines)[q]
        val, slope = quadratic_shape(GAUSS3_X)  # (3 points, 3 functions)
        # shape values and derivatives at the 9 Gauss points (i along r, j along z) for the 9 nodes (a, b)
        n_ref = np.einsum("ia,jb->ijab", val, val).reshape(9, 9)
        dn_dxi = np.einsum("ia,jb->ijab", slope, val).reshape(9, 9)
        dn_deta = np.einsum("ia,jb->ijab", val, slope).reshape(9, 9)
        xi = np.repeat(GAUSS3_X, 3)
        weight = np.outer(GAUSS3_W, GAUSS3_W).ravel()
        r = r0[:, None] + 0.5 * (1.0 + xi[None, :]) * dr[:, None]  # (M, 9)
        n_r = dn_dxi[None] * (2.0 / dr)[:, None, None]  # (M, gauss, node)
        n_z = dn_deta[None] * (2.0 / dz)[:, None, None]
        n_over_r = n_ref[None] / r[:, :, None]
        m = len(p)
        b0 = np.zeros((m, 9, 6, 9, DOFS))
        b1 = np.zeros((m, 9, 6, 9, DOFS))
        u, v, w = 0, 1, 2
        b0[:, :, 0, :, u] = n_r                     # e_r = U,r
        b0[:, :, 1, :, u] = n_over_r                # e_theta = (U + n V) / r
        b1[:, :, 1, :, v] = n_over_r
        b0[:, :, 2, :, w] = n_z                     # e_z = W,z
        b0[:, :, 3, :, u] = n_z                     # g_rz = U,z + W,r
        b0[:, :, 3, :, w] = n_r
        b1[:, :, 4, :, u] = -n_over_r               # g_rtheta = -n U / r + V,r - V / r
        b0[:, :, 4, :, v] = n_r - n_over_r
        b0[:, :, 5, :, v] = n_z                     # g_thetaz = V,z - n W / r
        b1[:, :, 5, :, w] = -n_over_r
        b0 = b0.reshape(m, 9, 6, 27)
        b1 = b1.reshape(m, 9, 6, 27)
        dv = weight[None, :] * r * (0.25 * dr * dz)[:, None]  # (M, 9): r dr dz at each Gauss point
        db0 = np.einsum("kl,mglj->mgkj", d, b0)
        db1 = np.einsum("kl,mglj->mgkj", d, b1)
        k0 = np.einsum("mg,mgki,mgkj->mij", dv, b0, db0)
        cross = np.einsum("mg,mgki,mgkj->mij", dv, b0, db1)
        k1 = cross + np.swapaxes(cross, 1, 2)
        k2 = np.einsum("mg,mgki,mgkj->mij", dv, b1, db1)
        dofs = (DOFS * self.connect[:, :, None] + np.arange(DOFS)).reshape(m, 27)
        rows = np.broadcast_to(dofs[:, :, None], (m, 27, 27)).ravel()
        cols = np.broadcast_to(dofs[:, None, :], (m, 27, 27)).ravel()
        shape = (self.n_dofs, self.n_dofs)
        # one sparsity pattern for the three parts (explicit zeros kept), so K_n is a sum of data arrays
        self._parts = [sp.csr_matrix((k.ravel(), (rows, cols)), shape=shape) for k in (k0, k1, k2)]
        # N^T N r dr dz of each element for one displacement component, kept for the mass
        scalar = np.einsum("mg,gi,gj->mij", dv, n_ref, n_ref)
        self._unit_mass = sp.csr_matrix((np.einsum("mij,ab->miajb", scalar, np.eye(DOFS)).ravel(), (rows, cols)),
                                        shape=shape)

    def stiffness(self, n: int) -> sp.csr_matrix:
        """K_n over all DOFs [N/mm], nothing fixed; harmonic n stores pi q^T K_n q / 2 (2 pi for n = 0)."""
        return (self._parts[0] + n * self._parts[1] + n * n * self._parts[2]).tocsr()

    def _factor(self, n: int):
        parts = self._reduced[0 if n == 0 else 1]
        data = parts[0].data + n * parts[1].data + n * n * parts[2].data
        k = sp.csc_matrix((data, parts[0].indices, parts[0].indptr), shape=parts[0].shape)
        return splu(k, permc_spec="COLAMD", diag_pivot_thresh=0.0, options={"SymmetricMode": True})

    def solve(self, n: int, loads: np.ndarray) -> np.ndarray:
        """Amplitudes (n_dofs, k) of harmonic n under load amplitudes (n_dofs, k): K_n q = f, held DOFs 0."""
        loads = np.asarray(loads, float).reshape(self.n_dofs, -1)
        free = self.free[0 if n == 0 else 1]
        q = np.zeros_like(loads)
        q[free] = self._factor(n).solve(loads[free])
        return q

    # -- modes -------------------------------------------------------------------------------------
    def mass(self, density_t_mm3: float) -> sp.csr_matrix:
        """Consistent mass [t] over all DOFs, the same for every harmonic (no circumferential factor)."""
        return density_t_mm3 * self._unit_mass

    def natural_frequencies_hz(self, n: int, count: int, density_t_mm3: float) -> np.ndarray:
        """The `count` lowest natural frequencies of harmonic n [Hz] (mm, N, t, s)."""
        free = self.free[0 if n == 0 else 1]
        k = self.stiffness(n)[free][:, free].tocsc()
        m = self.mass(density_t_mm3)[free][:, free].tocsc()
        values = eigsh(k, k=count, M=m, sigma=0.0, which="LM", return_eigenvectors=False)
        return np.sqrt(np.sort(values)) / (2.0 * math.pi)

    # -- loads -------------------------------------------------------------------------------------
    def surface_load(self, start, end, inward, components) -> np.ndarray:
        """Consistent nodal loads (n_dofs,) of a traction with amplitudes `components` (U, V, W) [MPa] on the
        straight boundary piece start -> end: int N^T t r ds, exact (3 Gauss points per element edge piece).
        `inward` points into the material; it tells which element the piece belongs to."""
        start, end, inward = (np.asarray(x, float) for x in (start, end, inward))
        length = float(np.hypot(*(end - start)))
        cuts = [0.0, 1.0]
        for axis, lines in ((0, self.r_lines), (1, self.z_lines)):
            if abs(end[axis] - start[axis]) > self.eps:
                cuts += list((lines - start[axis]) / (end[axis] - start[axis]))
        cuts = np.unique(np.clip(cuts, 0.0, 1.0))
        f = np.zeros(self.n_dofs)
        for t0, t1 in zip(cuts[:-1], cuts[1:]):
            if (t1 - t0) * length < self.eps:
                continue
            for x, w in zip(GAUSS3_X, GAUSS3_W):
                point = start + (t0 + 0.5 * (1.0 + x) * (t1 - t0)) * (end - start)
                nodes, shape = self._shape_at(point, inward)
                ds = 0.5 * (t1 - t0) * length * w
                for comp, value in enumerate(components):
                    f[DOFS * nodes + comp] += value * shape * point[0] * ds
        return f

    def _shape_at(self, point: np.ndarray, inward: np.ndarray):
        """Nodes and shape function values at a boundary point of the element on the material side."""
        probe = point + 1e3 * self.eps * inward
        p = int(np.searchsorted(self.r_lines, probe[0]) - 1)
        q = int(np.searchsorted(self.z_lines, probe[1]) - 1)
        inside = 0 <= p < self.active.shape[0] and 0 <= q < self.active.shape[1]
        if not (inside and self.active[p, q]):
            raise ValueError(f"no material next to ({point[0]:g}, {point[1]:g}) on the side {inward.tolist()}")
        xi = np.clip(2.0 * (point[0] - self.r_lines[p]) / (self.r_lines[p + 1] - self.r_lines[p]) - 1.0, -1, 1)
        eta = np.clip(2.0 * (point[1] - self.z_lines[q]) / (self.z_lines[q + 1] - self.z_lines[q]) - 1.0, -1, 1)
        shape = np.outer(quadratic_shape([xi])[0][0], quadratic_shape([eta])[0][0]).ravel()
        return self.connect[self.element_of_cell[p, q]], shape

    def patch_vector(self, patch: SurfacePatch) -> np.ndarray:
        """f = int N^T d r ds / int r ds of a patch (module docstring)."""
        start, end = np.asarray(patch.start, float), np.asarray(patch.end, float)
        inward = np.asarray(patch.inward, float)
        f = self.surface_load(start, end, inward, (inward[0], 0.0, inward[1]))
        r_ds = 0.5 * (start[0] + end[0]) * float(np.hypot(*(end - start)))
        return f / r_ds

    # -- compliance --------------------------------------------------------------------------------
    def patch_compliance(self, patches: list[SurfacePatch], tol: float = 1e-4, n_max: int = 3000
                         ) -> tuple[np.ndarray, int]:
        """Patch-averaged compliance [mm/N] of each patch under its own unit load, and the last harmonic used.

        sum_n w_n f^T K_n^-1 f, each patch's sum stopped when its envelope term has been below tol of its
        sum for IN_A_ROW harmonics in a row (module docstring)."""
        f = np.stack([self.patch_vector(patch) for patch in patches], axis=1)
        half = np.array([patch.half_angle_rad for patch in patches])
        total = np.zeros(len(patches))
        below = np.zeros(len(patches), int)
        active = np.arange(len(patches))
        for n in range(n_max + 1):
            raw = np.einsum("ik,ik->k", f[:, active], self.solve(n, f[:, active]))
            if n == 0:
                total[active] += raw / (2.0 * math.pi)
                continue
            g = np.sinc(n * half[active] / math.pi)
            total[active] += g * g * raw / math.pi
            envelope = np.minimum(1.0, 1.0 / (n * half[active])) ** 2 * raw / math.pi
            below[active] = np.where(envelope < tol * total[active], below[active] + 1, 0)
            if n >= FIRST_STOP_HARMONIC:
                active = active[below[active] < IN_A_ROW]
            if not len(active):
                return total, n
        raise RuntimeError(f"the harmonic sum did not reach {tol:g} by n = {n_max}")
