"""300 corrupted DXF files: every one is read to a section or refused with an `InputError` (one `error:` line,
exit code 2 on the command line), never a traceback.

The corruptions come from a seeded generator (so a failure names its seed and can be replayed): lines
deleted, doubled, swapped or replaced by garbage (text where a number is due, NaN, 1e400, huge integers),
group codes changed, the file cut short, random bytes inserted. Most of them land in the ENTITIES section,
where the reader does its own work; the rest in the header and tables, which ezdxf (or its recovery) reads.
"""

from __future__ import annotations

import random

import ezdxf
import pytest

from deflect.cli import main
from deflect.errors import InputError
from deflect.job.drawing import drawing_section, read_drawing

FILES = 300
SEED = 1303
ENTITY_SHARE = 0.75
GARBAGE = ["abc", "nan", "-nan", "inf", "1e400", "-1e400", "99999999999999999999", "", " ", "0x1F", "1,5", "-0",
           "LINE", "SECTION", "EOF", "\x00", "ü", "1e-320", "2147483648", "-2147483649"]


def base_text(tmp_path) -> str:
    doc = ezdxf.new("R2010", setup=True)
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    msp.add_lwpolyline([(0.0, 19.0, 0.0), (0.0, 20.0, 0.0), (40.0, 20.0, -1.0), (40.0, 19.0, 0.0)], format="xyb",
                       close=True, dxfattribs={"layer": "PART"})
    msp.add_line((-5.0, 0.0), (45.0, 0.0), dxfattribs={"linetype": "CENTER"})
    msp.add_arc((60.0, 10.0), 3.0, 0.0, 180.0)
    msp.add_line((57.0, 10.0), (63.0, 10.0))
    msp.add_circle((20.0, 30.0), 2.0)
    msp.add_open_spline([(70.0, 5.0), (75.0, 8.0), (80.0, 5.0)], degree=2)
    block = doc.blocks.new("MARK")
    block.add_line((0.0, 0.0), (1.0, 1.0))
    msp.add_blockref("MARK", (90.0, 5.0))
    doc.saveas(tmp_path / "base.dxf")
    return (tmp_path / "base.dxf").read_text()


def corrupted(lines: list[str], rng: random.Random, entities: tuple[int, int]) -> bytes:
    lines = list(lines)
    for _ in range(rng.randint(1, 3)):
        if rng.random() < ENTITY_SHARE:
            k = rng.randint(*entities)
        else:
            k = rng.randrange(len(lines))
        k = min(k, len(lines) - 1)
        op = rng.randrange(7)
        if op == 0:
            del lines[k]
        elif op == 1:
            lines.insert(k, lines[k])
        elif op == 2:
            j = rng.randrange(len(lines))
            lines[k], lines[j] = lines[j], lines[k]
        elif op == 3:
            lines[k] = rng.choice(GARBAGE)
        elif op == 4:
            lines[k] = str(rng.choice([0, 5, 8, 10, 11, 20, 21, 40, 42, 50, 51, 70, 90, 210, 230, 999, -1]))
        elif op == 5:
            lines = lines[:k]
        else:
            lines.insert(k, "".join(chr(rng.randrange(1, 256)) for _ in range(rng.randint(1, 12))))
        if not lines:
            break
    return "\n".join(lines).encode("utf-8", "surrogateescape")


def test_corrupted_drawings_never_raise_anything_but_input_errors(tmp_path):
    lines = base_text(tmp_path).splitlines()
    start = lines.index("ENTITIES")
    end = max(i for i, line in enumerate(lines) if line == "ENDSEC")
    rng = random.Random(SEED)
    outcomes = {"read": 0, "refused": 0}
    for n in range(FILES):
        path = tmp_path / f"fuzz{n}.dxf"
        path.write_bytes(corrupted(lines, rng, (start, end)))
        try:
            drawing_section(read_drawing(path, layer="PART" if n % 2 else None))
            outcomes["read"] += 1
        except InputError as exc:
            assert exc.message, f"file {n}: an error without a message"
            outcomes["refused"] += 1
        except Exception as exc:  # noqa: BLE001 - the test is that nothing else escapes
            pytest.fail(f"corrupted file {n} (seed {SEED}) raised {type(exc).__name__}: {exc}")
    # both outcomes occur: the corruptions are neither all harmless nor all fatal
    assert outcomes["read"] > 0 and outcomes["refused"] > 0, outcomes


@pytest.mark.parametrize("n", range(5))
def test_corrupted_drawing_on_the_command_line(tmp_path, capsys, n):
    lines = base_text(tmp_path).splitlines()
    rng = random.Random(SEED + 1 + n)
    path = tmp_path / "fuzz.dxf"
    path.write_bytes(corrupted(lines, rng, (lines.index("ENTITIES"), len(lines) - 1)))
    try:
        main(["import", str(path)])
        code = 0
    except SystemExit as exc:
        code = exc.code
    err = capsys.readouterr().err
    assert code in (0, 2) and "Traceback" not in err
    if code == 2:
        assert err.strip().splitlines()[-1].startswith("error: ")
