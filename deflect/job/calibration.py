"""A first article's calibration: force factors, size errors and a grip factor, as `deflect explain --save`
writes them, read back and applied to a job's passes.

Takes the path of a calibration file (TOML, below) and gives a `Calibration`; `with_calibration` attaches it
to a `Job` (the `[job] calibration = "file.toml"` key, or `--calibration FILE` on the command line), after
which `deflect.job.process.read_process` gives every pass its force factor and size error:

* a force factor scales the three Kienzle constants kc1.1, kf1.1 and kp1.1 of one tool together (or of one
  pass, when the fit was made per pass). The push-off is force times compliance, so the factor also carries
  any error of the wall's stiffness the shell model makes;
* a size error is a uniform error of one finished surface along its outward normal, a side (wear offset,
  tool setting, thermal growth): the finishing pass's target is moved by it in X (an od or bore) or Z (a
  face), as the pass key `compensate` moves it; on the cylinder or face this is exactly the pass key
  `offset` (the machine cuts there although the program says otherwise);
* a grip factor scales the squeeze of the jaws ([holding]) and so the spring-back and roundness it leaves.

The file (lengths in mm whatever the job's unit):

    [calibration]
    job = "housing.toml"                    # where it came from: the job, the measurement file, the date
    measured = "housing-first-article.toml"
    date = "2026-12-04"
    material = "al-6061-t6"                 # a calibration is refused on a job that cuts another material
    fitted_per = "tool"                     # "tool" | "pass": what a force factor's applies_to names
    residual_rms_um = 1.1

    [[calibration.factor]]
    applies_to = "T2 finish"
    kind = "force"                          # "force" | "grip" (the grip's applies_to is "jaws")
    value = 0.82
    low = 0.78                              # the 95 % interval
    high = 0.86
    identified = true                       # false: the measurements could not see it; value 1, not used

    [[calibration.size_error]]
    pass = "finish OD"
    surface = "od"
    value_mm = 0.004
    low_mm = 0.002
    high_mm = 0.006
    identified = true

Every problem is an `InputError` naming the calibration file and the key.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, replace
from pathlib import Path

from deflect.errors import InputError
from deflect.job.checks import check_keys, check_table, is_number, read_toml

CALIBRATION_KEYS = ("job", "measured", "date", "material", "fitted_per", "residual_rms_um", "factor", "size_error")
FACTOR_KEYS = ("applies_to", "kind", "value", "low", "high", "identified")
SIZE_KEYS = ("pass", "surface", "value_mm", "low_mm", "high_mm", "identified")
FACTOR_KINDS = ("force", "grip")
GRIP_APPLIES_TO = "jaws"
SURFACES = ("od", "id", "face")
# The ranges of a calibrated prediction use the force factors' 95 % intervals in place of the material's stated
# spread; an interval wider than this share of its value is not a calibration (the fit reports such a factor as
# not identified), and 1 - spread must stay a positive force.
MOST_SPREAD = 0.9
FACTOR_LIMITS = (0.01, 100.0)   # a factor outside these is not a calibration of recalled constants
MOST_SIZE_ERROR_MM = 0.5        # a size error of more than this is a wrong program or a wrong part, not a setting
CALIBRATION_HEADER = "# deflect calibration"   # the first line of every file `deflect explain --save` writes


@dataclass(frozen=True)
class Factor:
    """A fitted factor with its 95 % interval."""

    applies_to: str              # the tool's name (or the pass's, fitted per pass); "jaws" for the grip
    kind: str                    # "force" | "grip"
    value: float
    low: float
    high: float
    identified: bool             # False: nothing measured could see it; value left at 1


@dataclass(frozen=True)
class SizeError:
    """A fitted uniform size error of one finished surface, along its outward normal, a side [mm]."""

    pass_name: str               # the pass that finishes the surface
    surface: str                 # "od" | "id" | "face"
    value_mm: float              # > 0: material left (an OD too large, a bore too small, a face too high)
    low_mm: float
    high_mm: float
    identified: bool             # False: no measurement of the surface; value left at 0


@dataclass(frozen=True)
class Calibration:
    """Factors and size errors from one first article, and where they came from."""

    factors: tuple[Factor, ...]
    size_errors: tuple[SizeError, ...]
    fitted_per: str              # "tool" | "pass"
    job: str
    measured: str
    date: str
    material: str
    residual_rms_um: float
    path: str = ""               # the file it was read from ("" when made in this run)

    def force_factor(self, p) -> float:
        """The factor on the forces of pass p (1 where the calibration has none for its tool or name)."""
        name = p.tool if self.fitted_per == "tool" else p.name
        return next((f.value for f in self.factors if f.kind == "force" and f.applies_to == name and f.identified),
                    1.0)

    def size_error_mm(self, pass_name: str) -> float:
        return next((s.value_mm for s in self.size_errors if s.pass_name == pass_name and s.identified), 0.0)

    @property
    def grip_factor(self) -> float:
        return next((f.value for f in self.factors if f.kind == "grip" and f.identified), 1.0)

    def applied_to(self, passes: list) -> list:
        """The passes with their force factors and size errors. A size error moves the pass's target the way
        the machine's error moves the tool: in X for an od or bore, in Z for a face, uniformly, so it is added
        to the pass's programmed compensation (made uniform over its extent where it has none). On a cylinder
        (a face) this is exactly the pass key `offset`; unlike `offset` it does not move the shoulder a pass
        ends at, which a tool set wrong in X does not move either."""
        out = []
        for p in passes:
            size = self.size_error_mm(p.name)
            compensation = p.compensation
            if size:
                compensation = tuple((at, c + size) for at, c in p.compensation) or (
                    (min(p.start_mm, p.end_mm), size), (max(p.start_mm, p.end_mm), size))
            out.append(replace(p, force_factor=self.force_factor(p), size_error_mm=size, compensation=compensation))
        return out

    def force_spread(self, stated: float) -> float:
        """The relative spread of the force constants left after calibration: the widest 95 % half-width of
        the identified force factors, or the stated spread where a force factor could not be identified."""
        force = [f for f in self.factors if f.kind == "force"]
        if not force:
            return stated
        widths = [0.5 * (f.high - f.low) / f.value if f.identified else stated for f in force]
        return min(max(widths), MOST_SPREAD)


def grip_factor_of(job) -> float:
    """The calibrated factor on the jaws' squeeze of a job (1 without a calibration)."""
    calibration = getattr(job, "calibration", None)
    return 1.0 if calibration is None else calibration.grip_factor


# ---------------------------------------------------------------------------------------------------
# the file

def read_calibration(path: str | Path) -> Calibration:
    """Read and check a calibration file; every problem is an InputError naming it."""
    path = str(path)
    data = read_toml(path, "calibration file")
    try:
        return replace(calibration_from_data(data), path=path)
    except InputError as exc:
        exc.file = path
        raise


def calibration_from_data(data: dict) -> Calibration:
    for name in data:
        if name != "calibration":
            raise InputError(name, "unknown table; a calibration file holds only [calibration]")
    if "calibration" not in data:
        raise InputError("calibration", "missing; a calibration file holds a [calibration] table, as "
                                        "`deflect explain --save` writes it")
    table = check_table(data["calibration"], "calibration")
    check_keys(table, CALIBRATION_KEYS, "calibration")
    texts = {name: _text(table, name, "calibration") for name in ("job", "measured", "date", "material")}
    fitted_per = table.get("fitted_per", "tool")
    if fitted_per not in ("tool", "pass"):
        raise InputError("calibration.fitted_per", f'must be "tool" or "pass", got {fitted_per!r}')
    residual = _number(table, "residual_rms_um", "calibration", 0.0, math.inf) if "residual_rms_um" in table else 0.0
    factors = tuple(_factor(item, f"calibration.factor[{i}]")
                    for i, item in enumerate(_array(table, "factor")))
    sizes = tuple(_size_error(item, f"calibration.size_error[{i}]")
                  for i, item in enumerate(_array(table, "size_error")))
    if sum(f.kind == "grip" for f in factors) > 1:
        raise InputError("calibration.factor", "gives more than one grip factor; a part has one holding")
    return Calibration(factors=factors, size_errors=sizes, fitted_per=fitted_per, residual_rms_um=residual,
                       **texts)


def _array(table: dict, name: str) -> list:
    value = table.get(name, [])
    if not isinstance(value, list) or not all(isinstance(item, dict) for item in value):
        raise InputError(f"calibration.{name}", f"must be an array of tables, written [[calibration.{name}]]")
    return value


def _text(table: dict, name: str, key: str) -> str:
    value = table.get(name, "")
    if not isinstance(value, str):
        raise InputError(f"{key}.{name}", f"must be text in quotes, got {value!r}")
    return value


def _number(table: dict, name: str, key: str, low: float, high: float) -> float:
    if name not in table:
        raise InputError(f"{key}.{name}", "missing")
    value = table[name]
    if not is_number(value) or not math.isfinite(value):
        raise InputError(f"{key}.{name}", f"must be a number, got {value!r}")
    if not low <= value <= high:
        raise InputError(f"{key}.{name}", f"must lie between {low:g} and {high:g}, got {value:g}")
    return float(value)


def _flag(table: dict, key: str) -> bool:
    value = table.get("identified", True)
    if not isinstance(value, bool):
        raise InputError(f"{key}.identified", f"must be true or false, got {value!r}")
    return value


def _factor(item: dict, key: str) -> Factor:
    check_keys(item, FACTOR_KEYS, key)
    kind = item.get("kind", "force")
    if kind not in FACTOR_KINDS:
        raise InputError(f"{key}.kind", f'must be "force" or "grip", got {kind!r}')
    applies_to = _text(item, "applies_to", key)
    if kind == "force" and not applies_to:
        raise InputError(f"{key}.applies_to", "missing; name the tool (or the pass) the force factor applies to")
    values = [_number(item, "value", key, *FACTOR_LIMITS), _number(item, "low", key, 0.0, math.inf),
              _number(item, "high", key, 0.0, math.inf)]
    if not values[1] <= values[0] <= values[2]:
        raise InputError(key, f"the interval [{values[1]:g}, {values[2]:g}] must hold the value {values[0]:g}")
    return Factor(applies_to=applies_to or GRIP_APPLIES_TO, kind=kind, value=values[0], low=values[1],
                  high=values[2], identified=_flag(item, key))


def _size_error(item: dict, key: str) -> SizeError:
    check_keys(item, SIZE_KEYS, key)
    name = _text(item, "pass", key)
    if not name:
        raise InputError(f"{key}.pass", "missing; name the pass that finishes the surface")
    surface = item.get("surface")
    if surface not in SURFACES:
        raise InputError(f"{key}.surface", f'must be "od", "id" or "face", got {surface!r}')
    limit = MOST_SIZE_ERROR_MM
    values = [_number(item, "value_mm", key, -limit, limit), _number(item, "low_mm", key, -math.inf, math.inf),
              _number(item, "high_mm", key, -math.inf, math.inf)]
    if not values[1] <= values[0] <= values[2]:
        raise InputError(key, f"the interval [{values[1]:g}, {values[2]:g}] mm must hold the value {values[0]:g}")
    return SizeError(pass_name=name, surface=surface, value_mm=values[0], low_mm=values[1], high_mm=values[2],
                     identified=_flag(item, key))


def calibration_toml(calibration: Calibration) -> str:
    """The calibration as the TOML text `read_calibration` reads (strings quoted as JSON, which TOML accepts)."""
    q = json.dumps
    lines = [f"{CALIBRATION_HEADER} from a first article (deflect explain --save). Lengths in mm.",
             "# Force factors scale a tool's kc1.1, kf1.1 and kp1.1 together (and carry any error of the wall's",
             "# stiffness); size errors are uniform along each finished surface, a side, positive = material left.",
             "[calibration]",
             f"job = {q(calibration.job)}", f"measured = {q(calibration.measured)}", f"date = {q(calibration.date)}",
             f"material = {q(calibration.material)}", f"fitted_per = {q(calibration.fitted_per)}",
             f"residual_rms_um = {calibration.residual_rms_um!r}"]
    for f in calibration.factors:
        lines += ["", "[[calibration.factor]]", f"applies_to = {q(f.applies_to)}", f"kind = {q(f.kind)}",
                  f"value = {f.value!r}", f"low = {f.low!r}", f"high = {f.high!r}",
                  f"identified = {str(f.identified).lower()}"]
    for s in calibration.size_errors:
        lines += ["", "[[calibration.size_error]]", f"pass = {q(s.pass_name)}", f"surface = {q(s.surface)}",
                  f"value_mm = {s.value_mm!r}", f"low_mm = {s.low_mm!r}", f"high_mm = {s.high_mm!r}",
                  f"identified = {str(s.identified).lower()}"]
    return "\n".join(lines) + "\n"


# ---------------------------------------------------------------------------------------------------
# on a job

def with_calibration(job, calibration: Calibration, key: str = "job.calibration"):
    """The job with the calibration attached: its passes get their factors and size errors when the process
    is read, and the material's force spread becomes what the calibration leaves of it. A calibration made on
    another material is refused; names the job lacks are warned about (their entries are not used)."""
    if calibration.material and calibration.material != job.material.name:
        raise InputError(key, f"{calibration.path or 'the calibration'} was made on {calibration.material!r}, "
                              f"this job cuts {job.material.name!r}; calibrate on a part of this material")
    tables = job.tables
    tools = {t.get("name") for t in tables.get("tool", [])}
    passes = {p.get("name") for p in tables.get("pass", [])}
    names = tools if calibration.fitted_per == "tool" else passes
    warnings = list(job.warnings)
    for f in calibration.factors:
        if f.kind == "force" and f.identified and f.applies_to not in names:
            warnings.append(f"calibration: no {calibration.fitted_per} named {f.applies_to!r} in this job; its force "
                            f"factor x{f.value:.3g} is not used")
    for s in calibration.size_errors:
        if s.identified and s.pass_name not in passes:
            warnings.append(f"calibration: no pass named {s.pass_name!r} in this job; its size error is not used")
    if calibration.grip_factor != 1.0 and "holding" not in tables:
        warnings.append("calibration: the job has no [holding]; the grip factor is not used")
    material = replace(job.material, force_spread=calibration.force_spread(job.material.force_spread))
    return replace(job, calibration=calibration, material=material, warnings=warnings)
