"""Output: results -> terminal tables, JSON objects, CSV files, figures and programs. Formatting only.

    tables.py          table layout, the section and compliance tables
    predict_report.py  the terminal report of a prediction
    predict_json.py    the JSON object of `deflect predict --json`
    clamp_report.py    the terminal report and JSON of `deflect clamp`
    tune_report.py     the terminal report and JSON of `deflect tune`
    chatter_report.py  the terminal report and JSON of `deflect chatter`
    chatter_figures.py the lobes of each pass and the mode shapes (PNG)
    explain_report.py  the terminal report and JSON of `deflect explain`, and a calibrated report's own line
    csv_files.py       CSV tables of a prediction
    figures.py         PNG figures (matplotlib, imported only when a figure is drawn)
    programs.py        the compensated contour as CSV points and ISO 6983 moves
    dxf_files.py       sections, predictions and compensated contours as DXF drawings
    rules_report.py    the terminal report and JSON of `deflect rules`, and its summary atop other reports
    job_files.py       a job file (TOML) written from a drawing (`deflect import`)

No physics is computed here. May import every room below; only `deflect.cli` imports this room.
"""
