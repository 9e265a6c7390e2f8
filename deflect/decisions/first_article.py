"""First article: a measured part in, its causes out, the force constants calibrated.

Takes a `Job` (its recalled constants, no calibration), its `Process` and a `Measured` part
(`deflect.job.measured`); gives a `FirstArticle`: the fitted unknowns with their 95 % intervals and whether
the measurements identify them, every reading against the uncalibrated and the calibrated prediction, the
measured mass gain split by cause, the profiles along z, and the `Calibration` (`deflect.job.calibration`)
that `deflect predict`, `tune` and `clamp` take.

The unknowns
* per finishing tool (or per finishing pass, `fitted_per="pass"`) a force factor on its three Kienzle
  constants together. The readings see the push-off, which is force times compliance, so the factor also
  carries any error of the wall's stiffness that the shell model makes (and of a boring bar's): it calibrates
  the product, not the material alone;
* per finished surface (each pass that finishes an od, a bore or a face) a size error uniform along it,
  along its outward normal, a side: wear, tool setting, thermal growth. On the finishing pass this is exactly
  the pass key `offset`, and the model moves the pass's target by it (so a deeper cut also pushes off a
  little more, as it does on the machine);
* with [holding] and a roundness reading, a grip factor on the jaws' squeeze (the set grip force against the
  one that reached the part, and the ring's stiffness).
A tool that finishes nothing (a roughing tool whose marks later passes cut away) leaves nothing to measure.

The model of a reading is the simulation itself (`simulate.plan_compliance` once: the wall's compliance does
not depend on the unknowns; then `simulate.run_passes` with the calibrated passes, as `deflect predict` makes
them from the calibration, `Calibration.applied_to`), read by a gauge on the as-machined section
(`deflect.geometry.gauging`) plus the jaws' spring-back where they held the part.

The fit: weighted nonlinear least squares, sum(((y_i - f_i(p)) / s_i)^2) over the dimensional readings
(s_i their standard uncertainties), with bounds (scipy.optimize.least_squares, trust-region reflective), the
Jacobian by forward differences. The mass is not fitted: its prediction rests on a density known to a few
parts per thousand, as coarse as the whole push-off of a thin part, so the mass is the check of what the
dimensions explain ("the rest", below).

Identification, decided before the fit on the Jacobian at the start (factors 1, size errors 0) and after it:
1. seen: a force or grip factor is seen when doubling it would move the readings by at least
   `SEEN_SIGMAS` of their standard uncertainties (root-sum-square); below that its 95 % interval would run
   from about 0 to 2. A size error is seen when a reading moves with it by at least `SEEN_SHARE` of it (a
   diameter, wall or face height of its own surface);
2. separable: the singular values of the weighted Jacobian of the seen unknowns, its columns scaled to unit
   length: a singular value below `SEPARABLE_RATIO` of the largest (or missing, fewer readings than unknowns)
   means a combination the readings cannot see; the unknowns that take part in it (`SHARE_IN_NULL` of its
   singular vector or more) cannot be separated from each other;
3. resolved: a factor whose 95 % interval at its recalled value (the same Jacobian, correlations included,
   the stated uncertainties) would reach 0 is not resolved from "no push-off at all", and is set aside.
4. actionable: a size error whose 95 % interval (high - low) is wider than the band its surface is held to,
   counted in the size error's own measure (a side: half an OD's or bore's band on the diameter from
   [tolerance]; a face's height one for one; where no band is given, and for every face, the standard
   tolerance IT8 at the surface's drawn size, ISO 286-1:2010 Table 1, what finish turning holds: common
   practice) is not identified. Why this width: a size error is acted on by a wear offset that centres the
   surface in its band; with an interval wider than the band, the same readings allow a surface anywhere across
   the band and beyond it, so no offset can be chosen from them (a reading in a fillet, which moves with the
   surface's size by a small share of it, gives such an interval). The report says which reading would pin it
   down: one on the surface's own straight stretch (or flat), where the reading moves one for one with it.
Rules 1 to 4 are decided on where the readings are and how good they are (the Jacobian at the start and the
stated uncertainties), not on the noise of one part (a rule judged on the fitted interval would drop a factor
whenever a part happened to scatter). Rule 4 is judged again on the interval as fitted, because that is the
interval the report prints and an engineer would act on: where the readings scatter beyond their
uncertainties (the covariance scaled, below), or the fit moved the surface where its readings see it less, a
size error whose fitted interval is wider than its band is set aside and the rest fitted again without it.
An unknown that is not identified stays at 1 (factors) or 0 (size errors), is reported "not identified" with
the reason, and is never fitted to noise. A factor's interval is cut at 0 (a force is not negative).

The intervals: C = s2 (J^T J)^-1 with J the weighted Jacobian at the solution (through its singular value
decomposition, as scipy's curve_fit), s2 = 1 while the residuals are as large as the stated uncertainties
allow: chi-square below its 95th percentile for nu = m - k degrees of freedom. Then the uncertainties are
trusted and the interval is p +/- 1.96 sqrt(C_jj) (normal quantile). When chi-square exceeds it, the readings
scatter more than their uncertainties say (a gauge worse than stated, or a model error along the wall), so
s2 = chi2 / nu and the quantile is Student's t(0.975, nu): the covariance is never scaled down. With
nu = 0 nothing checks the uncertainties; the report says so. (Weighted least squares, the covariance of its
estimate and the reduced chi-square: e.g. P. R. Bevington, D. K. Robinson, "Data Reduction and Error Analysis
for the Physical Sciences", 3rd ed. 2003, ch. 8 and 11; the t quantile for an estimated variance: JCGM
100:2008 (GUM), G.3.)

The rest of the mass: measured - calibrated, against its standard uncertainty: the scale's, the density's
(a handbook density quoted to three figures, 2.70, is known to half a unit of its last figure: a rectangular
distribution of that half-width, GUM 4.3.7, i.e. 0.005 / sqrt(3) g/cm3; or the batch's measured density and
its uncertainty) times the part's volume, and the calibrated prediction's own (the mass's gradient through C).
A rest beyond twice that (k = 2, about 95 %) is more than the measurement allows, and the report says so.
"""

from __future__ import annotations

import math
from collections import ChainMap
from dataclasses import dataclass, replace

import numpy as np
from scipy import stats
from scipy.optimize import least_squares

from deflect.errors import InputError, ModelError
from deflect.geometry.gauging import nearest_face, nearest_radius, outer_wall
from deflect.geometry.section import POLYGON_CHORD_MM, mass_properties
from deflect.job.calibration import GRIP_APPLIES_TO, Calibration, Factor, SizeError, with_calibration
from deflect.job.fits import SIZE_RANGES_MM, standard_tolerance_um, tolerance_from_table
from deflect.job.measured import MIN_RADIAL_NORMAL, Measured, Reading
from deflect.machining.inprocess import polygon_mass
from deflect.machining.results import Prediction
from deflect.machining.simulate import (
    CYLINDER_COS,
    DEVIATION_SPACING_MM,
    SimulationSettings,
    plan_compliance,
    run_passes,
    simulate,
)

FACTOR_BOUNDS = (0.05, 20.0)      # a force or grip factor further off is no calibration of recalled constants
SIZE_BOUND_MM = 0.2               # a size error beyond this is a wrong program or part, not a setting
FACTOR_STEP = 0.01                # forward-difference steps: 1 % of a factor moves a 10 um push-off by 100 nm,
SIZE_STEP_MM = 0.001              # far above the 1 nm the as-machined section is kept to; 1 um of a size error
SEEN_SIGMAS = 2.0                 # doubling a factor must move the readings this many sigmas (root-sum-square)
SEEN_SHARE = 0.1                  # a size error is seen by a reading that moves at least this share of it
SEPARABLE_RATIO = 1e-3            # singular value ratio below which a combination of unknowns is not seen
SHARE_IN_NULL = 0.2               # an unknown takes part in an unseen combination with this share of it
COVERAGE = 0.95
MAX_EVALUATIONS = 40              # the fit's evaluations of the model (the Jacobian's apart)
RELEASE_REACH_MM = 0.5            # a reading takes the jaws' spring-back of a finished point this near
DENSITY_FIGURES = 3               # a handbook density is quoted to three significant figures
LAYER_SHOWN_G = 5e-4              # the layers' sum and the section's mass differ by more: shown in the split
FINISHED_MM = 0.5                 # a pass finishes a surface when it finishes this much of the boundary
HELD_GRADE = 8                    # a surface with no band in [tolerance] is judged against IT8, what finish
                                  # turning holds (common practice), ISO 286-1:2010 Table 1


@dataclass(frozen=True)
class Unknown:
    kind: str                    # "force" | "size" | "grip"
    name: str                    # force: tool (or pass) name; size: the pass that finishes; grip: "jaws"
    surface: str = ""            # size: "od" | "id" | "face"

    @property
    def start(self) -> float:
        return 0.0 if self.kind == "size" else 1.0

    @property
    def bounds(self) -> tuple[float, float]:
        return (-SIZE_BOUND_MM, SIZE_BOUND_MM) if self.kind == "size" else FACTOR_BOUNDS

    @property
    def step(self) -> float:
        return SIZE_STEP_MM if self.kind == "size" else FACTOR_STEP

    @property
    def label(self) -> str:
        if self.kind == "force":
            return f"force factor {self.name}"
        if self.kind == "grip":
            return "grip factor (jaws' squeeze)"
        return f"size error {SURFACE_WORDS[self.surface]} ({self.name})"


@dataclass(frozen=True)
class Estimate:
    """An unknown as fitted: value and 95 % interval; identified False with the reason otherwise."""

    unknown: Unknown
    value: float
    low: float
    high: float
    identified: bool
    reason: str = ""


@dataclass(frozen=True)
class ReadingFit:
    """One reading against the predictions (mm)."""

    reading: Reading
    uncertainty_mm: float        # as used in the fit (a two-point gauge on lobes of changing width carries their share)
    uncalibrated_mm: float
    calibrated_mm: float
    used: bool                   # in the fit
    note: str = ""

    @property
    def residual_mm(self) -> float:
        return self.reading.value_mm - self.calibrated_mm


@dataclass(frozen=True)
class MassShare:
    cause: str                   # "push-off" | "size error" | "unmachined" | "density" | "layers"
    where: str                   # the pass (and its surface), or ""
    mass_g: float


@dataclass(frozen=True)
class MassBalance:
    """The measured mass gain over the drawn part, split by cause (g)."""

    measured_g: float
    measured_uncertainty_g: float
    nominal_g: float
    uncalibrated_g: float
    calibrated_g: float
    shares: tuple[MassShare, ...]
    rest_g: float                # measured - (calibrated + the batch's density, if measured)
    rest_uncertainty_g: float    # standard uncertainty of the rest
    density_g_cm3: float         # the density the rest was judged with
    density_uncertainty_g_cm3: float
    density_from: str            # "measured" | "handbook value to three figures"

    @property
    def rest_allowed_g(self) -> float:
        """The rest the measurement allows at about 95 % (k = 2)."""
        return 2.0 * self.rest_uncertainty_g

    @property
    def rest_explained(self) -> bool:
        return abs(self.rest_g) <= self.rest_allowed_g


@dataclass(frozen=True, eq=False)
class Profile:
    """The uncalibrated and calibrated prediction along z of one surface: the diameter (od, id) or the wall
    against the drawn one [mm]."""

    surface: str                 # "od" | "id" | "wall"
    z_mm: np.ndarray
    uncalibrated_mm: np.ndarray
    calibrated_mm: np.ndarray


@dataclass(frozen=True, eq=False)
class FirstArticle:
    title: str
    measured_path: str
    estimates: tuple[Estimate, ...]
    readings: tuple[ReadingFit, ...]
    residual_rms_um: float       # root mean square of measured - calibrated over the readings in the fit
    chi_square: float
    degrees_of_freedom: int
    scaled: bool                 # the covariance was scaled by chi2 / nu (module docstring)
    quantile: float              # of the 95 % intervals
    unseparated: tuple[str, ...]  # what the readings cannot tell apart, in words
    mass: MassBalance | None
    profiles: tuple[Profile, ...]
    calibration: Calibration
    uncalibrated: Prediction
    calibrated: Prediction
    notes: tuple[str, ...] = ()


# ---------------------------------------------------------------------------------------------------
# the unknowns

def finishing_passes(pred: Prediction, process) -> list:
    """The passes that finish a stretch of the part at least FINISHED_MM long, in order (a corner point where
    one pass's surface meets the next is no surface of its own)."""
    names = pred.deviation.finished_by
    return [p for p in process.passes if names.count(p.name) * DEVIATION_SPACING_MM >= FINISHED_MM]


def unknowns_of(job, process, pred: Prediction, measured: Measured, fitted_per: str) -> list[Unknown]:
    """Force factors (per finishing tool or pass), size errors (per finishing pass), and the grip factor
    where [holding] is given and roundness measured."""
    finishing = finishing_passes(pred, process)
    names = [p.tool if fitted_per == "tool" else p.name for p in finishing]
    unknowns = [Unknown("force", name) for name in dict.fromkeys(names)]
    unknowns += [Unknown("size", p.name, p.surface) for p in finishing]
    if "holding" in job.tables and any(r.kind == "roundness" for r in measured.readings):
        unknowns.append(Unknown("grip", GRIP_APPLIES_TO))
    return unknowns


@dataclass(frozen=True)
class Band:
    """The band a size error's surface is held to, in the size error's own measure (mm along the outward
    normal: half a diameter band, a face's height one for one), and the words that say where it comes from."""

    width_mm: float
    words: str


NO_BAND = Band(math.inf, "")


def held_bands(job, pred: Prediction, unknowns: list[Unknown]) -> list[Band]:
    """Per unknown, the band its surface is held to (rule 4 of the module docstring; NO_BAND for the factors):
    an OD's or bore's band on the diameter from [tolerance], halved (a size error is a side); where the job gives
    none, and for a face (no face carries a band in [tolerance]), the standard tolerance IT8 at the surface's
    drawn size (a face: its height above the job's z = 0), ISO 286-1:2010 Table 1. The narrowest where the
    surface has several sizes."""
    tolerances = tolerance_from_table(job.tables["tolerance"]) if "tolerance" in job.tables else None
    d = pred.deviation
    bands = []
    for u in unknowns:
        if u.kind != "size":
            bands.append(NO_BAND)
            continue
        axis = 1 if u.surface == "face" else 0
        mine = [k for k, name in enumerate(d.finished_by) if name == u.name]
        straight = [k for k in mine if abs(d.normals[k][axis]) > CYLINDER_COS] or mine
        sizes = sorted({round(abs(float(d.points_rz[k][axis])) * (1 if axis else 2), 3) for k in straight})
        found = [band_at(tolerances, u.surface, size) for size in sizes]
        bands.append(min(found, key=lambda b: b.width_mm, default=NO_BAND))
    return bands


def band_at(tolerances, surface: str, size_mm: float) -> Band:
    """The band of one drawn size (a diameter, or a face's height), in the size error's measure."""
    try:
        limits = None if tolerances is None or surface == "face" else tolerances.diameter_limits(surface, size_mm)
        if limits is not None:
            side_mm = 0.5 * (limits[1] - limits[0])
            return Band(side_mm, f"the {SURFACE_WORDS[surface]}'s band in [tolerance] at {size_mm:g} mm, "
                                 f"{1000 * side_mm:.1f} um a side")
        it_mm = standard_tolerance_um(HELD_GRADE, max(size_mm, SIZE_RANGES_MM[0][1]), "tolerance") / 1000.0
    except InputError:                  # a size beyond ISO 286-1's tables: nothing to judge against
        return NO_BAND
    if surface == "face":
        return Band(it_mm, f"IT{HELD_GRADE} at the face's height of {size_mm:g} mm, {1000 * it_mm:.0f} um, what "
                           "finish turning holds (common practice; no face carries a band in [tolerance])")
    return Band(0.5 * it_mm, f"IT{HELD_GRADE} at {size_mm:g} mm, {500 * it_mm:.1f} um a side, what finish turning "
                             "holds (common practice; [tolerance] gives this surface no band)")


STRAIGHT_READING = {"od": "a diameter of the OD where it runs straight along the axis, away from its fillets and "
                          "corners",
                    "id": "a bore diameter where the bore runs straight along the axis, away from its fillets and "
                          "corners",
                    "face": "a face height read on the flat of the face, away from its fillets"}


def too_wide_reason(u: Unknown, width_mm: float, band: Band, before_fit: bool, scattered: bool = False) -> str:
    """Why a size error too wide to act on is not identified, and what reading would pin it down."""
    width = f"{1000 * width_mm:.1f} um wide" if math.isfinite(width_mm) else "unbounded"
    scatter = (" The readings scatter more than their stated uncertainties allow, which widens every interval: "
               "check the reading with the largest residual." if scattered else "")
    return (f"its 95 % interval {'would be' if before_fit else 'is'} {width}, wider than {band.words}: the readings "
            f"do not pin its size down (an offset set from it could put the surface anywhere across its band)."
            f"{scatter} What would: {STRAIGHT_READING[u.surface]}.")


def calibration_from(unknowns: list[Unknown], values, fitted_per: str, low=None, high=None, identified=None,
                     **provenance) -> Calibration:
    """A Calibration holding these values (all taken as identified unless told)."""
    n = len(unknowns)
    low = values if low is None else low
    high = values if high is None else high
    identified = [True] * n if identified is None else identified
    factors, sizes = [], []
    for u, v, lo, hi, ok in zip(unknowns, values, low, high, identified):
        if u.kind == "size":
            sizes.append(SizeError(u.name, u.surface, float(v), float(lo), float(hi), bool(ok)))
        else:
            factors.append(Factor(u.name, u.kind, float(v), float(lo), float(hi), bool(ok)))
    defaults = {"job": "", "measured": "", "date": "", "material": "", "residual_rms_um": 0.0}
    return Calibration(factors=tuple(factors), size_errors=tuple(sizes), fitted_per=fitted_per,
                       **{**defaults, **provenance})


# ---------------------------------------------------------------------------------------------------
# the model of the readings

class ReadingModel:
    """The readings and the mass as the simulation predicts them for a vector of unknowns (cached by value).

    The key stations' compliance comes from the shared memo (computed once, `plan_compliance`); what each
    evaluation adds (cut paths moved by size errors, cut results) goes into a memo of its own, so that many
    fits on one job (a coverage study) do not pile them up."""

    def __init__(self, job, process, readings: list[Reading], unknowns: list[Unknown], fitted_per: str,
                 uncalibrated: Prediction, memo: dict, settings: SimulationSettings):
        self.job, self.process, self.readings, self.unknowns = job, process, readings, unknowns
        self.fitted_per, self.settings = fitted_per, settings
        self.memo = ChainMap({}, memo)
        self.nominal_rz = job.section.polygon(POLYGON_CHORD_MM)
        self.grip_index = next((k for k, u in enumerate(unknowns) if u.kind == "grip"), None)
        self.released_mm, self.roundness_mm, _ = released_at(uncalibrated, readings)
        self.cache: dict[bytes, tuple[np.ndarray, float]] = {}

    def __call__(self, x: np.ndarray) -> tuple[np.ndarray, float]:
        """(predicted value of every reading [mm], mass [g])."""
        x = np.asarray(x, float)
        name = x.tobytes()
        if name not in self.cache:
            self.cache[name] = self._evaluate(x)
        return self.cache[name]

    def _evaluate(self, x: np.ndarray):
        calibration = calibration_from(self.unknowns, x, self.fitted_per)
        process = replace(self.process, passes=calibration.applied_to(self.process.passes))
        try:
            plan = plan_compliance(self.job, process, self.settings, self.nominal_rz, self.memo)
            _, machined = run_passes(self.job, process, 1.0, plan, memo=self.memo)
        except ModelError:
            # a trial step of the fit the part cannot be made with (a size error through the wall): no values,
            # and the fit's trust region shrinks back (scipy's least_squares takes non-finite residuals so)
            return np.full(len(self.readings), np.nan), float("nan")
        grip = 1.0 if self.grip_index is None else float(x[self.grip_index])
        values = np.array([gauge(machined, r, grip * released, grip * roundness)
                           for r, released, roundness in zip(self.readings, self.released_mm, self.roundness_mm)])
        return values, polygon_mass(machined, self.job.material.density_g_cm3)[0]

    def jacobian(self, x: np.ndarray, active: list[int]) -> tuple[np.ndarray, np.ndarray]:
        """(d readings / d x, d mass / d x) over the active unknowns, by forward differences, stepping
        inwards at a bound."""
        base, mass = self(x)
        columns, masses = [], []
        for j in active:
            u = self.unknowns[j]
            h = u.step * max(1.0, abs(x[j]))
            if x[j] + h > u.bounds[1]:
                h = -h
            moved = x.copy()
            moved[j] += h
            values, moved_mass = self(moved)
            columns.append((values - base) / h)
            masses.append((moved_mass - mass) / h)
        return np.array(columns).T.reshape(len(base), len(active)), np.array(masses)


def released_at(pred: Prediction, readings: list[Reading]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """At each reading, from a prediction at the grip as given: the jaws' spring-back along the outward normal,
    the roundness, and the spread of a two-point half-size around the circumference (most - least) [mm]; 0
    where the jaws did not hold the part while its surface was cut, or without [holding]."""
    d = pred.deviation
    released, roundness, spread = (np.zeros(len(readings)) for _ in range(3))
    if d.released_mm is None:
        return released, roundness, spread
    for k, reading in enumerate(readings):
        if reading.kind not in ("diameter", "roundness"):
            continue
        # the finished points of its surface that a diameter can be read on (the reader's own rule), by height
        mine = np.array([s == reading.surface and abs(n[0]) >= MIN_RADIAL_NORMAL
                         for s, n in zip(d.surface, d.normals)], bool)
        if not mine.any():
            continue
        gaps = np.abs(d.points_rz[mine, 1] - reading.at_mm)
        nearest = int(np.argmin(gaps))
        if gaps[nearest] <= RELEASE_REACH_MM:
            released[k] = d.released_mm[mine][nearest]
            roundness[k] = d.roundness_mm[mine][nearest]
            spread[k] = d.two_point_high_mm[mine][nearest] - d.two_point_low_mm[mine][nearest]
    return released, roundness, spread


def gauge(machined_rz: np.ndarray, reading: Reading, released_mm: float, roundness_mm: float) -> float:
    """What the reading's gauge shows on the as-machined section, with the jaws' spring-back (along the
    outward normal, which moves an OD's radius by +released and a bore's by -released)."""
    if reading.kind == "roundness":
        return roundness_mm
    if reading.kind == "face":
        found = nearest_face(machined_rz, reading.at_mm, reading.nominal_mm)
        return float("nan") if found is None else found[0]
    if reading.kind == "diameter":
        sign = 1.0 if reading.surface == "od" else -1.0
        found = nearest_radius(machined_rz, reading.at_mm, 0.5 * reading.nominal_mm)
        return float("nan") if found is None else 2.0 * (found[0] + sign * released_mm)
    return wall_of(machined_rz, reading)


def wall_of(machined_rz: np.ndarray, reading: Reading) -> float:
    """The wall between the outermost OD and bore at the reading's height (no spring-back: the jaws squeeze
    both sides of a thin wall alike)."""
    found = outer_wall(machined_rz, reading.at_mm)
    return float("nan") if found is None else found[1][0] - found[0][0]


# ---------------------------------------------------------------------------------------------------
# the fit

@dataclass(frozen=True, eq=False)
class Fit:
    x: np.ndarray                # every unknown; those not identified at their start
    identified: list[bool]
    reasons: list[str]
    covariance: np.ndarray       # (k, k), zero rows and columns for the unknowns not identified
    mass_gradient_g: np.ndarray  # (k,) d mass / d unknown at the solution (0 where not identified)
    chi_square: float
    degrees_of_freedom: int
    scaled: bool
    quantile: float
    unseparated: list[str]
    converged: bool


def fit_unknowns(model: ReadingModel, y: np.ndarray, sigma: np.ndarray, used: np.ndarray,
                 bands: list[Band] | None = None) -> Fit:
    """The unknowns from the readings in use (module docstring: identification, fit, intervals); `bands` the
    band each size error's surface is held to (`held_bands`; none: every interval may be acted on)."""
    unknowns = model.unknowns
    k = len(unknowns)
    bands = [NO_BAND] * k if bands is None else bands
    x0 = np.array([u.start for u in unknowns])
    rows = np.flatnonzero(used)
    identified, reasons = [True] * k, [""] * k
    unseparated: list[str] = []
    if not len(rows):
        reasons = ["no dimensional reading to see it"] * k
        return Fit(x0, [False] * k, reasons, np.zeros((k, k)), np.zeros(k), 0.0, 0, False,
                   float(stats.norm.ppf(0.5 + COVERAGE / 2)), unseparated, True)
    start, _ = model.jacobian(x0, list(range(k)))
    weighted = start[rows] / sigma[rows, None]
    seen_by(unknowns, start[rows], sigma[rows], identified, reasons)
    unseparated = separable(unknowns, weighted, identified, reasons)
    resolved(unknowns, weighted, identified, reasons, bands)
    active = [j for j in range(k) if identified[j]]
    while True:
        x, converged = solved(model, x0, active, y[rows], sigma[rows], rows)
        covariance, gradient, chi_square, dof, scaled, quantile, lost = covariance_at(model, x, active, y[rows],
                                                                                      sigma[rows], rows)
        # rule 4 on the interval as fitted: the least actionable size error (the one the readings lost first, where
        # a combination went unseen at the solution) is set aside and the rest fitted again without it
        widths = 2.0 * quantile * np.sqrt(np.abs(np.diag(covariance)))
        widths[lost >= SHARE_IN_NULL] = math.inf
        wide = [(too_wide_share(widths[j], bands[j]), lost[j], j) for j in active
                if unknowns[j].kind == "size" and not widths[j] <= bands[j].width_mm]
        if not wide:
            return Fit(x, identified, reasons, covariance, gradient, chi_square, dof, scaled, quantile, unseparated,
                       converged)
        *_, worst = max(wide)
        identified[worst] = False
        reasons[worst] = too_wide_reason(unknowns[worst], float(widths[worst]), bands[worst], before_fit=False,
                                         scattered=scaled)
        active.remove(worst)


def too_wide_share(width_mm: float, band: Band) -> float:
    """How many bands wide an interval is (inf where it has no bound)."""
    return float(width_mm / band.width_mm) if math.isfinite(width_mm) else math.inf


def seen_by(unknowns: list[Unknown], jacobian: np.ndarray, sigma: np.ndarray, identified: list[bool],
            reasons: list[str]) -> None:
    """Rule 1: which unknowns some reading sees at all (marks the others not identified)."""
    weighted = jacobian / sigma[:, None]
    for j, u in enumerate(unknowns):
        if u.kind == "size":
            if np.max(np.abs(jacobian[:, j]), initial=0.0) < SEEN_SHARE:
                identified[j] = False
                reasons[j] = f"no reading of the {SURFACE_WORDS[u.surface]} that {u.name} finishes"
            continue
        moved = float(np.linalg.norm(weighted[:, j]))      # per unit of the factor: doubling it
        if moved < SEEN_SIGMAS:
            identified[j] = False
            reasons[j] = (f"doubling it would move the readings by {moved:.2g} of their uncertainty "
                          "(root-sum-square): nothing measured sees it")


SURFACE_WORDS = {"od": "OD", "id": "ID", "face": "face"}


def separable(unknowns: list[Unknown], weighted: np.ndarray, identified: list[bool], reasons: list[str]) -> list[str]:
    """Rule 2: the combinations of seen unknowns the readings cannot see (marks their members not identified);
    returns them in words."""
    seen = [j for j in range(len(unknowns)) if identified[j]]
    if len(seen) < 1:
        return []
    columns = weighted[:, seen] / np.linalg.norm(weighted[:, seen], axis=0)
    _, values, vt = np.linalg.svd(columns, full_matrices=True)
    values = np.concatenate([values, np.zeros(len(seen) - len(values))])
    null = vt[values < SEPARABLE_RATIO * values.max()]
    if not len(null):
        return []
    share = np.linalg.norm(null, axis=0)
    members = [seen[i] for i in np.flatnonzero(share >= SHARE_IN_NULL)]
    names = [unknowns[j].label for j in members]
    for j in members:
        identified[j] = False
        others = [unknowns[i].label for i in members if i != j]
        reasons[j] = ("cannot be separated from " + ", ".join(others) + ": the readings see only a combination"
                      if others else "the readings do not see it")
    return [f"the readings cannot tell {', '.join(names)} apart: they see only a combination of them; readings at "
            "more heights along each surface would separate them"] if len(members) > 1 else []


def resolved(unknowns: list[Unknown], weighted: np.ndarray, identified: list[bool], reasons: list[str],
             bands: list[Band]) -> None:
    """Rules 3 and 4 before the fit: a factor whose 95 % interval, at its recalled value and the stated
    uncertainties (the weighted Jacobian at the start, correlations with the other unknowns included), would
    reach 0 is not resolved from no push-off at all; a size error whose interval would be wider than its band
    cannot be acted on. The least resolved one (factors first, as share of the value; then size errors, as
    bands) is set aside and the rest judged again. Decided on the readings' places and uncertainties alone."""
    z95 = stats.norm.ppf(0.5 + COVERAGE / 2)
    while True:
        active = [j for j in range(len(unknowns)) if identified[j]]
        if not active:
            return
        _, singular, vt = np.linalg.svd(weighted[:, active], full_matrices=False)
        with np.errstate(divide="ignore", invalid="ignore"):
            half = z95 * np.sqrt(np.diag((vt.T / singular**2) @ vt))
        starts = np.array([unknowns[j].start for j in active])
        wide = [(1, half[i] / starts[i], j) for i, j in enumerate(active)
                if unknowns[j].kind != "size" and half[i] >= starts[i]]
        wide = wide or [(0, too_wide_share(2.0 * half[i], bands[j]), j) for i, j in enumerate(active)
                        if unknowns[j].kind == "size" and not 2.0 * half[i] <= bands[j].width_mm]
        if not wide:
            return
        factor, share, worst = max(wide)
        identified[worst] = False
        reasons[worst] = (f"even at its recalled value its 95 % interval from these readings would be +/-"
                          f"{share:.2g} of it and reach 0: the readings cannot tell its push-off from none"
                          if factor else too_wide_reason(unknowns[worst], float(2.0 * half[active.index(worst)]),
                                                         bands[worst], before_fit=True))


def solved(model: ReadingModel, x0: np.ndarray, active: list[int], y: np.ndarray, sigma: np.ndarray,
           rows: np.ndarray) -> tuple[np.ndarray, bool]:
    """Weighted least squares over the active unknowns (the others at their start): (x, converged)."""
    if not active:
        return x0.copy(), True
    unknowns = [model.unknowns[j] for j in active]

    def full(xa):
        x = x0.copy()
        x[active] = xa
        return x

    def residuals(xa):
        return (y - model(full(xa))[0][rows]) / sigma

    def jacobian(xa):
        return -model.jacobian(full(xa), active)[0][rows] / sigma[:, None]

    # the push-off is nearly linear in the factors and the size errors add to it: one Gauss-Newton step on
    # the Jacobian at the start (computed for the identification anyway) lands close, and the trust region
    # takes it from there (from the start itself if the part cannot be made there)
    low, high = (np.array([u.bounds[k] for u in unknowns]) for k in (0, 1))
    step = np.linalg.lstsq(jacobian(x0[active]), -residuals(x0[active]), rcond=None)[0]
    start = np.clip(x0[active] + step, low + 1e-6 * (high - low), high - 1e-6 * (high - low))
    if not np.all(np.isfinite(residuals(start))):
        start = x0[active]
    result = least_squares(residuals, start, jac=jacobian, method="trf", bounds=(low, high),
                           x_scale=[0.01 if u.kind == "size" else 1.0 for u in unknowns],
                           xtol=1e-6, ftol=1e-8, gtol=1e-8, max_nfev=MAX_EVALUATIONS)
    return full(result.x), result.status > 0


def covariance_at(model: ReadingModel, x: np.ndarray, active: list[int], y: np.ndarray, sigma: np.ndarray,
                  rows: np.ndarray):
    """(covariance (k, k), mass gradient (k,), chi-square, degrees of freedom, scaled, quantile, lost (k,)) at x;
    lost: each unknown's share in a combination the readings no longer see at x (singular value below
    SEPARABLE_RATIO of the largest), whose interval is then unbounded."""
    k = len(model.unknowns)
    lost = np.zeros(k)
    values, _ = model(x)
    r = (y - values[rows]) / sigma
    chi_square = float(r @ r)
    dof = len(rows) - len(active)
    covariance, gradient = np.zeros((k, k)), np.zeros(k)
    scaled = bool(dof > 0 and chi_square > stats.chi2.ppf(COVERAGE, dof))
    quantile = float(stats.t.ppf(0.5 + COVERAGE / 2, dof) if scaled else stats.norm.ppf(0.5 + COVERAGE / 2))
    if not active:
        return covariance, gradient, chi_square, dof, scaled, quantile, lost
    jacobian, mass_gradient = model.jacobian(x, active)
    weighted = jacobian[rows] / sigma[:, None]
    _, singular, vt = np.linalg.svd(weighted, full_matrices=False)
    with np.errstate(divide="ignore", invalid="ignore"):     # a direction the readings lost: inf, judged by rule 4
        inner = (vt.T / singular**2) @ vt                    # (J^T J)^-1 through the SVD
    covariance[np.ix_(active, active)] = (chi_square / dof if scaled else 1.0) * inner
    gradient[active] = mass_gradient
    gone = vt[singular < SEPARABLE_RATIO * singular.max()]
    lost[active] = np.abs(gone).max(axis=0) if len(gone) else 0.0
    return covariance, gradient, chi_square, dof, scaled, quantile, lost


# ---------------------------------------------------------------------------------------------------
# the whole study

def explain(job, process, measured: Measured, fitted_per: str = "tool", memo: dict | None = None,
            settings: SimulationSettings = SimulationSettings(), date: str = "") -> FirstArticle:
    """Fit the unknowns to the measured part, split its mass gain by cause, and give the calibration."""
    if job.calibration is not None:
        raise ModelError("the job already carries a calibration; explain a first article against the recalled "
                         "constants (leave out [job] calibration)", key="job.calibration")
    memo = {} if memo is None else memo
    uncalibrated = simulate(job, process, settings, memo=memo, with_ranges=False)
    unknowns = unknowns_of(job, process, uncalibrated, measured, fitted_per)
    readings = list(measured.readings)
    sigma, used, notes = reading_weights(readings, uncalibrated, job)
    model = ReadingModel(job, process, readings, unknowns, fitted_per, uncalibrated, memo, settings)
    y = np.array([r.value_mm for r in readings])
    fit = fit_unknowns(model, y, sigma, used, held_bands(job, uncalibrated, unknowns))
    x0 = np.array([u.start for u in unknowns])
    before, after = model(x0)[0], model(fit.x)[0]
    lost = [r.key for r, b, a in zip(readings, before, after) if not (math.isfinite(b) and math.isfinite(a))]
    if lost:
        raise ModelError(f"{', '.join(lost)}: the predicted part has no such surface there")
    half = fit.quantile * np.sqrt(np.maximum(np.diag(fit.covariance), 0.0))
    floor = np.array([-np.inf if u.kind == "size" else 0.0 for u in unknowns])
    low, high = np.maximum(fit.x - half, floor), fit.x + half
    residual = (y - after)[used]
    rms_um = 1000.0 * float(np.sqrt(np.mean(residual**2))) if len(residual) else 0.0
    calibration = calibration_from(
        unknowns, fit.x, fitted_per, low=low, high=high, identified=fit.identified,
        job=job.path, measured=measured.path, date=date, material=job.material.name, residual_rms_um=rms_um)
    calibrated_job = with_calibration(job, calibration)
    calibrated = simulate(calibrated_job, calibrated_process(process, calibration), settings, memo=memo,
                          with_ranges=False)
    estimates = tuple(Estimate(u, float(v), float(lo), float(hi), ok, why)
                      for u, v, lo, hi, ok, why in zip(unknowns, fit.x, low, high, fit.identified, fit.reasons))
    unseparated = list(fit.unseparated)
    if not used.any() and measured.mass_g is not None:
        unseparated.append("the mass alone sees only the total of what every cause leaves: it cannot separate "
                           + ", ".join(u.label for u in unknowns))
    if not fit.converged:
        notes.append(f"the fit stopped after {MAX_EVALUATIONS} evaluations without converging")
    notes += unseen_passes(process, uncalibrated, fitted_per)
    mass = None
    if measured.mass_g is not None:
        without_sizes = replace(calibration, size_errors=tuple(replace(e, identified=False)
                                                               for e in calibration.size_errors))
        factors_only = simulate(with_calibration(job, without_sizes), calibrated_process(process, without_sizes),
                                settings, memo=memo, with_ranges=False)
        mass = mass_balance(job, process, measured, uncalibrated, calibrated, factors_only, fit)
    return FirstArticle(
        title=job.title, measured_path=measured.path, estimates=estimates,
        readings=tuple(ReadingFit(r, float(s), float(b), float(a), bool(u), note)
                       for r, s, b, a, u, note in zip(readings, sigma, before, after, used, reading_notes(
                           readings, used, uncalibrated))),
        residual_rms_um=rms_um, chi_square=fit.chi_square, degrees_of_freedom=fit.degrees_of_freedom,
        scaled=fit.scaled, quantile=fit.quantile, unseparated=tuple(unseparated), mass=mass,
        profiles=profiles(uncalibrated, calibrated), calibration=calibration, uncalibrated=uncalibrated,
        calibrated=calibrated, notes=tuple(measured.notes) + tuple(notes))


def unseen_passes(process, pred: Prediction, fitted_per: str) -> list[str]:
    """Notes on the tools (or passes) that finish nothing: no reading can see their push-off."""
    finishing = finishing_passes(pred, process)
    if fitted_per == "tool":
        fitted = {p.tool for p in finishing}
        idle = dict.fromkeys(p.tool for p in process.passes if p.tool not in fitted)
        return [f"{tool} finishes no surface: later passes cut its marks away, so no reading can see its "
                "push-off; its constants stay as recalled" for tool in idle]
    fitted = {p.name for p in finishing}
    return [f"{p.name} finishes no surface: later passes cut its marks away; its forces stay as recalled"
            for p in process.passes if p.name not in fitted]


def calibrated_process(process, calibration: Calibration):
    return replace(process, passes=calibration.applied_to(process.passes))


def reading_weights(readings: list[Reading], pred: Prediction, job) -> tuple[np.ndarray, np.ndarray, list[str]]:
    """(standard uncertainty used in the fit [mm], in the fit or not, notes) of every reading.

    A roundness reading is fitted only where the jaws are modelled ([holding]) and leave lobes on its
    surface, and only when the lobes counted (if given) are theirs: other lobes are another cause. A two-point
    gauge on lobes whose width is not constant (an even number of them) reads the diameter anywhere between
    its least and most two-point size, as the gauge happens to sit: for r = R + a cos(N theta) it reads
    2R + 2a cos(N theta), whose standard deviation over a uniform theta is sqrt(2) a, that is the spread of
    the two-point half-size (2a) over sqrt(2); added in quadrature. (An odd number of lobes has a constant
    width, and a fitted circle reads 2R.)"""
    _, roundness, spread = released_at(pred, readings)
    sigma = np.array([r.uncertainty_mm for r in readings])
    used = np.ones(len(readings), bool)
    notes = []
    for k, r in enumerate(readings):
        if r.kind == "roundness":
            if "holding" not in job.tables or pred.lobes == 0 or roundness[k] == 0.0:
                used[k] = False
                notes.append(f"{r.key}: the model leaves this surface round (no jaws modelled on it); the roundness "
                             "is not fitted")
            elif r.lobes is not None and r.lobes != pred.lobes:
                used[k] = False
                notes.append(f"{r.key}: {r.lobes} lobes, the jaws leave {pred.lobes}: another cause (the spindle, "
                             "the blank, a chatter mark); not fitted")
        elif r.kind == "diameter" and r.how == "two-point" and spread[k] > 0.0:
            sigma[k] = math.hypot(sigma[k], spread[k] / math.sqrt(2.0))
    return sigma, used, notes


def reading_notes(readings: list[Reading], used: np.ndarray, pred: Prediction) -> list[str]:
    """Per reading: a note where no pass of this job finishes the surface it is on (a face height: where no
    pass finishes the boundary within RELEASE_REACH_MM of the drawn face at its radius, whichever pass's
    surface that is, as an OD pass runs on down a shoulder)."""
    d = pred.deviation
    notes = []
    for r, u in zip(readings, used):
        note = "" if u else "not fitted"
        if r.kind in ("diameter", "wall", "roundness"):
            near = np.flatnonzero(np.abs(d.points_rz[:, 1] - r.at_mm) <= RELEASE_REACH_MM)
            finished = {d.surface[i] for i in near}
            wanted = {"od", "id"} if r.kind == "wall" else {r.surface}
            if not finished & wanted:
                note = "on a surface no pass of this job finishes (it checks the blank)"
        elif r.kind == "face":
            near = np.flatnonzero(np.hypot(d.points_rz[:, 0] - r.at_mm, d.points_rz[:, 1] - r.nominal_mm)
                                  <= RELEASE_REACH_MM)
            if not any(d.finished_by[i] for i in near):
                note = "on a face no pass of this job finishes (it checks the blank)"
        notes.append(note)
    return notes


def profiles(uncalibrated: Prediction, calibrated: Prediction) -> tuple[Profile, ...]:
    """The diameters (od, bore) and the wall against the drawn ones along z, uncalibrated and calibrated."""
    out = []
    sides = {}
    for surface in ("od", "id"):
        z, before = along(uncalibrated, surface)
        if len(z) < 2:
            continue
        z_after, after = along(calibrated, surface)
        after = np.interp(z, z_after, after) if len(z_after) >= 2 else np.full_like(z, np.nan)
        sign = 1.0 if surface == "od" else -1.0     # material left makes an OD larger, a bore smaller
        out.append(Profile(surface, z, 2.0 * sign * before, 2.0 * sign * after))
        sides[surface] = (z, before, after)
    if len(sides) == 2:
        (z_od, od_before, od_after), (z_id, id_before, id_after) = sides["od"], sides["id"]
        z = z_id[(z_id >= z_od[0]) & (z_id <= z_od[-1])]
        if len(z) >= 2:
            out.append(Profile("wall", z, np.interp(z, z_od, od_before) + np.interp(z, z_id, id_before),
                               np.interp(z, z_od, od_after) + np.interp(z, z_id, id_after)))
    return tuple(out)


def along(pred: Prediction, surface: str) -> tuple[np.ndarray, np.ndarray]:
    """(z, material left a side [mm]) on the cylindrical points of a finished od or bore, by z."""
    d = pred.deviation
    mine = np.array([s == surface and abs(n[0]) > CYLINDER_COS for s, n in zip(d.surface, d.normals)], bool)
    order = np.argsort(d.points_rz[mine, 1])
    return d.points_rz[mine, 1][order], d.deviation_mm[mine][order]


def density_rounding_g_cm3(density_g_cm3: float) -> float:
    """Standard uncertainty of a density quoted to DENSITY_FIGURES significant figures: half a unit of the
    last figure, rectangular (GUM 4.3.7): 0.005 / sqrt(3) for 2.70."""
    last = 10.0 ** (math.floor(math.log10(density_g_cm3)) - (DENSITY_FIGURES - 1))
    return 0.5 * last / math.sqrt(3.0)


def mass_balance(job, process, measured: Measured, uncalibrated: Prediction, calibrated: Prediction,
                 factors_only: Prediction, fit: Fit) -> MassBalance:
    """The measured gain split: push-off by pass (calibrated forces, no size errors), each size error (what it
    adds to its surface), stock no pass reached, the batch's density if measured, and the rest."""
    density = job.material.density_g_cm3
    nominal = mass_properties(job.section, density).mass_g
    shares = []
    finishing = {p.name for p in finishing_passes(calibrated, process)}
    for p, with_sizes, forces_only in zip(process.passes, calibrated.passes, factors_only.passes):
        if p.name not in finishing:
            continue
        where = f"{p.name} ({SURFACE_WORDS[p.surface]}, {p.tool})"
        shares.append(MassShare("push-off", where, forces_only.mass_left_g))
        if with_sizes.mass_left_g != forces_only.mass_left_g:
            shares.append(MassShare("size error", where, with_sizes.mass_left_g - forces_only.mass_left_g))
    unreached = calibrated.mass_gain_by_surface_g.get("unmachined", 0.0)
    if unreached:
        shares.append(MassShare("unmachined", "", unreached))
    calibrated_g = calibrated.predicted_mass_g.value
    layers = calibrated_g - nominal - sum(s.mass_g for s in shares)
    if abs(layers) > LAYER_SHOWN_G:
        shares.append(MassShare("layers", "", layers))
    if measured.density_g_cm3 is not None:
        batch, u_density, source = measured.density_g_cm3, measured.density_uncertainty_g_cm3, "measured"
        shares.append(MassShare("density", "", calibrated_g * (batch / density - 1.0)))
    else:
        batch, u_density, source = density, density_rounding_g_cm3(density), "handbook value to three figures"
    volume_cm3 = calibrated_g / density
    explained = calibrated_g + (calibrated_g * (batch / density - 1.0) if source == "measured" else 0.0)
    prediction_u = math.sqrt(max(float(fit.mass_gradient_g @ fit.covariance @ fit.mass_gradient_g), 0.0))
    rest_u = math.sqrt(measured.mass_uncertainty_g**2 + (volume_cm3 * u_density)**2 + prediction_u**2)
    return MassBalance(measured_g=measured.mass_g, measured_uncertainty_g=measured.mass_uncertainty_g,
                       nominal_g=nominal, uncalibrated_g=uncalibrated.predicted_mass_g.value, calibrated_g=calibrated_g,
                       shares=tuple(shares), rest_g=measured.mass_g - explained, rest_uncertainty_g=rest_u,
                       density_g_cm3=batch, density_uncertainty_g_cm3=u_density, density_from=source)


def next_part(job, calibration: Calibration, memo: dict | None = None, search: bool = False, progress=None):
    """What to change for the next part, with the calibrated constants (`deflect.decisions.tune`): the wear
    offsets that centre every finished surface in its band (a few predictions), or with search the whole
    remedy search of `deflect tune`. None without [tolerance]."""
    from deflect.decisions.tune import tune, wear_offsets_only

    if "tolerance" not in job.tables:
        return None
    calibrated_job = with_calibration(job, calibration)
    if search:
        return tune(calibrated_job, progress=progress, memo=memo)
    return wear_offsets_only(calibrated_job, memo=memo)


def usual_suspects(balance: MassBalance) -> list[str]:
    """What to look at when the rest of the mass is more than the measurement allows (its sign says which)."""
    if balance.rest_explained:
        return []
    if balance.rest_g > 0.0:
        return ["stock a pass did not clean up (a blank larger than the job's [stock], a surface no reading covers)",
                "burrs, chips or coolant left on the part (in a bore, under a rim)",
                "the batch's density above the handbook value (weigh a sample in water)",
                "a drawn mass that is not this part's (a different revision of the drawing)",
                "a unit mistake (grams against ounces, a diameter in inches)"]
    return ["the batch's density below the handbook value (weigh a sample in water)",
            "a surface cut below its size where no reading covers it (a face, a chamfer, a bore's bottom)",
            "a drawn mass that is not this part's (a different revision of the drawing)",
            "a unit mistake (grams against ounces, a diameter in inches)"]
