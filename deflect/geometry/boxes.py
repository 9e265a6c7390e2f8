"""Held boxes: where the part is held rigid, as boxes of the (r, z) half-plane.

Takes nothing; gives `HeldBox`, the plain data that the job reader fills from `[[held]]` (or from the grip of
`[holding]`) and that the shell model uses to fix the wall it touches.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class HeldBox:
    """A box of the half-plane in which the material is held rigid (jaws, collet, face plate, mandrel).

    r_range, z_range : closed intervals [mm]
    key : job-file key of the box, e.g. ``held[0]``
    """

    r_range: tuple[float, float]
    z_range: tuple[float, float]
    key: str
