"""An option that chatters does not hold: the ranked plans of `deflect tune` checked for chatter.

Takes the job and a `tune.TuneResult`; gives the same result with every plan (the one as programmed and each
option) checked for regenerative chatter of its finishing passes where each meets the most compliant wall and
where its chip is widest (`machining.chatter.prediction_warnings`, with the job's [dynamics]). How a predicted
chatter counts depends on what the damping rests on, to which chatter predictions are most sensitive:
* [dynamics] gives it (the job's own ratio, or a tap test's modes): the chatter is among the limits the plan
  breaks, so it no longer counts as holding, and the options are ranked again as the search ranks them (those
  that meet everything by cycle time, then the rest);
* the damping is the recalled default: the chatter is said beside the option (its `notes`), which keeps its
  rank; a tap test in [dynamics] turns the note into a limit.

The in-process parts of most options are the same (a feed, a tool or a speed does not change where a pass
cuts), so the modal data of a station is computed once and shared by every option that meets it.
"""

from __future__ import annotations

from dataclasses import replace

from deflect.decisions.tune import Outcome, TuneResult, job_with
from deflect.job.dynamics import dynamics_from_job
from deflect.machining.chatter import prediction_warnings
from deflect.machining.targets import process_from_job


def marked_for_chatter(job, result: TuneResult) -> TuneResult:
    dynamics = dynamics_from_job(job.tables)
    counts = not dynamics.damping_from_memory or bool(dynamics.measured)
    memo: dict = {}

    def marked(outcome: Outcome) -> Outcome:
        changed = job_with(job, outcome.changes)
        found = prediction_warnings(changed, process_from_job(changed), outcome.prediction, dynamics, memo)
        if not found:
            return outcome
        if counts:
            return replace(outcome, broken=outcome.broken + found)
        return replace(outcome, notes=outcome.notes + tuple(f"{text} (with the recalled damping, a tap test in "
                                                            "[dynamics] makes it a limit)" for text in found))

    # the ranking of `tune.searched`
    options = sorted((marked(o) for o in result.options), key=lambda o: (not o.meets, len(o.broken), o.cycle_time_s))
    return replace(result, current=marked(result.current), options=options)
