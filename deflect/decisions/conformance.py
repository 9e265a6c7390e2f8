"""The predicted part against its drawing: each toleranced feature in or out, with its margin.

Takes a `results.Prediction`, the `Process` that made it and the job's `fits.Tolerances`; gives a list of
`FeatureCheck` (plain data). Features:
* every cylindrical diameter of a finished od or bore (ISO 286 fit code or explicit limits, `[tolerance]`
  od / id): the smallest and largest predicted diameter along it against the limits;
* the wall (`[tolerance]` wall, +/- mm) wherever a cylindrical od and bore face each other;
* the theoretical roughness Ra of the pass that finishes each surface (`[tolerance]` ra), from its feed and
  the tool's nose radius (`cutting.theoretical_roughness`, the circular cusp).
The margin is the distance to the nearer limit, in the feature's unit: positive inside, negative outside.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from deflect.job.fits import Tolerances
from deflect.machining.results import Prediction
from deflect.machining.simulate import straight_points
from deflect.mechanics.cutting import theoretical_roughness

SAME_DIAMETER_MM = 1e-3         # cylindrical points whose drawn diameters agree to this are one feature


@dataclass(frozen=True)
class FeatureCheck:
    feature: str                 # "OD 52.4", "bore 45.2", "wall", "Ra finish OD"
    surface: str                 # "od" | "id" | "wall" | "ra"
    unit: str                    # "mm" | "um"
    nominal: float               # drawn size (mm) or 0 for wall deviation / Ra limit
    lower: float                 # allowed deviation from nominal (or the Ra range 0 .. limit)
    upper: float
    low: float                   # smallest and largest predicted deviation (or the Ra) along the feature
    high: float
    worst_z_mm: float | None     # where the feature is nearest to (or furthest beyond) a limit
    margin: float                # to the nearer limit: > 0 inside, < 0 outside
    pass_name: str               # the pass that finishes it

    @property
    def meets(self) -> bool:
        return self.margin >= 0.0


def check_features(pred: Prediction, process, tolerances: Tolerances) -> list[FeatureCheck]:
    """Every toleranced feature of the predicted part (an empty list when nothing is toleranced)."""
    checks = []
    for surface in ("od", "id"):
        checks += diameter_checks(pred, surface, tolerances)
    if tolerances.wall_mm is not None:
        wall = wall_check(pred, tolerances.wall_mm)
        if wall is not None:
            checks.append(wall)
    if tolerances.ra_um is not None:
        checks += roughness_checks(pred, process, tolerances.ra_um)
    return checks


def diameter_checks(pred: Prediction, surface: str, tolerances: Tolerances) -> list[FeatureCheck]:
    deviation = pred.deviation
    chosen = straight_points(deviation, surface)
    if not len(chosen) or _untoleranced(tolerances, surface):
        return []
    radius = deviation.points_rz[chosen, 0]
    checks = []
    for nominal_r in np.unique(np.round(radius / SAME_DIAMETER_MM) * SAME_DIAMETER_MM):
        mine = chosen[np.abs(radius - nominal_r) <= SAME_DIAMETER_MM]
        nominal_d = 2.0 * float(np.mean(deviation.points_rz[mine, 0]))
        lower, upper = tolerances.diameter_limits(surface, nominal_d)
        # material left along the outward normal makes an od larger and a bore smaller
        sign = 1.0 if surface == "od" else -1.0
        change = sign * 2.0 * deviation.deviation_mm[mine]
        to_limit = np.minimum(upper - change, change - lower)
        worst = int(np.argmin(to_limit))
        names = [deviation.finished_by[k] for k in mine if deviation.finished_by[k]]
        checks.append(FeatureCheck(
            feature=f"{'OD' if surface == 'od' else 'bore'} {nominal_d:g}", surface=surface, unit="mm",
            nominal=nominal_d, lower=lower, upper=upper, low=float(change.min()), high=float(change.max()),
            worst_z_mm=float(deviation.points_rz[mine[worst], 1]), margin=float(to_limit[worst]),
            pass_name=max(set(names), key=names.count) if names else ""))
    return checks


def _untoleranced(tolerances: Tolerances, surface: str) -> bool:
    return (tolerances.od if surface == "od" else tolerances.id) is None


def wall_profile(pred: Prediction) -> tuple[np.ndarray, np.ndarray]:
    """(z, wall deviation mm) where a cylindrical od and a cylindrical bore face each other: the material
    left on both sides added, at every od point of the shared height."""
    deviation = pred.deviation
    od, bore = straight_points(deviation, "od"), straight_points(deviation, "id")
    if len(od) < 2 or len(bore) < 2:
        return np.empty(0), np.empty(0)
    z_od, z_bore = deviation.points_rz[od, 1], deviation.points_rz[bore, 1]
    shared = (z_od >= z_bore[0]) & (z_od <= z_bore[-1])
    z = z_od[shared]
    left = deviation.deviation_mm[od][shared] + np.interp(z, z_bore, deviation.deviation_mm[bore])
    return z, left


def wall_check(pred: Prediction, plus_minus_mm: float) -> FeatureCheck | None:
    z, left = wall_profile(pred)
    if not len(z):
        return None
    to_limit = plus_minus_mm - np.abs(left)
    worst = int(np.argmin(to_limit))
    return FeatureCheck(feature="wall", surface="wall", unit="mm", nominal=0.0, lower=-plus_minus_mm,
                        upper=plus_minus_mm, low=float(left.min()), high=float(left.max()),
                        worst_z_mm=float(z[worst]), margin=float(to_limit[worst]), pass_name="")


def finishing_passes(pred: Prediction, process) -> list:
    """The passes that finished some of the drawn surface to size (no allowance left), in pass order."""
    named = set(pred.deviation.finished_by)
    return [p for p in process.passes if p.name in named and p.allowance_mm == 0.0]


def roughness_checks(pred: Prediction, process, ra_limit_um: float) -> list[FeatureCheck]:
    checks = []
    for p in finishing_passes(pred, process):
        name = p.name
        ra_um = float(theoretical_roughness(p.feed_mm, process.tools[p.tool].nose_radius_mm)[0])
        checks.append(FeatureCheck(feature=f"Ra {name}", surface="ra", unit="um", nominal=0.0, lower=0.0,
                                   upper=ra_limit_um, low=ra_um, high=ra_um, worst_z_mm=None,
                                   margin=ra_limit_um - ra_um, pass_name=name))
    return checks
