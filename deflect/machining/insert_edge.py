"""Cuts against the insert that takes them: every cut's depth against the usable share of the insert's cutting
edge, and a finishing cut's chip against what the allowance left before it implies.

Takes the checked `Process` (its tools carry the insert's size from the ISO 1832 or ANSI B212.4 code,
`deflect.job.tooling.InsertCode.edge_mm`) and the station tables of a prediction (`results.PassResult`); gives
the `EdgeProblem`s found, said in the trade's words. The rules are common practice, not a published model:

* a cut engages the edge over a / sin(kappa_r) for a depth a; roughing inserts are run at most at about two
  thirds of their cutting edge (a round insert at about a quarter of its diameter), beyond which the edge
  breaks out or the chip is not controlled;
* a finishing cut (a pass that leaves no allowance) is meant to take what the pass before it left: finishing
  inserts and chip breakers work to about 2 mm depth, or twice the allowance left before them where that is
  more. A finishing pass that meets more (a face nobody roughed, say) takes a roughing chip with a finishing
  tool and pushes the wall off by a roughing force.

A tool given by its nose radius alone (no insert code) has no known edge: only the finishing rule applies.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

ROUGHING_EDGE_SHARE = 2.0 / 3.0      # common practice: the most of its cutting edge a roughing insert engages
ROUND_INSERT_SHARE = 0.25            # common practice: a round insert, at most a quarter of its diameter
FINISH_DEPTH_MM = 2.0                # common practice: the depth a finishing chip breaker works to
FINISH_ALLOWANCE_FACTOR = 2.0        # ... or twice the allowance left for it, where that is more


@dataclass(frozen=True)
class EdgeProblem:
    """A cut deeper than its insert (or its finishing allowance) allows."""

    pass_name: str
    pass_key: str                    # "pass[2]", for messages
    cut: int                         # index of the cut within its pass (0 first)
    depth_mm: float                  # the deepest the cut takes [mm]
    limit_mm: float                  # what the rule allows [mm]
    rule: str                        # why that limit, in words

    def text(self) -> str:
        return (f"{self.pass_key} '{self.pass_name}', cut {self.cut + 1}: takes up to {self.depth_mm:.3g} mm, over "
                f"the {self.limit_mm:.3g} mm {self.rule}")


def usable_depth_mm(tool) -> float | None:
    """The most depth of cut the tool's insert takes [mm] (module docstring), None without an insert code."""
    insert = tool.insert
    if insert is None or insert.edge_mm is None:
        return None
    if insert.shape == "R":
        return ROUND_INSERT_SHARE * insert.edge_mm
    return ROUGHING_EDGE_SHARE * insert.edge_mm * math.sin(math.radians(tool.approach_deg))


def allowance_before_mm(process, index: int) -> float | None:
    """The largest allowance an earlier pass on the same side left over this pass's extent [mm]; None when no
    earlier pass on that side runs over it."""
    p = process.passes[index]
    low, high = sorted((p.start_mm, p.end_mm))
    left = [q.allowance_mm for q in process.passes[:index] if q.surface == p.surface
            and min(high, max(q.start_mm, q.end_mm)) > max(low, min(q.start_mm, q.end_mm))]
    return max(left) if left else None


def finishing_limit_mm(process, index: int) -> float:
    """The most a finishing cut of pass `index` should take [mm] (module docstring)."""
    before = allowance_before_mm(process, index)
    return FINISH_DEPTH_MM if before is None else max(FINISH_DEPTH_MM, FINISH_ALLOWANCE_FACTOR * before)


def edge_problems(process, passes) -> list[EdgeProblem]:
    """Every cut of the prediction's passes (`results.PassResult`, in the process's order) that is deeper than its
    insert takes, and every finishing cut deeper than its finishing allowance implies."""
    problems = []
    for index, (p, result) in enumerate(zip(process.passes, passes)):
        tool = process.tools[p.tool]
        usable = usable_depth_mm(tool)
        finishing = len(result.cuts) - 1 - p.spring if p.allowance_mm == 0.0 else None
        for cut in result.cuts:
            deepest = float(cut.depth_mm.max(initial=0.0))
            if usable is not None and deepest > usable:
                share = "a quarter of its diameter" if tool.insert.shape == "R" else "two thirds of its edge"
                problems.append(EdgeProblem(p.name, p.key, cut.cut, deepest, usable,
                                            f"{tool.name}'s insert {tool.insert.designation} takes ({share}, "
                                            f"{tool.insert.edge_mm:.3g} mm; common practice)"))
            elif cut.cut == finishing and deepest > finishing_limit_mm(process, index):
                before = allowance_before_mm(process, index)
                implied = ("no pass before it on this side" if before is None
                           else f"the pass before it leaves {before:g} mm")
                problems.append(EdgeProblem(p.name, p.key, cut.cut, deepest, finishing_limit_mm(process, index),
                                            f"a finishing cut is for ({implied}; common practice): it takes a "
                                            "roughing chip with a finishing tool"))
    return problems


def edge_warnings(problems: list[EdgeProblem]) -> list[str]:
    """The problems as warning lines, each with what to do."""
    return [f"{problem.text()}; take it in more cuts (give the pass depth = {split_depth_mm(problem):g}, as "
            "`deflect tune` does) or add a roughing pass" for problem in problems]


def split_depth_mm(problem: EdgeProblem) -> float:
    """A depth per cut within the limit, rounded down to 0.1 mm (at least 0.1 mm) [mm]."""
    return max(0.1, math.floor(problem.limit_mm * 10.0) / 10.0)
