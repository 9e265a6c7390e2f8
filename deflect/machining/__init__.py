"""Machining: the part pass by pass, with the wall giving way under the tool, and what that leaves.

    inprocess.py  stock - passes -> the in-process part, target paths, material met, deviation from nominal
    targets.py    each pass's target checked against the finished part -> the checked `Process` of a job
    simulate.py   per pass and station: chip, forces, compliance of the part as it is then, equilibrium
                  -> `results.Prediction`
    results.py    the prediction as plain data (read by every output)
    gain_split.py the mass gain split by surface and by the tools' shape, in lines that add up to it
    toolpath.py   the compensated finishing contour as points
    grip.py       the grip window: the least grip that holds the cuts, the most that keeps the tolerance
    insert_edge.py  every cut's depth against its insert's usable edge, a finishing cut's chip against its allowance
    chatter.py    the wall's modes as it is cut and the chatter stability of each pass, its windows of speed

May import: `deflect.errors`, `deflect.geometry`, `deflect.job`, `deflect.mechanics`.
"""
