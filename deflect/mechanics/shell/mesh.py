"""ShellMesh: the mid-surface of a shell of revolution as plain data.

Takes nothing; gives the data object that `midsurface.py` fills from a section and `harmonic.py` solves.
The meridian is a set of straight frustum (conical) elements between nodes in the (r, z) half-plane; branches
(a wall meeting a bottom or a flange) are nodes shared by three or more elements.

Degrees of freedom at every node, in the global cylindrical frame, in this order:
    0 u_r, 1 u_theta, 2 u_z        displacements [mm]
    3 w_r, 4 w_theta, 5 w_z        rotation vector components [rad]
For a harmonic n the amplitudes of u_r, u_z, w_theta go with cos(n theta) and those of u_theta, w_r, w_z with
sin(n theta) (the "symmetric" set, loaded by a radial or axial force at theta = 0).
"""

from dataclasses import dataclass

import numpy as np

DOFS_PER_NODE = 6


@dataclass(frozen=True)
class ShellMesh:
    """Mid-surface mesh of a shell of revolution.

    nodes_rz : (N, 2) mid-surface node positions (r, z) [mm]
    thickness_mm : (N,) wall thickness at each node [mm]; linear along an element
    elements : (M, 2) node indices; each element is a straight frustum from node a to node b
    fixed : (N, 6) bool, True where a degree of freedom is held at zero (a held node has all six True)
    """

    nodes_rz: np.ndarray
    thickness_mm: np.ndarray
    elements: np.ndarray
    fixed: np.ndarray

    @property
    def n_nodes(self) -> int:
        return len(self.nodes_rz)

    @property
    def held_nodes(self) -> np.ndarray:
        """Indices of nodes whose six degrees of freedom are all fixed."""
        return np.flatnonzero(self.fixed.all(axis=1))
