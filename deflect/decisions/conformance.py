"""The predicted part against its drawing: each toleranced feature in or out, with its margin.

Takes a `results.Prediction`, the `Process` that made it and the job's `fits.Tolerances`; gives a list of
`FeatureCheck` (plain data), and the warnings a failing form deserves; `verdict` adds whether the grip of
[holding] holds the cuts (`deflect.machining.grip.grip_check`), the same check as `deflect clamp`'s. Features:
* every cylindrical diameter of a finished od or bore (ISO 286 fit code or explicit limits, `[tolerance]`
  od / id): its predicted sizes against the limits. With [holding] the jaws leave the surfaces finished in
  the chuck lobed (`results.SurfaceDeviation`), and the size is judged as it is inspected:
  - by default with the envelope requirement (Taylor's principle: ISO 14405-1, the modifier (E); the default
    of ASME Y14.5-2018, Rule #1): a GO ring over an OD or a GO plug in a bore at the maximum-material size
    meets the lobes' highest point, so the material left plus the lobes' peak is checked against the
    maximum-material limit, and a two-point NO-GO measurement sees the least two-point size, so the material
    left plus the lobes' lowest two-point half-size change is checked against the least-material limit. The
    lobed form must fit inside the band: odd lobes (3 jaws) leave the two-point size constant, so a radial
    peak to valley up to the whole band fits, even lobes up to half of it;
  - with `envelope = false` (size independent of form, the independency principle of ISO 8015:2011), the
    two-point sizes alone, against both limits, with the roundness reported beside;
* roundness (`[tolerance]` roundness, ISO 1101 / ISO 12181: the radial width of the zone between two
  concentric circles): the largest peak to valley the jaws leave along each diameter, when [holding] gives
  the model of it;
* the wall (`[tolerance]` wall, +/- mm) wherever a cylindrical od and bore face each other, on the mean wall
  (the lobes' share of a local wall reading is not judged);
* the theoretical roughness Ra of the pass that finishes each surface (`[tolerance]` ra), from its feed and
  the tool's nose radius (`cutting.theoretical_roughness`, the circular cusp).
The margin is the distance to the nearer limit, in the feature's unit: positive inside, negative outside.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from deflect.job.fits import Tolerances
from deflect.machining.grip import GripCheck, grip_check
from deflect.machining.results import Prediction, SurfaceDeviation
from deflect.machining.simulate import straight_points
from deflect.mechanics.cutting import theoretical_roughness

SAME_DIAMETER_MM = 1e-3         # cylindrical points whose drawn diameters agree to this are one feature
SIZE_RULES = {True: "envelope", False: "two-point"}


@dataclass(frozen=True)
class FeatureCheck:
    feature: str                 # "OD 52.4", "ID 45.2", "roundness ID 45.2", "wall", "Ra finish OD"
    surface: str                 # "od" | "id" | "roundness" | "wall" | "ra"
    unit: str                    # "mm" | "um"
    nominal: float               # drawn size (mm) or 0 for wall deviation / roundness / Ra limit
    lower: float                 # allowed deviation from nominal (or the roundness or Ra range 0 .. limit)
    upper: float
    low: float                   # smallest and largest predicted deviation (or roundness, or Ra) along it
    high: float
    worst_z_mm: float | None     # where the feature is nearest to (or furthest beyond) a limit
    margin: float                # to the nearer limit: > 0 inside, < 0 outside
    pass_name: str               # the pass that finishes it
    roundness_mm: float | None = None   # diameters with [holding]: the largest peak to valley along it
    form_mm: float = 0.0         # diameters: the most of the band the lobes take as the size is judged [mm]
    size_rule: str = ""          # diameters: "envelope" | "two-point" (how the size was judged)

    @property
    def meets(self) -> bool:
        return self.margin >= 0.0


@dataclass(frozen=True)
class Verdict:
    """A predicted part judged: its drawing, whether the grip holds it, and the warnings both deserve."""

    checks: list[FeatureCheck]   # every toleranced feature (empty without [tolerance])
    grip: GripCheck | None       # None without [holding]
    warnings: list[str]          # the grip's problems, then the form's (`form_warnings`)

    @property
    def held(self) -> bool:
        return self.grip is None or self.grip.holds


def verdict(job, process, pred: Prediction, tolerances: Tolerances | None, memo: dict | None = None) -> Verdict:
    """The drawing checked (`check_features`) and the grip checked against the cuts (`grip.grip_check`; memo:
    the cut layouts shared by the variants of one job)."""
    checks = check_features(pred, process, tolerances) if tolerances is not None else []
    grip = grip_check(job, process, memo)
    problems = grip.problems() if grip is not None else []
    return Verdict(checks=checks, grip=grip, warnings=problems + form_warnings(pred, checks, tolerances))


def check_features(pred: Prediction, process, tolerances: Tolerances) -> list[FeatureCheck]:
    """Every toleranced feature of the predicted part (an empty list when nothing is toleranced)."""
    checks = []
    for surface in ("od", "id"):
        checks += diameter_checks(pred, surface, tolerances)
    for surface in ("od", "id"):
        checks += roundness_checks(pred, surface, tolerances)
    if tolerances.wall_mm is not None:
        wall = wall_check(pred, tolerances.wall_mm)
        if wall is not None:
            checks.append(wall)
    if tolerances.ra_um is not None:
        checks += roughness_checks(pred, process, tolerances.ra_um)
    return checks


def size_extremes(deviation: SurfaceDeviation, indices: np.ndarray, envelope: bool) -> tuple[np.ndarray, np.ndarray]:
    """(most, least) material left a side at the points `indices` as a size gauge sees it [mm]: with the
    envelope requirement the most is where the GO ring or plug meets the lobes' peak, otherwise the largest
    two-point half-size; the least is the smallest two-point half-size. Without lobes both are the material
    left."""
    left = deviation.deviation_mm[indices]
    if deviation.lobe_peak_mm is None:
        return left, left
    most = deviation.lobe_peak_mm[indices] if envelope else deviation.two_point_high_mm[indices]
    return left + most, left + deviation.two_point_low_mm[indices]


def cylinders(pred: Prediction, surface: str) -> list[tuple[float, np.ndarray, str]]:
    """(drawn diameter mm, indices of its cylindrical points by z, the pass that finished most of them) of
    every finished cylinder of the od or bore."""
    deviation = pred.deviation
    chosen = straight_points(deviation, surface)
    if not len(chosen):
        return []
    radius = deviation.points_rz[chosen, 0]
    out = []
    for nominal_r in np.unique(np.round(radius / SAME_DIAMETER_MM) * SAME_DIAMETER_MM):
        mine = chosen[np.abs(radius - nominal_r) <= SAME_DIAMETER_MM]
        names = [deviation.finished_by[k] for k in mine if deviation.finished_by[k]]
        out.append((2.0 * float(np.mean(deviation.points_rz[mine, 0])), mine,
                    max(set(names), key=names.count) if names else ""))
    return out


def feature_name(surface: str, diameter_mm: float) -> str:
    return f"{'OD' if surface == 'od' else 'ID'} {diameter_mm:g}"


def diameter_checks(pred: Prediction, surface: str, tolerances: Tolerances) -> list[FeatureCheck]:
    deviation = pred.deviation
    if _untoleranced(tolerances, surface):
        return []
    checks = []
    for nominal_d, mine, pass_name in cylinders(pred, surface):
        lower, upper = tolerances.diameter_limits(surface, nominal_d)
        most, least = size_extremes(deviation, mine, tolerances.envelope)
        # material left along the outward normal makes an od larger and a bore smaller
        sign = 1.0 if surface == "od" else -1.0
        sizes = np.stack([sign * 2.0 * most, sign * 2.0 * least])
        high, low = sizes.max(axis=0), sizes.min(axis=0)
        to_limit = np.minimum(upper - high, low - lower)
        worst = int(np.argmin(to_limit))
        checks.append(FeatureCheck(
            feature=feature_name(surface, nominal_d), surface=surface, unit="mm",
            nominal=nominal_d, lower=lower, upper=upper, low=float(low.min()), high=float(high.max()),
            worst_z_mm=float(deviation.points_rz[mine[worst], 1]), margin=float(to_limit[worst]),
            pass_name=pass_name, roundness_mm=_largest_roundness(deviation, mine),
            form_mm=float(np.max(2.0 * (most - least))), size_rule=SIZE_RULES[tolerances.envelope]))
    return checks


def _largest_roundness(deviation: SurfaceDeviation, indices: np.ndarray) -> float | None:
    return None if deviation.roundness_mm is None else float(deviation.roundness_mm[indices].max())


def roundness_checks(pred: Prediction, surface: str, tolerances: Tolerances) -> list[FeatureCheck]:
    """The largest peak to valley along each diameter against the roundness limit (none without [holding]:
    nothing models the roundness then)."""
    limit = tolerances.roundness_limit_mm(surface)
    deviation = pred.deviation
    if limit is None or deviation.roundness_mm is None:
        return []
    checks = []
    for nominal_d, mine, pass_name in cylinders(pred, surface):
        roundness = deviation.roundness_mm[mine]
        worst = int(np.argmax(roundness))
        checks.append(FeatureCheck(
            feature=f"roundness {feature_name(surface, nominal_d)}", surface="roundness", unit="mm", nominal=0.0,
            lower=0.0, upper=limit, low=float(roundness.min()), high=float(roundness[worst]),
            worst_z_mm=float(deviation.points_rz[mine[worst], 1]), margin=float(limit - roundness[worst]),
            pass_name=pass_name))
    return checks


def form_warnings(pred: Prediction, checks: list[FeatureCheck], tolerances: Tolerances | None) -> list[str]:
    """What the lobes the jaws leave do to the drawing, in words: each diameter they take out of its limits,
    each roundness over its limit, and a roundness limit nothing can judge."""
    lines = []
    lobes = f", {pred.lobes} lobes" if pred.lobes else ""
    for c in checks:
        if c.meets:
            continue
        if c.surface == "roundness":
            lines.append(f"{c.feature}: the jaws leave {1000 * c.high:.1f} um peak to valley ({pred.lobes} lobes) once "
                         f"they let go, over the {1000 * c.upper:g} um allowed; see `deflect clamp` for the grip")
        elif c.surface in ("od", "id") and c.form_mm > 0.0:
            band = c.upper - c.lower
            gauged = ("a GO gauge at the maximum-material size and two-point sizes within the least-material size"
                      if c.size_rule == "envelope" else "its two-point sizes")
            fits = ("so no single size fits it in" if c.form_mm > band
                    else "the rest of the band is left for the size")
            lines.append(f"{c.feature}: the out-of-roundness the jaws leave (up to {1000 * c.roundness_mm:.1f} um"
                         f"{lobes}) takes {1000 * c.form_mm:.0f} um of its {1000 * band:.0f} um band as {gauged} "
                         f"judge it ({c.size_rule} rule), {fits}; see `deflect clamp` for the grip")
    if tolerances is not None and pred.deviation.roundness_mm is None and \
            (tolerances.od_roundness_mm is not None or tolerances.id_roundness_mm is not None):
        lines.append("roundness is toleranced, but without [holding] no out-of-roundness is modelled: it is not judged")
    return lines


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
