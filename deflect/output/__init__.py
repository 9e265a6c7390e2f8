"""Output: results -> terminal tables, JSON objects, CSV files, figures and programs. Formatting only.

    tables.py          tables and paragraphs of a report as data, their terminal layout
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
    compare_report.py  the terminal report and JSON of `deflect compare`
    html_report.py     the self-contained HTML report (template in templates/report.html)
    html_chapters.py   what each command puts into the HTML report
    remedy_job.py      a job file with a tune option's changes written in, comments and layout kept

No physics is computed here. May import every room below; only `deflect.cli` imports this room.
"""
