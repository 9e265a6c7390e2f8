"""The interface page and the code cannot drift apart (issue 10.8: one name per quantity, a unit on every number).

Every command that prints JSON is run (section, compliance, predict (also calibrated), clamp, tune with --design,
chatter, explain, compare; report's JSON is theirs nested), with every CSV output (predict --csv, tune --contour);
every JSON key and CSV column is listed, and:
* each key or column that holds a number ends in a unit suffix from INTERFACE.md's "Unit suffixes" table, or
  sits in an object whose key does (`force_N.cutting`), or is in its "Keys without a unit suffix" table;
* each key and column is named somewhere on the page.
Both lists are read from the page itself, so a key added to the code without a unit, or without a line on the
page, fails here.
"""

from __future__ import annotations

import csv
import json
import re
import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from test_simulate import run_cli  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
PAGE = (ROOT / "INTERFACE.md").read_text(encoding="utf-8")
EXAMPLES = ROOT / "data" / "examples"


def section_of(page: str, heading: str) -> str:
    """The text of one '## heading' section of the page."""
    start = page.index(f"## {heading}\n")
    end = page.find("\n## ", start + 1)
    return page[start:] if end < 0 else page[start:end]


def first_column_names(text: str) -> set[str]:
    """The backticked names in the first column of a Markdown table."""
    names = set()
    for line in text.splitlines():
        if line.startswith("| ") and not line.startswith("| ---"):
            names |= set(re.findall(r"`([^`]+)`", line.split("|")[1]))
    return names


SUFFIXES = first_column_names(section_of(PAGE, "Unit suffixes"))
UNITLESS = first_column_names(section_of(PAGE, "Keys without a unit suffix"))
PROSE = re.sub(r"```.*?```", "", PAGE, flags=re.S)            # the job file's example block left out
SPANS = re.findall(r"`([^`]+)`", PROSE)
NAMED = {token for span in SPANS for token in re.findall(r"[A-Za-z_][A-Za-z0-9_]*", span)} | \
        {span.strip('"') for span in SPANS}


def has_unit(key: str | None) -> bool:
    return key is not None and any(key.endswith(suffix) for suffix in SUFFIXES)


def is_number(value) -> bool:
    if isinstance(value, bool):
        return False
    if isinstance(value, (int, float)):
        return True
    return isinstance(value, list) and bool(value) and all(is_number(v) for v in value)


def keys_of(data, parent: str | None = None, found: dict | None = None) -> dict:
    """{key: [(value, the key of the object it is in)]} of every key of a JSON value; list entries are not
    in their list's object (a record's `z` in `roundness_um[]` is in mm, not um)."""
    found = {} if found is None else found
    if isinstance(data, dict):
        for key, value in data.items():
            found.setdefault(key, []).append((value, parent))
            keys_of(value, key, found)
    elif isinstance(data, list):
        for value in data:
            keys_of(value, None, found)
    return found


@pytest.fixture(scope="module")
def outputs(tmp_path_factory) -> dict:
    """Every command's JSON and every CSV file, on the shipped examples (about 30 s)."""
    folder = tmp_path_factory.mktemp("interface")
    housing, ring = str(EXAMPLES / "housing.toml"), str(EXAMPLES / "ring.toml")
    calibration = str(folder / "calibration.toml")
    runs = {
        "explain": ["explain", housing, str(EXAMPLES / "housing-first-article.toml"), "--save", calibration],
        "predict calibrated": ["predict", housing, "--quiet", "--calibration", calibration],
        "section": ["section", housing],
        "compliance": ["compliance", housing, "--at", "25,40", "--at", "24.4,20"],
        "predict housing": ["predict", housing, "--quiet", "--csv", str(folder / "housing-csv")],
        "predict ring": ["predict", ring, "--quiet", "--csv", str(folder / "ring-csv")],
        "clamp": ["clamp", ring],
        "tune": ["tune", ring, "--quiet", "--design", "--contour", str(folder / "contour")],
        "chatter": ["chatter", housing],
        "compare": ["compare", ring, ring, "--quiet"],
    }
    data = {}
    for name, args in runs.items():
        code, out, err = run_cli([*args, "--json"])
        assert code == 0, (name, err)
        data[name] = json.loads(out)
    tables = {path.relative_to(folder).as_posix(): list(csv.reader(path.open(newline="", encoding="utf-8")))
              for path in sorted(folder.rglob("*.csv"))}
    return {"json": data, "csv": tables}


def test_the_page_lists_its_suffixes_and_unitless_keys():
    assert {"_mm", "_N", "_um", "_mm_per_rev"} <= SUFFIXES
    assert {"r", "z", "nr", "nz", "lobes"} <= UNITLESS
    assert not any(has_unit(key) for key in UNITLESS)


def test_every_commands_csv_files_are_there(outputs):
    names = {Path(name).name for name in outputs["csv"]}
    assert {"stations.csv", "deviation.csv", "passes.csv", "machined_section.csv"} <= names
    assert any(name.endswith("-contour.csv") for name in names)


def test_every_number_in_the_json_carries_its_unit(outputs):
    bare = set()
    for command, data in outputs["json"].items():
        for key, seen in keys_of(data).items():
            for value, parent in seen:
                if is_number(value) and not (has_unit(key) or has_unit(parent) or key in UNITLESS):
                    bare.add(f"{command}: {parent}.{key}" if parent else f"{command}: {key}")
    assert not bare, sorted(bare)


def test_every_number_in_the_csv_files_carries_its_unit(outputs):
    bare = set()
    for name, rows in outputs["csv"].items():
        header, first = rows[0], rows[1]
        for column, cell in zip(header, first):
            try:
                float(cell)
            except ValueError:
                continue
            if not (has_unit(column) or column in UNITLESS):
                bare.add(f"{name}: {column}")
    assert not bare, sorted(bare)


def test_every_key_and_column_is_on_the_page(outputs):
    missing = set()
    for command, data in outputs["json"].items():
        missing |= {f"{command}: {key}" for key in keys_of(data) if key not in NAMED}
    for name, rows in outputs["csv"].items():
        missing |= {f"{name}: {column}" for column in rows[0] if column not in NAMED}
    assert not missing, sorted(missing)


def test_the_page_cites_no_path_outside_the_project():
    """Every file the page links to is in the repository; no path climbs out of it."""
    assert "../" not in PAGE
    for target in re.findall(r"\]\(([^)#\s]+)", PAGE):
        if "://" not in target:
            assert (ROOT / target).exists(), target


# ---------------------------------------------------------------------------------------------------
# the one names on the screens, and the earlier spellings of renamed options

# (a pass the user named "finish bore" keeps its name: only the program's own labels are looked at)
EARLIER_NAMES = ("chuck end", "out of round", "inertia about spin axis", "worst dev", "spring pass", "Finished bore",
                 "OD against bore", "bore at z", "drawn dia", "stock no pass removed  ")


def test_the_screens_use_the_one_names():
    from test_report_predict import hand_made_prediction

    from deflect.decisions.tune import Change
    from deflect.output.predict_report import predict_report
    from deflect.output.tune_report import change_words

    report = predict_report(hand_made_prediction())
    for name in ("held end", "Finished ID", "axial inertia", "most material left", "push-off", "unmachined"):
        assert name in report, name
    words = change_words(Change("finish OD", "spring", 0, 1), {"finish OD": "od"}, "mm")
    screens = [report, words]
    for args in (["tune", str(EXAMPLES / "ring.toml"), "--quiet"], ["clamp", str(EXAMPLES / "ring.toml")]):
        code, out, err = run_cli(args)
        assert code == 0, err
        screens.append(out)
    assert "most off the drawing" in screens[2] and "ID at z" in screens[3]
    for text in screens:
        for earlier in EARLIER_NAMES:
            assert earlier not in text, (earlier, text[:200])
        assert not re.search(r"\bbore \d", text), text[:200]           # a feature is "ID 74", not "bore 74"
        assert not re.search(r"^\s*faces\b", text, flags=re.M), text[:200]   # a table's row label is "face"


def test_the_earlier_option_spellings_still_work(tmp_path):
    housing = str(EXAMPLES / "housing.toml")
    for option in ("--harmonic-tol", "--tol"):            # read, and checked under the name it was given by
        code, _, err = run_cli(["compliance", housing, option, "0.7", "--at", "24.4,30"])
        assert code == 2 and f"{option}: must lie between 0 and 0.5, got 0.7" in err, err
    code, out, err = run_cli(["predict", str(EXAMPLES / "ring.toml"), "--quiet", "--plot", str(tmp_path / "figs")])
    assert code == 0, err
    # (.deflect-outputs is deflect's list of the files it wrote there)
    assert sorted(p.name for p in (tmp_path / "figs").iterdir()) == [".deflect-outputs", "deviation.png", "passes.png",
                                                                     "section.png"]
    code, out, _ = run_cli(["predict", "--help"])
    assert "--figures" in out and "--plot" not in out          # the earlier spelling is read, not offered
