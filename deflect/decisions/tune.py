"""Remedies: what to change in the finishing so the part holds its drawing, at the least cycle time.

Takes a checked `Job` with a `[tolerance]` table; gives a `TuneResult`: the current plan's figures and a
ranked list of options, each a list of `Change`s to the job's [[pass]] tables. Every option's figures come
from a full prediction of the job with its changes written in (`simulate.simulate`, with the ranges), so
`deflect predict` on that job reproduces them.

The search, for every finished od, bore and face (the pass that finishes it, and the pass before it on the
same surface that leaves its allowance):
* a ladder of feeds (ISO 3 preferred numbers, R10), fastest first, from the largest the roughness limit
  allows (`cutting.theoretical_roughness`, the circular cusp); the material left falls with the feed, so the
  fastest feed that holds the limits is found by bisection on the ladder;
* that for every mix of 0 or 1 spring cut, the finishing allowance the pass before leaves (as now, or
  a lighter 0.1 mm), and the job's other tools that can cut that surface (a tool with a boring bar for a
  bore, one without for an od);
* a single wear offset on the finishing pass that centres the predicted deviation in the band (it moves the
  whole surface, so it cannot take out a taper), iterated twice since a deeper cut pushes off more: at the
  feeds and tools as they are, and for every mix above at the fastest feed the roughness allows;
* the compensated contour: the finishing target programmed off the drawn contour by the predicted push-off,
  corrected over four rounds for the same reason (the round nearest to holding is kept);
* the order: the bore finished before the od, or the od before the bore;
* the cutting speed, lowered on a pass that asks more power than the machine has (in every option).
The part's compliance does not depend on the feed, the tool or (to micrometres) the offsets, so every variant
reuses the key stations already computed (`simulate.plan_compliance` with a shared memo); only a changed
allowance, order or number of spring cuts costs new shell models. The surfaces are searched one at a time
with the others as they are, then merged and verified together.

Limits an option must keep: the tolerances (`conformance.check_features`), a chip no thinner than
`MIN_CHIP_MM` on the finishing cuts (below it the edge rubs instead of cutting; spring cuts are judged by what
they leave), no rubbing station on them, and the machine's power.
"""

from __future__ import annotations

import copy
import itertools
import math
from dataclasses import dataclass, field, replace
from functools import cached_property

import numpy as np

from deflect.decisions.conformance import FeatureCheck, Verdict, finishing_passes, size_extremes, verdict, wall_profile
from deflect.errors import InputError, ModelError
from deflect.job.fits import Tolerances, tolerance_from_table
from deflect.machining.insert_edge import edge_problems, split_depth_mm
from deflect.machining.results import Prediction
from deflect.machining.simulate import kept_workers, set_apart, simulate, straight_points
from deflect.machining.targets import process_from_job
from deflect.mechanics.cutting import theoretical_roughness

# ISO 3 preferred numbers, series R10 (rounded values): the feeds a machinist would program.
FEED_LADDER_MM = (0.5, 0.4, 0.315, 0.25, 0.2, 0.16, 0.125, 0.1, 0.08, 0.063, 0.05, 0.04, 0.032, 0.025)
MIN_CHIP_MM = 0.01              # common practice: a honed carbide edge (edge radius 20-50 um) needs a chip
                                # of about 10 um to cut rather than plough
LIGHT_ALLOWANCE_MM = 0.1        # the lighter finishing allowance tried (common practice: 0.1-0.2 mm a side)
SPRING_CUTS = (0, 1)
OFFSET_ROUNDS = 2               # wear offset: re-centred after each prediction
COMPENSATION_ROUNDS = 4         # compensated contour: corrected after each prediction
COMPENSATION_RELAXATION = 0.6   # share of what is left that the later rounds correct
COMPENSATION_POINTS = 25        # pairs along the finished stretch
OFFSET_STEP_MM = 0.001          # offsets and compensation are given to 1 um (a control's wear offset step)
SPEED_STEP_M_MIN = 5.0          # a lowered cutting speed is given in steps of this
SPEED_MARGIN = 0.95             # ... and keeps the peak power this share of the machine's
SPEED_ROUNDS = 3                # lowered and checked again at most this often


@dataclass(frozen=True)
class Change:
    pass_name: str
    key: str                     # feed | allowance | spring | tool | offset | compensate | order | speed | depth
    before: object
    after: object


@dataclass(frozen=True)
class Outcome:
    """One plan, predicted and checked."""

    changes: tuple[Change, ...]
    cycle_time_s: float
    max_deviation_mm: float
    ra_um: float                 # the roughest finishing pass
    mass_g: float
    checks: list[FeatureCheck]
    broken: list[str]            # the limits it breaks, in words
    prediction: Prediction
    notes: tuple[str, ...] = ()  # said beside the option without counting as broken (`chatter_free`)

    @property
    def meets(self) -> bool:
        return not self.broken

    @property
    def least_margin_mm(self) -> float | None:
        """The nearest any diameter or the wall comes to its limit [mm] (< 0: beyond it); None if none is
        toleranced."""
        return min((c.margin for c in self.checks if c.unit == "mm"), default=None)


@dataclass(frozen=True)
class TuneResult:
    current: Outcome
    options: list[Outcome]       # ranked: those that meet everything by cycle time, then the rest
    limiting: str                # when nothing meets: the limiting feature and the best deviation reached
    offset_note: str             # whether a single wear offset per surface is enough (it cannot take out a taper)
    evaluations: int
    warnings: list[str] = field(default_factory=list)


@dataclass
class Search:
    """What one search shares: the job, its tolerances, the key-station memo, the evaluations so far."""

    job: object
    tolerances: Tolerances
    memo: dict = field(default_factory=dict)
    seen: dict = field(default_factory=dict)
    progress: object = None

    @cached_property
    def process(self):
        """The checked machining job as given (the plan every change is made to)."""
        return process_from_job(self.job)

    def evaluate(self, changes: tuple[Change, ...], with_ranges: bool = False) -> Outcome | None:
        """The plan with these changes predicted and checked; None if the changed job is not valid (a feed
        the nose cannot take, a target through the wall) or the cut cannot be modelled."""
        key = (changes, with_ranges)
        if key not in self.seen:
            self.seen[key] = self._run(changes, with_ranges)
            if self.progress:
                self.progress()
        return self.seen[key]

    def _run(self, changes, with_ranges) -> Outcome | None:
        try:
            job = job_with(self.job, changes)
            process = process_from_job(job)
            pred = simulate(job, process, memo=self.memo, with_ranges=with_ranges)
        except (InputError, ModelError):
            return None
        judged = verdict(job, process, pred, self.tolerances, self.memo)
        return Outcome(changes=changes, cycle_time_s=pred.cycle_time_s, max_deviation_mm=worst_deviation_mm(pred),
                       ra_um=finishing_ra(pred, process),
                       mass_g=pred.predicted_mass_g.value, checks=judged.checks,
                       broken=broken_limits(pred, process, judged.checks) + not_held(judged), prediction=pred)


def worst_deviation_mm(pred: Prediction) -> float:
    """The largest deviation from the drawing, either way (material left or cut below), on the surfaces the
    passes finished."""
    d = pred.deviation
    # a corner of the drawing belongs to two surfaces, a corner's nose material is its own cause
    # (simulate.set_apart)
    finished = np.array([s != "unmachined" for s in d.surface]) & ~set_apart(d)
    return float(np.abs(d.deviation_mm[finished]).max()) if finished.any() else 0.0


def finishing_ra(pred: Prediction, process) -> float:
    return max((float(theoretical_roughness(p.feed_mm, process.tools[p.tool].nose_radius_mm)[0])
                for p in finishing_passes(pred, process)), default=0.0)


def thinnest_chip_mm(cut) -> float | None:
    """The thinnest chip where the cut takes its full stock (met depth at least half its median): where the
    tool runs into or out of the stock the chip thins to nothing by geometry, which is no fault of the plan."""
    met = cut.met_depth_mm
    if not (met > 0.0).any():
        return None
    full = met >= 0.5 * np.median(met[met > 0.0])
    return float(cut.chip_thickness_mm[full].min())


def broken_limits(pred: Prediction, process, checks: list[FeatureCheck]) -> list[str]:
    """The limits a predicted plan breaks, said plainly."""
    broken = []
    for c in checks:
        if c.meets:
            continue
        if c.surface == "ra":
            broken.append(f"{c.feature}: Ra {c.low:.2f} um over {c.upper:g} um")
        elif c.surface == "wall":
            broken.append(f"wall {1000 * max(abs(c.low), abs(c.high)):.0f} um off nominal at z {c.worst_z_mm:.1f} "
                          f"(+/-{1000 * c.upper:.0f} um allowed)")
        elif c.surface == "roundness":
            broken.append(f"{c.feature}: {1000 * c.high:.1f} um, over the {1000 * c.upper:g} um allowed")
        else:
            form = f", the jaws' lobes taking {1000 * c.form_mm:.0f} um of it" if c.form_mm > 0.0 else ""
            broken.append(f"{c.feature}: {1000 * c.low:+.0f} to {1000 * c.high:+.0f} um on the diameter, limits "
                          f"{1000 * c.lower:+.0f} / {1000 * c.upper:+.0f} um{form}")
    finishing = {p.name: p for p in finishing_passes(pred, process)}
    for p in pred.passes:
        if p.name not in finishing:
            continue
        # the finishing cut, not its spring cuts: a spring cut takes the micrometres the wall gave back, and
        # is meant to (common practice); it is judged by what it leaves
        cuts = p.cuts[:len(p.cuts) - finishing[p.name].spring]
        thinnest = thinnest_chip_mm(cuts[-1])
        if thinnest is not None and thinnest < MIN_CHIP_MM:
            broken.append(f"{p.name}: chip {1000 * thinnest:.0f} um thin, under the {1000 * MIN_CHIP_MM:.0f} um "
                          "an edge needs to cut")
        if any(t.rubbing.any() for t in cuts):
            broken.append(f"{p.name}: the tool rubs where the wall gives way")
    if pred.peak_power_kw > process.machine.power_kw:
        broken.append(f"peak power {pred.peak_power_kw:.1f} kW over the machine's {process.machine.power_kw:g} kW")
    broken += [problem.text() for problem in edge_problems(process, pred.passes)]
    return broken


NOT_HELD = "not held: "          # the start of a broken limit that no surface's remedy mends


def not_held(judged: Verdict) -> list[str]:
    """The grip's problems as broken limits: a part the grip does not hold meets nothing, whatever its sizes."""
    return [NOT_HELD + line for line in (judged.grip.problems() if judged.grip is not None else [])]


# ---------------------------------------------------------------------------------------------------
# changes written into the job

def job_with(job, changes: tuple[Change, ...]):
    """A copy of the job with the changes written into its [[pass]] tables (lengths in mm, as the Job holds)."""
    tables = copy.deepcopy(job.tables)
    passes = tables["pass"]
    for change in changes:
        # a pass is named as the reader keeps it: without the spaces around the name it was written with
        if change.key == "order":
            by_name = {p["name"].strip(): p for p in passes}
            passes = [by_name[name] for name in change.after]
            continue
        table = next(p for p in passes if p["name"].strip() == change.pass_name)
        if change.key == "compensate":
            table["compensate"] = [list(pair) for pair in change.after]
        else:
            table[change.key] = change.after
    tables["pass"] = passes
    return replace(job, tables=tables)


# ---------------------------------------------------------------------------------------------------
# the search

@dataclass(frozen=True)
class Surface:
    """A finished od or bore and the passes that make it."""

    kind: str                    # "od" | "id"
    finish: object               # process.Pass that finishes it
    before: object | None        # the pass before it on the same surface (leaves its allowance), or None
    tools: tuple[str, ...]       # tools that can cut it (the finishing pass's own first)


def surfaces_of(process, pred: Prediction) -> list[Surface]:
    finishing = set(pred.deviation.finished_by)
    out = []
    for kind in ("od", "id", "face"):
        mine = [p for p in process.passes if p.surface == kind]
        finish = next((p for p in reversed(mine) if p.name in finishing and p.allowance_mm == 0.0), None)
        if finish is None:
            continue
        index = mine.index(finish)
        before = mine[index - 1] if index > 0 and mine[index - 1].allowance_mm > 0.0 else None
        bar = kind == "id"
        fit = [name for name, tool in process.tools.items() if (tool.bar is not None) == bar and name != finish.tool]
        out.append(Surface(kind=kind, finish=finish, before=before, tools=(finish.tool, *fit)))
    return out


def feed_ladder(surface: Surface, process, ra_limit_um: float | None) -> list[float]:
    """Feeds to try, fastest first: the R10 values the nose and the roughness limit allow, up to 1.6 times
    the feed now (a finishing feed is seldom raised further in one step)."""
    nose = process.tools[surface.finish.tool].nose_radius_mm
    feeds = []
    for f in FEED_LADDER_MM:
        if f >= 2.0 * nose * 0.95 or f > 1.6 * surface.finish.feed_mm:
            continue
        if ra_limit_um is not None and float(theoretical_roughness(f, nose)[0]) > ra_limit_um:
            continue
        feeds.append(f)
    return feeds


def fastest_feed(search: Search, base: tuple[Change, ...], surface: Surface, feeds: list[float],
                 holds, beat_s: float = math.inf) -> Outcome | None:
    """The fastest feed of the ladder at which holds(outcome) is true, by bisection (the material left
    falls with the feed); None if even the slowest does not hold, if the fastest already takes beat_s or
    longer (every slower feed would take longer still), or if no feed can hold the band without an offset
    (`no_room_without_offset`)."""
    def at(index):
        return search.evaluate(base + feed_change(surface, feeds[index]))

    if not feeds:
        return None
    low, high = 0, len(feeds) - 1           # feeds[low] fastest
    first = at(low)
    if first is not None and holds(first):
        return first
    if first is not None and (first.cycle_time_s >= beat_s or no_room_without_offset(first, surface)):
        return None
    slowest = at(high)
    if slowest is None or not holds(slowest):
        return None
    best = slowest
    while high - low > 1:
        middle = (low + high) // 2
        outcome = at(middle)
        if outcome is not None and holds(outcome):
            high, best = middle, outcome
        else:
            low = middle
    return best


def no_room_without_offset(outcome: Outcome, surface: Surface) -> bool:
    """True when no feed can hold this surface without a wear offset: the push-off only ever leaves material
    (an OD comes out larger, a bore smaller), so a band that allows no oversize on an OD (h, g, f, ...) or no
    undersize in a bore (H, G, F, ...) is broken by any push-off at all. (A compensation or an offset the
    plan already carries can move the surface the other way.)"""
    if any(c.key in ("offset", "compensate") and c.pass_name == surface.finish.name for c in outcome.changes):
        return False
    if surface.finish.offset_mm or surface.finish.compensation:
        return False
    for c in outcome.checks:
        if c.pass_name == surface.finish.name and c.surface == surface.kind and not c.meets:
            return c.upper <= 0.0 if surface.kind == "od" else c.lower >= 0.0
    return False


def feed_change(surface: Surface, feed_mm: float) -> tuple[Change, ...]:
    if math.isclose(feed_mm, surface.finish.feed_mm):
        return ()
    return (Change(surface.finish.name, "feed", surface.finish.feed_mm, feed_mm),)


def setting_changes(surface: Surface, spring: int, allowance: float | None, tool: str) -> tuple[Change, ...]:
    changes = []
    if spring != surface.finish.spring:
        changes.append(Change(surface.finish.name, "spring", surface.finish.spring, spring))
    if surface.before is not None and allowance is not None and not math.isclose(allowance, surface.before.allowance_mm):
        changes.append(Change(surface.before.name, "allowance", surface.before.allowance_mm, allowance))
    if tool != surface.finish.tool:
        changes.append(Change(surface.finish.name, "tool", surface.finish.tool, tool))
    return tuple(changes)


def holds_surface(surface: Surface):
    """Test of an outcome: the limits of this surface's own features (its diameters and Ra, its chip and
    rubbing), the wall, and the power are kept."""
    def holds(outcome: Outcome) -> bool:
        mine = [c for c in outcome.checks if c.pass_name == surface.finish.name or c.surface == "wall"]
        own = [b for b in outcome.broken if b.startswith((surface.finish.name, "peak power", NOT_HELD))]
        return all(c.meets for c in mine) and not own
    return holds


def settings_of(search: Search, surface: Surface, ra_limit):
    """Every mix of spring cuts, finishing allowance (as now, or LIGHT_ALLOWANCE_MM) and tool for a surface:
    (its changes, the surface with that tool, the feeds the roughness allows with it, fastest first)."""
    allowances = [None] if surface.before is None else sorted(
        {surface.before.allowance_mm, min(surface.before.allowance_mm, LIGHT_ALLOWANCE_MM)}, reverse=True)
    for spring, allowance, tool in itertools.product(SPRING_CUTS, allowances, surface.tools):
        variant = replace(surface, finish=replace(surface.finish, tool=tool))
        yield setting_changes(surface, spring, allowance, tool), variant, feed_ladder(variant, search.process, ra_limit)


def grid_options(search: Search, surface: Surface, ra_limit) -> list[Outcome]:
    """For every mix of spring cuts, finishing allowance and tool: the fastest feed that holds."""
    found = []
    for changes, variant, feeds in settings_of(search, surface, ra_limit):
        beat_s = min((o.cycle_time_s for o in found), default=math.inf)
        outcome = fastest_feed(search, changes, variant, feeds, holds_surface(surface), beat_s)
        if outcome is not None:
            found.append(outcome)
    return found


def offset_grid_options(search: Search, surface: Surface, ra_limit, beat_s: float) -> list[Outcome]:
    """For every mix of spring cuts, finishing allowance and tool: a wear offset centred in the band at the
    fastest feed the roughness allows with that tool (an h or H fit needs an offset: any material left
    breaks its limit at the nominal size). Mixes whose plan without the offset already takes beat_s or more
    are skipped (the offset changes the time by a hair)."""
    if surface.kind not in ("od", "id"):
        return []
    found = []
    holds = holds_surface(surface)
    for changes, _, feeds in settings_of(search, surface, ra_limit):
        if not feeds:
            continue
        base = changes + feed_change(surface, feeds[0])
        plain = search.evaluate(base)
        if plain is None or plain.cycle_time_s >= beat_s:
            continue
        outcome = offset_option(search, base, surface)
        if outcome is not None:
            found.append(outcome)
            if holds(outcome):
                beat_s = min(beat_s, outcome.cycle_time_s)
    return found


def surface_deviation(pred: Prediction, surface: Surface,
                      envelope: bool = True) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(position along the pass, most and least material left a side as a size gauge sees it) on the
    cylindrical points the finishing pass finished: the material left itself, widened by the lobes the jaws
    leave with [holding] (`conformance.size_extremes`, by the drawing's rule for size)."""
    d = pred.deviation
    mine = np.array([k for k in straight_points(d, surface.kind) if d.finished_by[k] == surface.finish.name], int)
    if not len(mine):
        return np.empty(0), np.empty(0), np.empty(0)
    mine = mine[np.argsort(d.points_rz[mine, 1])]
    most, least = size_extremes(d, mine, envelope)
    return d.points_rz[mine, 1], most, least


def band_centre_mm(outcome: Outcome, surface: Surface) -> float | None:
    """Middle of the diameter band of this surface's feature, as material left a side (radius)."""
    for c in outcome.checks:
        if c.pass_name == surface.finish.name and c.surface == surface.kind:
            sign = 1.0 if surface.kind == "od" else -1.0
            return sign * 0.5 * (c.lower + c.upper) / 2.0
    return None


def offset_option(search: Search, base: tuple[Change, ...], surface: Surface) -> Outcome | None:
    """A single wear offset on the finishing pass that centres the predicted deviation in what the limits
    leave it: the diameter band and, with a wall tolerance, the wall's band given the other side as it is."""
    outcome = search.evaluate(base)
    offset = surface.finish.offset_mm
    for _ in range(OFFSET_ROUNDS):
        if outcome is None:
            return None
        shift = centring_shift_mm(outcome, surface, search.tolerances)
        if shift is None:
            return None
        offset = round_um(offset + shift)
        outcome = search.evaluate(base + (Change(surface.finish.name, "offset", surface.finish.offset_mm, offset),))
    return outcome


def centring_shift_mm(outcome: Outcome, surface: Surface, tolerances: Tolerances) -> float | None:
    """How far to move the surface along its outward normal [mm, a side] to put its deviation in the middle
    of the interval the limits allow: from the diameter band (an OD grows by twice the material left, a bore
    shrinks by it; with lobes, the most material as gauged against the maximum-material limit and the least
    against the other) and, with a wall tolerance, from the wall's band (the wall grows by the material left
    on either side). Where the two do not overlap, the diameter band alone decides."""
    feature = next((c for c in outcome.checks if c.pass_name == surface.finish.name and c.surface == surface.kind),
                   None)
    _, most, least = surface_deviation(outcome.prediction, surface, tolerances.envelope)
    if feature is None or not len(most):
        return None
    if surface.kind == "od":
        low, high = 0.5 * feature.lower - least.min(), 0.5 * feature.upper - most.max()
    else:
        low, high = -0.5 * feature.upper - least.min(), -0.5 * feature.lower - most.max()
    wall_mm = tolerances.wall_mm
    if wall_mm is not None:
        _, wall = wall_profile(outcome.prediction)
        if len(wall):
            both = max(low, -wall_mm - wall.min()), min(high, wall_mm - wall.max())
            if both[0] <= both[1]:
                low, high = both
    return 0.5 * (low + high)


def compensation_option(search: Search, base: tuple[Change, ...], surface: Surface) -> Outcome | None:
    """The finishing target programmed off the contour by the predicted push-off, so the surface springs
    back to the band's centre. Each round corrects the programmed offsets by what is still left, the later
    ones by COMPENSATION_RELAXATION of it (the deeper cut pushes off more, and at the end of a stretch, where
    the target turns the corner, a full correction overshoots); the round that comes nearest to holding is
    kept."""
    outcome = search.evaluate(base)
    if outcome is None:
        return None
    envelope = search.tolerances.envelope
    z, most, least = surface_deviation(outcome.prediction, surface, envelope)
    centre = band_centre_mm(outcome, surface)
    if len(z) < 2 or centre is None:
        return None
    positions = np.linspace(z[0], z[-1], COMPENSATION_POINTS)
    shift = np.zeros_like(positions)
    rounds = []
    for k in range(COMPENSATION_ROUNDS):
        share = 1.0 if k == 0 else COMPENSATION_RELAXATION
        middle = 0.5 * (most + least)          # the middle of what the gauges see, to the band's centre
        shift = np.array([round_um(v) for v in shift - share * (np.interp(positions, z, middle) - centre)])
        pairs = tuple((round(float(a), 4), float(b)) for a, b in zip(positions, shift))
        outcome = search.evaluate(base + (Change(surface.finish.name, "compensate", None, pairs),))
        if outcome is None:
            break
        rounds.append(outcome)
        z, most, least = surface_deviation(outcome.prediction, surface, envelope)
        if len(z) < 2:
            break
    return nearest_to_holding(rounds, surface)


def round_um(value_mm: float) -> float:
    return round(float(round(value_mm / OFFSET_STEP_MM) * OFFSET_STEP_MM), 6)


def changes_of(outcome: Outcome, surface: Surface) -> tuple[Change, ...]:
    """The changes of an outcome that belong to one surface's passes."""
    names = {surface.finish.name} | ({surface.before.name} if surface.before else set())
    return tuple(c for c in outcome.changes if c.pass_name in names)


def order_change(process, surfaces: list[Surface]) -> tuple[Change, ...]:
    """Swap which of the od and bore finishing passes comes last (the other order of the two)."""
    walls = [s for s in surfaces if s.kind in ("od", "id")]
    if len(walls) < 2:
        return ()
    names = [p.name for p in process.passes]
    a, b = sorted((names.index(s.finish.name) for s in walls))
    swapped = list(names)
    swapped[a], swapped[b] = swapped[b], swapped[a]
    return (Change(names[b], "order", tuple(names), tuple(swapped)),)


def tune(job, progress=None, memo: dict | None = None) -> TuneResult:
    """Search the remedies and rank them (module docstring). memo: key-station compliances already computed
    for this job (`simulate.plan_compliance`), e.g. by `deflect explain`."""
    with kept_workers():
        return search_remedies(job, progress, {} if memo is None else memo)


def wear_offsets_only(job, memo: dict | None = None) -> TuneResult:
    """The cheapest remedy alone, without the search: a wear offset on every finishing pass at its present
    settings, centred in its band (`offset_wear_only`), predicted in full. The first thing to change on the
    next part once a first article has calibrated the constants."""
    if "tolerance" not in job.tables:
        raise InputError("tolerance", "missing; give [tolerance] (od, id, wall, ra) for the remedies to aim at")
    tolerances = tolerance_from_table(job.tables["tolerance"])
    with kept_workers():
        search = Search(job=job, tolerances=tolerances, memo={} if memo is None else memo)
        current = search.evaluate((), with_ranges=True)
        if current is None:
            process_from_job(job)
            raise ModelError("the job as given cannot be predicted")
        changes = offset_wear_only(search, surfaces_of(search.process, current.prediction))
        outcome = search.evaluate(changes, with_ranges=True) if changes else None
    options = [outcome] if outcome is not None else []
    return TuneResult(current=current, options=options, limiting=limiting_text(current, options),
                      offset_note=offset_note(outcome), evaluations=len(search.seen),
                      warnings=list(search.process.warnings))


def search_remedies(job, progress, memo: dict) -> TuneResult:
    if "tolerance" not in job.tables:
        raise InputError("tolerance", "missing; give [tolerance] (od, id, wall, ra) for the remedies to aim at")
    tolerances = tolerance_from_table(job.tables["tolerance"])
    given = Search(job=job, tolerances=tolerances, memo=memo, progress=progress)
    current = given.evaluate((), with_ranges=True)
    if current is None:
        # the job's own error, keyed, is what the user needs: predict it again and let it say what failed
        simulate(job, process_from_job(job), memo=given.memo, with_ranges=False)
        raise ModelError("the job as given cannot be predicted", key="pass")
    # a cut deeper than its insert takes is split into more cuts in every option (`split_to_edge`)
    split = split_to_edge(given, current)
    edged = given if not split else Search(job=job_with(job, split), tolerances=tolerances, memo=given.memo,
                                           progress=progress)
    edged_now = edged.evaluate(()) if split else current
    if edged_now is None:           # the split plan cannot be predicted (too many cuts, say): search the plan given
        split, edged, edged_now = (), given, current
    # a pass that asks more power than the machine has runs slower in every option
    slower = slowed_to_power(edged, edged_now)
    fixed = split + slower
    search = given if not fixed else Search(job=job_with(job, fixed), tolerances=tolerances, memo=given.memo,
                                             progress=progress)
    result = searched(search, current, tolerances, as_is=bool(fixed))
    if fixed:
        result = replace(result, options=[replace(o, changes=fixed + o.changes) for o in result.options],
                         evaluations=result.evaluations + len(given.seen) + (len(edged.seen) if split else 0))
    return result


def split_to_edge(search: Search, current: Outcome) -> tuple[Change, ...]:
    """`depth` set on every pass that has a cut deeper than its insert's usable edge, or a finishing cut deeper
    than its allowance implies (`deflect.machining.insert_edge`), so that it takes its stock in more cuts (what a
    machinist does, rather than slow such a cut down); () when every cut fits."""
    if current is None:
        return ()
    depth: dict[str, float] = {}
    for problem in edge_problems(search.process, current.prediction.passes):
        depth[problem.pass_name] = min(depth.get(problem.pass_name, math.inf), split_depth_mm(problem))
    return tuple(Change(p.name, "depth", p.depth_mm, depth[p.name]) for p in search.process.passes
                 if p.name in depth and (p.depth_mm is None or depth[p.name] < p.depth_mm))


def slowed_to_power(search: Search, current: Outcome) -> tuple[Change, ...]:
    """Cutting speed lowered, in steps of SPEED_STEP_M_MIN, on every pass whose peak power is over the
    machine's. The power is P = F_c v_c / 60000; the cutting force rises a little as the speed falls
    (Kienzle's speed factor), so the speed is scaled by the power's excess and checked again, up to
    SPEED_ROUNDS times; SPEED_MARGIN keeps it clear of the limit. () when every pass is within power."""
    process = search.process
    speeds = {p.name: p.speed_m_min for p in process.passes}
    outcome = current
    for _ in range(SPEED_ROUNDS):
        over = [(p.name, result.peak_power_kw) for result, p in zip(outcome.prediction.passes, process.passes)
                if result.peak_power_kw > process.machine.power_kw]
        if not over:
            break
        for name, peak in over:
            scaled = SPEED_MARGIN * speeds[name] * process.machine.power_kw / peak
            speeds[name] = max(SPEED_STEP_M_MIN, SPEED_STEP_M_MIN * math.floor(scaled / SPEED_STEP_M_MIN))
        changes = tuple(Change(p.name, "speed", p.speed_m_min, speeds[p.name]) for p in process.passes
                        if speeds[p.name] != p.speed_m_min)
        outcome = search.evaluate(changes)
        if outcome is None:
            return ()
    return tuple(Change(p.name, "speed", p.speed_m_min, speeds[p.name]) for p in process.passes
                 if speeds[p.name] != p.speed_m_min)


def searched(search: Search, current: Outcome, tolerances, as_is: bool) -> TuneResult:
    """The search proper (module docstring), from the plan as given (or slowed to the machine's power; then
    as_is puts that plan itself among the options)."""
    process = search.process
    first = search.evaluate(())
    surfaces = surfaces_of(process, first.prediction if first is not None else current.prediction)

    # per surface, every family of remedy with the others as they are
    families: dict[str, list[tuple[Change, ...]]] = {"grid": [], "offset": [], "compensate": []}
    per_surface_best = []
    for surface in surfaces:
        feeds = feed_ladder(surface, process, tolerances.ra_um)
        fastest = feed_change(surface, feeds[0]) if feeds else ()
        grid = grid_options(search, surface, tolerances.ra_um)
        offset_now = offset_option(search, (), surface)
        compensated = compensation_option(search, fastest, surface)
        held = [o for o in grid + [offset_now, compensated] if o is not None and holds_surface(surface)(o)]
        offsets = offset_grid_options(search, surface, tolerances.ra_um,
                                      min((o.cycle_time_s for o in held), default=math.inf))
        best_here = nearest_to_holding(grid + offsets + [offset_now, compensated], surface)
        per_surface_best.append(best_here)
        # each family on the surfaces it can mend; elsewhere the best remedy of this surface if that holds
        for name, outcomes in (("grid", grid), ("offset", offsets + [offset_now]), ("compensate", [compensated])):
            pick = nearest_to_holding(outcomes, surface)
            if pick is None or (not holds_surface(surface)(pick) and best_here is not None
                                and holds_surface(surface)(best_here)):
                pick = best_here
            families[name].append(changes_of(pick, surface) if pick is not None else ())
    best = tuple(c for s, o in zip(surfaces, per_surface_best) if o is not None for c in changes_of(o, s))
    plans = [best, *(tuple(itertools.chain(*v)) for v in families.values())]
    plans.append(best + order_change(process, surfaces))
    plans.append(offset_wear_only(search, surfaces))
    options = []
    for changes in dict.fromkeys(p for p in plans + ([()] if as_is else []) if p or as_is):
        outcome = search.evaluate(changes)
        if outcome is not None and not outcome.meets:
            # searched one surface at a time, the offsets were centred with the other surfaces as they were;
            # a deeper cut on one side thins the wall under the other: centre them again together
            changes = recentred(search, changes, surfaces)
        outcome = search.evaluate(changes, with_ranges=True)
        if outcome is not None:
            options.append(outcome)
    options.sort(key=lambda o: (not o.meets, len(o.broken), o.cycle_time_s))
    wear_only = search.evaluate(plans[-1], with_ranges=True) if plans[-1] else None
    return TuneResult(current=current, options=options, limiting=limiting_text(current, options),
                      offset_note=offset_note(wear_only),
                      evaluations=len(search.seen), warnings=list(process.warnings))


def recentred(search: Search, changes: tuple[Change, ...], surfaces: list[Surface]) -> tuple[Change, ...]:
    """The plan with each of its wear offsets centred again in its band, one surface after the other, with
    all the plan's other changes in place."""
    for surface in surfaces:
        mine = [c for c in changes if c.key == "offset" and c.pass_name == surface.finish.name]
        if not mine:
            continue
        rest = tuple(c for c in changes if c not in mine)
        outcome = offset_option(search, rest, surface)
        if outcome is not None:
            changes = outcome.changes
    return changes


def nearest_to_holding(outcomes: list[Outcome | None], surface: Surface) -> Outcome | None:
    """The cheapest outcome that holds this surface's limits; if none does, the one that comes nearest (the
    largest of its features' least margins, each as a share of its band)."""
    candidates = [o for o in outcomes if o is not None]
    holds = holds_surface(surface)
    held = [o for o in candidates if holds(o)]
    if held:
        return min(held, key=lambda o: o.cycle_time_s)
    return max(candidates, key=lambda o: relative_margin(o, surface), default=None)


def relative_margin(outcome: Outcome, surface: Surface) -> float:
    """The least margin of this surface's features, each as a share of its band (-inf if the edge rubs or
    the chip is too thin)."""
    if any(b.startswith(surface.finish.name) for b in outcome.broken):
        return -math.inf
    mine = [c for c in outcome.checks if c.pass_name == surface.finish.name or c.surface == "wall"]
    return min((c.margin / max(c.upper - c.lower, 1e-12) for c in mine), default=0.0)


def offset_wear_only(search: Search, surfaces: list[Surface]) -> tuple[Change, ...]:
    """A wear offset on every finishing pass at its present settings, centred in its band (the cheapest
    remedy of all: no time lost)."""
    changes = ()
    for surface in surfaces:
        outcome = offset_option(search, changes, surface)
        if outcome is not None:
            changes = outcome.changes
    return changes


def offset_note(outcome: Outcome | None) -> str:
    """Whether the wear offsets alone hold the diameters: an offset moves a whole surface, so what is left
    is its taper (the spread of the deviation along it) against the width of its band."""
    if outcome is None:
        return "a single wear offset per surface does not apply here (no toleranced diameter to centre)"
    lines = []
    for c in outcome.checks:
        if c.surface in ("od", "id"):
            spread_um, band_um = 1000 * (c.high - c.low), 1000 * (c.upper - c.lower)
            enough = "enough" if spread_um <= band_um and c.meets else "not enough"
            lobes = f" ({1000 * c.form_mm:.0f} um of it the jaws' lobes)" if c.form_mm > 0.0 else ""
            lines.append(f"{c.feature}: taper {spread_um:.0f} um on the diameter{lobes} against a band of "
                         f"{band_um:.0f} um, a wear offset alone is {enough}")
    return "; ".join(lines)


def limiting_text(current: Outcome, options: list[Outcome]) -> str:
    """When no option meets everything: the feature no option brings inside (the one whose best margin over
    all options is the worst), how near the best option comes, and the deviation it reaches there."""
    if any(o.meets for o in options):
        return ""
    candidates = options or [current]
    best_for = {}
    for outcome in candidates:
        for c in outcome.checks:
            relative = c.margin / max(c.upper - c.lower, 1e-12)
            if c.feature not in best_for or relative > best_for[c.feature][0]:
                best_for[c.feature] = (relative, c, outcome)
    failing = {name: v for name, v in best_for.items() if v[0] < 0.0}
    if not failing:
        return "no option meets every limit: " + "; ".join(min(candidates, key=lambda o: len(o.broken)).broken)
    grip = next((b for o in candidates for b in o.broken if b.startswith(NOT_HELD)), None)
    held = ("" if grip is None else
            f"{grip}; the remedies here change the finishing, not the holding (`deflect clamp` for that). Besides, ")
    _, check, outcome = min(failing.values(), key=lambda v: v[0])
    rank = candidates.index(outcome) + 1 if outcome in options else 0
    where = f" at z {check.worst_z_mm:.1f} mm" if check.worst_z_mm is not None else ""
    if check.unit == "um":
        reached = f"Ra {check.low:.2f} um against {check.upper:g} um"
    else:
        reached = (f"{1000 * check.low:+.1f} to {1000 * check.high:+.1f} um against limits {1000 * check.lower:+.0f} / "
                   f"{1000 * check.upper:+.0f} um")
    wall = " (the wall between them)" if check.surface == "wall" else ""
    if check.surface == "roundness" or check.form_mm > 0.0:
        advice = ("The out-of-roundness the jaws leave is what limits: change the holding (`deflect clamp`: more "
                  "jaws, pie jaws, a collet, a lighter grip for the finish), or widen the tolerance.")
    else:
        advice = "Thicken the wall (`--design`), widen the tolerance, or hold the part nearer the cut."
    return (f"{held}no option holds the drawing: the limiting feature is {check.feature}{wall}{where}; the best "
            f"achievable is {reached}" + (f" (option {rank})" if rank else "") + ". " + advice)
