"""Work materials: elastic constants, density and Kienzle force constants.

Takes the job's ``[material]`` table (a name from the shipped library
``data/materials.toml`` and/or values given inline) and gives a `Material`.

The force constants follow O. Kienzle, "Die Bestimmung von Kräften und Leistungen
an spanenden Werkzeugen und Werkzeugmaschinen", VDI-Z 94 (1952) 299-305: each force
component is ``F = k11 * b * h**(1 - m)`` with chip width b and chip thickness h in
mm, k11 in N/mm2 (the force on a chip 1 mm wide and 1 mm thick) and the exponent m.
The shipped constants are recalled values, not checked against printed tables;
every number in the library carries its source string (see the file header).

The Kienzle constants are optional: the section and compliance commands need only
E, nu and density. `require_cutting_constants` checks them where forces are due.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field, replace
from pathlib import Path

from deflect.errors import InputError
from deflect.job.checks import check_keys, number

KIENZLE_KEYS = ("kc11", "mc", "kf11", "mf", "kp11", "mp")

# Reference conditions assumed for constants given inline without a library name:
# carbide, rake +6 deg, kr 70 deg, vc 100 m/min, as in the Kienzle-Victor tables
# reproduced by Koenig & Klocke, Fertigungsverfahren 1 (from memory, to be confirmed).
DEFAULT_REF_RAKE_DEG = 6.0
DEFAULT_REF_APPROACH_DEG = 70.0
DEFAULT_REF_SPEED_M_MIN = 100.0
DEFAULT_FORCE_SPREAD = 0.15

INLINE_SOURCE = "given in the job file"

# job / library key -> Material field
_FIELD_OF_KEY = {
    "E": "E_mpa",
    "nu": "nu",
    "density": "density_g_cm3",
    "kc11": "kc11",
    "mc": "mc",
    "kf11": "kf11",
    "mf": "mf",
    "kp11": "kp11",
    "mp": "mp",
    "ref_rake": "ref_rake_deg",
    "ref_approach": "ref_approach_deg",
    "ref_speed": "ref_speed_m_min",
    "force_spread": "force_spread",
    "min_wall_mm": "min_wall_mm",
}
NUMBER_KEYS = tuple(_FIELD_OF_KEY)
JOB_KEYS = ("name", "description") + NUMBER_KEYS
LIBRARY_KEYS = ("description", "sources") + NUMBER_KEYS


@dataclass(frozen=True)
class Material:
    """A work material (units: MPa, g/cm3, N/mm2, deg, m/min).

    ``kc11 .. mp`` are None when no Kienzle constants were given; `sources`
    maps each job-file key (``E``, ``kc11``, ...) to where its value came from.
    """

    name: str
    E_mpa: float
    nu: float
    density_g_cm3: float
    kc11: float | None = None
    mc: float | None = None
    kf11: float | None = None
    mf: float | None = None
    kp11: float | None = None
    mp: float | None = None
    ref_rake_deg: float = DEFAULT_REF_RAKE_DEG
    ref_approach_deg: float = DEFAULT_REF_APPROACH_DEG
    ref_speed_m_min: float = DEFAULT_REF_SPEED_M_MIN
    force_spread: float = DEFAULT_FORCE_SPREAD
    min_wall_mm: float | None = None      # the thinnest finished wall usually turned in it [mm]; None: not known
    sources: dict[str, str] = field(default_factory=dict, hash=False)
    description: str = ""

    @property
    def has_cutting_constants(self) -> bool:
        return all(getattr(self, k) is not None for k in KIENZLE_KEYS)


def library_path() -> Path:
    """The shipped library, ``data/materials.toml``: inside the package once installed (``deflect/data``, see
    pyproject.toml), or the repository's top-level ``data/`` folder in a source checkout or editable install."""
    package = Path(__file__).resolve().parents[1]
    installed = package / "data" / "materials.toml"
    return installed if installed.is_file() else package.parent / "data" / "materials.toml"


def _check_range(name: str, value: float, key: str) -> None:
    """Physical range of each material value; `name` is the job-file key."""
    if name in ("E", "density", "ref_speed", "kc11", "kf11", "kp11", "min_wall_mm"):
        if value <= 0.0:
            raise InputError(key, f"must be > 0, got {value:g}")
    elif name == "nu":
        if not -1.0 < value < 0.5:
            raise InputError(key, f"Poisson's ratio must lie in (-1, 0.5), got {value:g}")
    elif name in ("mc", "mf", "mp"):
        if not 0.0 <= value < 1.0:
            raise InputError(
                key,
                f"Kienzle exponent must lie in [0, 1), got {value:g} "
                "(convention F = k11 * b * h^(1 - m); a table listing 1 - m needs converting)",
            )
    elif name == "ref_rake":
        if not -30.0 < value < 45.0:
            raise InputError(key, f"reference rake must lie in (-30, 45) deg, got {value:g}")
    elif name == "ref_approach":
        if not 0.0 < value < 180.0:
            raise InputError(key, f"reference approach must lie in (0, 180) deg, got {value:g}")
    elif name == "force_spread":
        if not 0.0 <= value < 1.0:
            raise InputError(key, f"relative spread must lie in [0, 1), got {value:g}")


def _parse_numbers(table: dict, prefix: str) -> dict[str, float]:
    """The numeric entries of a material table, checked; keys stay job-file keys."""
    values = {}
    for name in NUMBER_KEYS:
        if name in table:
            value = number(table[name], f"{prefix}.{name}")
            _check_range(name, value, f"{prefix}.{name}")
            values[name] = value
    return values


def _check_kienzle_complete(values: dict[str, float], prefix: str) -> None:
    """All six Kienzle constants or none: a k11 without its exponent is a mistake."""
    given = [k for k in KIENZLE_KEYS if k in values]
    if given and len(given) < len(KIENZLE_KEYS):
        missing = [k for k in KIENZLE_KEYS if k not in values]
        raise InputError(
            f"{prefix}.{missing[0]}",
            f"missing Kienzle constant(s) {', '.join(missing)}: give all six "
            f"({', '.join(KIENZLE_KEYS)}) or none",
        )


def _material(name: str, values: dict[str, float], sources: dict[str, str],
              description: str) -> Material:
    return Material(
        name=name,
        sources=sources,
        description=description,
        **{_FIELD_OF_KEY[k]: v for k, v in values.items()},
    )


def _library_entry(name: str, table, file: str) -> Material:
    prefix = name
    try:
        if not isinstance(table, dict):
            raise InputError(prefix, "must be a table of material values")
        check_keys(table, LIBRARY_KEYS, prefix)
        values = _parse_numbers(table, prefix)
        for required in ("E", "nu", "density"):
            if required not in values:
                raise InputError(f"{prefix}.{required}", "missing; every material needs E, nu, density")
        _check_kienzle_complete(values, prefix)
        sources = table.get("sources")
        if not isinstance(sources, dict):
            raise InputError(
                f"{prefix}.sources",
                "missing: give a [<name>.sources] table with a source for every number",
            )
        check_keys(sources, NUMBER_KEYS, f"{prefix}.sources")
        for key in values:
            text = sources.get(key)
            if not isinstance(text, str) or not text.strip():
                raise InputError(
                    f"{prefix}.sources.{key}",
                    "missing: say where the value comes from (author, title, table) "
                    "or write 'from memory, to be confirmed'",
                )
        description = table.get("description", "")
        if not isinstance(description, str):
            raise InputError(f"{prefix}.description", "must be a text string")
    except InputError as error:
        error.file = file
        raise
    return _material(name, values, dict(sources), description)


def load_library(path: Path | str | None = None) -> dict[str, Material]:
    """Read a material library; keys are the table names in lower case."""
    path = Path(path) if path is not None else library_path()
    try:
        with open(path, "rb") as handle:
            data = tomllib.load(handle)
    except OSError as error:
        raise InputError("material.name", f"cannot read the material library: {error.strerror}",
                         file=str(path)) from None
    except tomllib.TOMLDecodeError as error:
        raise InputError("material.name", f"the material library is not valid TOML: {error}",
                         file=str(path)) from None
    library = {}
    for name, table in data.items():
        key = name.lower()
        if key in library:
            raise InputError(name, "appears twice (names are not case-sensitive)", file=str(path))
        library[key] = _library_entry(name, table, str(path))
    return library


def material_from_job(table, key: str = "material") -> Material:
    """The job's [material] table as a Material.

    ``name`` picks a library record (case-insensitive); values given beside it
    override the record's. Without ``name``, E, nu and density are required and
    the six Kienzle constants are optional (all or none).
    """
    if not isinstance(table, dict):
        raise InputError(key, "must be a table: give name = \"...\" or E, nu, density")
    check_keys(table, JOB_KEYS, key)
    values = _parse_numbers(table, key)
    description = table.get("description")
    if description is not None and not isinstance(description, str):
        raise InputError(f"{key}.description", "must be a text string")
    inline_sources = {k: INLINE_SOURCE for k in values}

    if "name" in table:
        name = table["name"]
        if not isinstance(name, str):
            raise InputError(f"{key}.name", f"must be a text string, got {name!r}")
        library = load_library()
        base = library.get(name.strip().lower())
        if base is None:
            raise InputError(
                f"{key}.name",
                f"unknown material {name!r}; the library has: {', '.join(sorted(library))} "
                "(or leave out name and give E, nu, density and the Kienzle constants inline)",
            )
        merged = replace(
            base,
            sources={**base.sources, **inline_sources},
            description=description if description is not None else base.description,
            **{_FIELD_OF_KEY[k]: v for k, v in values.items()},
        )
        # a record without Kienzle constants completed only in part inline
        _check_kienzle_complete(
            {k: v for k in KIENZLE_KEYS if (v := getattr(merged, k)) is not None}, key
        )
        return merged

    for required in ("E", "nu", "density"):
        if required not in values:
            raise InputError(
                f"{key}.{required}",
                "missing: give a library name (name = \"...\") or E, nu and density inline",
            )
    _check_kienzle_complete(values, key)
    return _material("custom", values, inline_sources, description or "")


def require_cutting_constants(material: Material, key: str = "material") -> Material:
    """The material itself if it has all Kienzle constants, else InputError."""
    if not material.has_cutting_constants:
        raise InputError(
            f"{key}.kc11",
            f"material {material.name!r} has no Kienzle constants, which the cutting forces "
            f"need: give {', '.join(KIENZLE_KEYS)} or a library name",
        )
    return material


__all__ = [
    "KIENZLE_KEYS",
    "Material",
    "library_path",
    "load_library",
    "material_from_job",
    "require_cutting_constants",
]
