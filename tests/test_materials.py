"""Unit tests of the material library and the job's [material] table."""

import re
import tomllib

import pytest

from deflect.errors import InputError
from deflect.job.materials import (
    KIENZLE_KEYS,
    NUMBER_KEYS,
    Material,
    library_path,
    load_library,
    material_from_job,
    require_cutting_constants,
)

SHIPPED = (
    "al-6061-t6", "al-7075-t6", "brass-cuzn39pb3", "steel-c45", "steel-42crmo4",
    "stainless-304", "ti-6al-4v", "pom-acetal",
)
INLINE = {"E": 68900.0, "nu": 0.33, "density": 2.70}
KIENZLE = {"kc11": 780.0, "mc": 0.25, "kf11": 300.0, "mf": 0.5, "kp11": 250.0, "mp": 0.5}


@pytest.fixture(scope="module")
def library():
    return load_library()


def test_library_file_is_in_the_repository_data_folder():
    assert library_path().name == "materials.toml"
    assert library_path().parent.name == "data"
    assert library_path().is_file()


def test_library_holds_the_shipped_materials_with_all_constants(library):
    assert set(SHIPPED) <= set(library)
    for name in SHIPPED:
        assert library[name].has_cutting_constants, name
        assert library[name].description


def test_every_library_number_has_a_source(library):
    # Read the raw file, so a number that the loader might drop would still be caught.
    with open(library_path(), "rb") as handle:
        raw = tomllib.load(handle)
    for name, table in raw.items():
        numbers = [k for k, v in table.items() if isinstance(v, (int, float))]
        assert set(numbers) <= set(NUMBER_KEYS), name
        for key in numbers:
            text = table["sources"].get(key, "")
            assert isinstance(text, str) and len(text.strip()) > 10, f"{name}.{key}"
        assert set(library[name.lower()].sources) >= set(numbers)


def test_second_hand_sources_name_the_book(library):
    """A value read second-hand cites the book it comes from (authors, title, edition, year) and says it was
    not checked there, never an unnamed intermediary."""
    for name in SHIPPED:
        for key, text in library[name].sources.items():
            assert "public script" not in text, f"{name}.{key}"
            if text.startswith("second-hand"):
                assert re.search(r"[A-Z][a-z]+.*, .*\b(19|20)[0-9]{2}\b", text) and "not checked" in text, \
                    f"{name}.{key}: {text}"


def test_kienzle_constants_stay_marked_as_from_memory(library):
    # every shipped Kienzle constant is a recalled value; nobody has read a printed table yet.
    for name in SHIPPED:
        for key in KIENZLE_KEYS:
            assert "from memory" in library[name].sources[key], f"{name}.{key}"


def test_library_values_lie_in_the_reference_bands(library):
    # Plausibility bands, recalled handbook ranges (Koenig & Klocke; Tschaetsch; ASM Handbook vol. 2; from memory:
    # bands only).
    steel = library["steel-c45"]
    assert 200000 <= steel.E_mpa <= 215000 and 7.8 <= steel.density_g_cm3 <= 7.9
    assert 650 <= library["al-6061-t6"].kc11 <= 830
    assert 2000 <= library["stainless-304"].kc11 <= 2600
    assert 1350 <= library["ti-6al-4v"].kc11 <= 1700
    assert library["pom-acetal"].E_mpa == 2500.0  # Engineering Plastics Handbook, Table 5.5
    assert library["pom-acetal"].density_g_cm3 == 1.41


def test_name_is_case_insensitive_and_inline_values_override(library):
    material = material_from_job({"name": "Steel-C45", "E": 205000.0, "kc11": 2000.0})
    assert material.name == "steel-c45"
    assert material.E_mpa == 205000.0
    assert material.kc11 == 2000.0
    assert material.mc == library["steel-c45"].mc
    assert material.sources["E"] == "given in the job file"
    assert material.sources["nu"] == library["steel-c45"].sources["nu"]


def test_inline_material_without_kienzle_constants_is_elastic_only():
    material = material_from_job(dict(INLINE))
    assert (material.E_mpa, material.nu, material.density_g_cm3) == (68900.0, 0.33, 2.70)
    assert material.kc11 is None and not material.has_cutting_constants
    with pytest.raises(InputError, match="kc11, mc, kf11, mf, kp11, mp or a library name") as error:
        require_cutting_constants(material)
    assert error.value.key == "material.kc11"


def test_inline_material_with_kienzle_constants():
    material = material_from_job({**INLINE, **KIENZLE})
    assert require_cutting_constants(material) is material
    assert material.kp11 == 250.0
    assert material.ref_rake_deg == 6.0 and material.force_spread == 0.15


def test_material_is_frozen_and_hashable():
    material = material_from_job({**INLINE, **KIENZLE})
    with pytest.raises(AttributeError):
        material.E_mpa = 1.0  # type: ignore[misc]
    assert isinstance(hash(material), int)
    assert isinstance(material, Material)


def test_unknown_name_lists_the_library():
    with pytest.raises(InputError, match="unknown material 'unobtainium'.*al-6061-t6") as error:
        material_from_job({"name": "unobtainium"})
    assert error.value.key == "material.name"


@pytest.mark.parametrize(
    "table, key, pattern",
    [
        ({**INLINE, "E": "68900"}, "material.E", "must be a number"),
        ({**INLINE, "nu": True}, "material.nu", "must be a number"),
        ({**INLINE, "E": 0.0}, "material.E", "must be > 0"),
        ({**INLINE, "E": -5.0}, "material.E", "must be > 0"),
        ({**INLINE, "nu": 0.5}, "material.nu", r"\(-1, 0.5\)"),
        ({**INLINE, "nu": -1.0}, "material.nu", r"\(-1, 0.5\)"),
        ({**INLINE, "density": 0.0}, "material.density", "must be > 0"),
        ({**INLINE, **KIENZLE, "kc11": 0.0}, "material.kc11", "must be > 0"),
        ({**INLINE, **KIENZLE, "mf": 1.0}, "material.mf", r"\[0, 1\)"),
        ({**INLINE, **KIENZLE, "mc": -0.1}, "material.mc", r"\[0, 1\)"),
        ({**INLINE, "Young": 1.0}, "material.Young", "allowed keys: name, description, E"),
        ({"nu": 0.3, "density": 7.85}, "material.E", "missing"),
        ({**INLINE, "kc11": 700.0, "mc": 0.2}, "material.kf11", "missing Kienzle constant"),
        ({"name": 3}, "material.name", "text string"),
    ],
)
def test_bad_material_values_name_their_key(table, key, pattern):
    with pytest.raises(InputError, match=pattern) as error:
        material_from_job(table)
    assert error.value.key == key


def test_the_key_prefix_is_passed_through():
    with pytest.raises(InputError) as error:
        material_from_job({**INLINE, "nu": 0.7}, key="part.material")
    assert error.value.key == "part.material.nu"


def test_material_table_must_be_a_table():
    with pytest.raises(InputError, match="must be a table"):
        material_from_job("steel-c45")


def _write(tmp_path, text):
    path = tmp_path / "materials.toml"
    path.write_text(text)
    return path


def test_library_entry_without_a_source_is_refused(tmp_path):
    path = _write(tmp_path, """
[my-alloy]
E = 70000.0
nu = 0.33
density = 2.7
[my-alloy.sources]
E = "data sheet of the bar stock"
nu = "from memory, to be confirmed"
""")
    with pytest.raises(InputError, match="say where the value comes from") as error:
        load_library(path)
    assert error.value.key == "my-alloy.sources.density"
    assert error.value.file == str(path)


def test_user_extended_library_loads(tmp_path):
    path = _write(tmp_path, """
[My-Alloy]
description = "an elastic-only entry"
E = 70000.0
nu = 0.33
density = 2.7
sources = { E = "sheet", nu = "sheet", density = "sheet" }
""")
    library = load_library(path)
    assert library["my-alloy"].E_mpa == 70000.0
    assert not library["my-alloy"].has_cutting_constants


def test_broken_library_file_gives_input_error(tmp_path):
    path = _write(tmp_path, "[a\nE = 1")
    with pytest.raises(InputError, match=re.escape("not valid TOML")):
        load_library(path)
    with pytest.raises(InputError, match="cannot read"):
        load_library(tmp_path / "missing.toml")
