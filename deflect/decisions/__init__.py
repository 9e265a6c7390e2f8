"""Decisions built on the prediction: does the part meet its drawing, and what to change so it does.

    conformance.py  prediction + tolerances -> each toleranced feature in or out, with its margin
    tune.py         ranked remedies (feed, spring cuts, allowance, tool, wear offset, compensation, order)
    design.py       the thinnest drawn wall that holds with the recommended finishing
    chatter_free.py the ranked remedies checked for chatter (a limit with a given damping, a note otherwise)
    rules.py        design rules: thinnest wall, internal corners against the nose, reach, the drawing
    first_article.py  a measured part: force factors, size errors and grip fitted, its mass gain by cause
    compare.py      two predictions side by side: the same part or two, and what differs

May import every room below: `deflect.errors`, `geometry`, `job`, `mechanics`, `machining`.
"""
