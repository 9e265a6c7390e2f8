"""The wall as a shell of revolution.

    mesh.py        ShellMesh: the mid-surface as straight frustum elements, thickness, fixed DOFs (plain data)
    midsurface.py  section outline + held boxes -> ShellMesh (pruned medial axis of the section)
    harmonic.py    ShellMesh + E, nu -> stiffness of each circumferential Fourier harmonic, solved banded,
                   and the harmonic sum of the compliance under a loaded patch; the consistent mass
"""
