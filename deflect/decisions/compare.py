"""Two jobs side by side: two predictions (and their verdicts against the drawing) -> a `Comparison`.

Takes each job's name, its `Prediction`, its toleranced features and the calibration it was predicted with (a
job against the same job calibrated is a comparison too); gives the two with whether they are the same part (the same drawn section, to `SAME_SECTION_MM`, and the same material: then only the machining
differs) and, when not, what differs in words. Comparing two different parts (a wall revision) is allowed: the
reports say so at the top. The differences of the figures themselves are taken where they are shown
(`deflect.output.compare_report`); nothing is computed here beyond that judgement.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from deflect.decisions.conformance import FeatureCheck
from deflect.job.calibration import Calibration
from deflect.machining.results import Prediction

SAME_SECTION_MM = 1e-6          # drawn outlines closer than this are the same drawing (an inch job of a mm
                                # drawing converts to within 1e-12 mm)


@dataclass(frozen=True)
class Compared:
    """One side: the job file's name as given, its prediction and its verdict against the drawing, and the first
    article's calibration it was predicted with (None: the job's constants as given)."""

    name: str
    prediction: Prediction
    features: list[FeatureCheck]
    calibration: Calibration | None = None


@dataclass(frozen=True)
class Comparison:
    a: Compared
    b: Compared
    same_part: bool
    part_differences: tuple[str, ...]       # what makes them different parts, in words (empty: the same part)


def same_outline(a_rz: np.ndarray, b_rz: np.ndarray) -> bool:
    return a_rz.shape == b_rz.shape and bool(np.all(np.abs(a_rz - b_rz) <= SAME_SECTION_MM))


def part_differences(a: Prediction, b: Prediction) -> tuple[str, ...]:
    """What differs between the two drawn parts (the section, the material), in words."""
    found = []
    if not same_outline(a.nominal_rz, b.nominal_rz):
        found.append(f"the drawn sections differ (drawn mass {a.nominal_mass_g:.3f} g and {b.nominal_mass_g:.3f} g)")
    if a.material != b.material:
        found.append(f"the materials differ ({a.material} and {b.material})")
    return tuple(found)


def compare(a: Compared, b: Compared) -> Comparison:
    differences = part_differences(a.prediction, b.prediction)
    return Comparison(a, b, not differences, differences)
