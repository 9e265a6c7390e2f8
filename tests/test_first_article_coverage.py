"""The coverage study of issue 12 (slow): 50 seeded synthetic first articles of the shipped housing per scale.

Each trial "measures" the housing predicted with its Kienzle constants scaled inline (x 0.7, x 1.3; all tools
alike) at the README example's places (OD and bore at six heights, the wall under the rim, the rim's height),
adds gauge noise of the stated uncertainty (outside micrometer 2 um, bore gauge 3 um, tube micrometer and
height gauge 3 um, scale 0.01 g), and fits. The issue asks that each factor's stated 95 % interval holds the
truth in at least 90 % of the trials. The figures are printed (run with -s to see them):

    python -m pytest -m slow tests/test_first_article_coverage.py -s
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from synthetic_parts import material_block, measure, scaled_material, with_noise  # noqa: E402

from deflect.decisions.first_article import explain  # noqa: E402
from deflect.job.measured import measured_from_data  # noqa: E402
from deflect.job.reader import read_job  # noqa: E402
from deflect.machining.simulate import kept_workers, simulate  # noqa: E402
from deflect.machining.targets import process_from_job  # noqa: E402

HOUSING = Path(__file__).resolve().parents[1] / "data" / "examples" / "housing.toml"
TRIALS = 50
COVERAGE_SHARE = 0.9
HEIGHTS = (8.0, 16.0, 24.0, 32.0, 40.0, 44.0)
PLACES = {"diameters": [("od", z, 0.002) for z in HEIGHTS] + [("id", z, 0.003) for z in HEIGHTS],
          "walls": [(44.0, 0.003)], "faces": [(24.4, 45.0, 0.003)]}


@pytest.mark.slow
@pytest.mark.parametrize("scale", [0.7, 1.3])
def test_factor_inside_its_95_percent_interval_in_90_percent_of_50_trials(scale, tmp_path):
    text = HOUSING.read_text().replace('[material]\nname = "al-6061-t6"\n',
                                       material_block(scaled_material("al-6061-t6", scale)))
    truth_path = tmp_path / "truth.toml"
    truth_path.write_text(text)
    truth_job, job = read_job(truth_path), read_job(HOUSING)
    memo: dict = {}
    covered, values, widths = {}, {}, {}
    with kept_workers():
        clean = measure(simulate(truth_job, process_from_job(truth_job), memo=memo, with_ranges=False), **PLACES)
        process = process_from_job(job)
        rng = np.random.default_rng(int(scale * 1000))
        for _ in range(TRIALS):
            result = explain(job, process, measured_from_data(with_noise(clean, rng), "synthetic", job), memo=memo)
            for e in result.estimates:
                if e.unknown.kind != "force":
                    continue
                name = e.unknown.name
                covered[name] = covered.get(name, 0) + (e.identified and e.low <= scale <= e.high)
                values.setdefault(name, []).append(e.value)
                widths.setdefault(name, []).append(0.5 * (e.high - e.low))
    for name in covered:
        print(f"x{scale}: {name}: truth inside the 95 % interval in {covered[name]} of {TRIALS} trials; "
              f"mean {np.mean(values[name]):.3f}, standard deviation {np.std(values[name]):.3f}, "
              f"mean half-width {np.mean(widths[name]):.3f}")
    assert covered and all(count >= COVERAGE_SHARE * TRIALS for count in covered.values()), covered
