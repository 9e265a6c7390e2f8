"""The `deflect` command: parses options, calls the pipeline, prints or writes the results.

No physics here. Bad input ends with one `error:` line on stderr and exit code 2; warnings go to stderr
with `warning:`; with `--json` stdout holds exactly one JSON object.
"""

from __future__ import annotations

import functools
import inspect
import io
import json
import math
import os
import sys

# The solver's matrices are small (6x6 blocks, a few hundred unknowns): BLAS threads cost more than they give
# there (measured: 0.97 s single-threaded against 1.42 s with two threads for one cut's key stations), and
# the simulation already spreads its shell models over the cores. A user's own setting wins.
for _variable in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_variable, "1")

import click  # noqa: E402  (after the thread settings, before numpy is first imported)

from deflect.errors import InputError, ModelError

EXIT_BAD_INPUT = 2
HTML_HELP = ("Also write the report as one self-contained HTML file: key figures, every table and figure, the "
             "inputs and the cautions; it prints to clean A4 or Letter pages.")
EXIT_CANNOT_WRITE = 1     # stdout could not be written: not the input's fault


class StdoutGone(Exception):
    """Standard output cannot be written (a full disk, a closed pipe)."""


def out(text: str) -> None:
    """Print a line to stdout, flushed at once so that a stdout that cannot be written is found here (and
    reported as one line) rather than when Python exits."""
    try:
        click.echo(text)
        sys.stdout.flush()
    except OSError as exc:
        raise StdoutGone(exc.strerror or str(exc)) from None


def names_the_job(command):
    """A command whose input errors name its input file (its first argument, a job or a drawing):
    `error: FILE: KEY: ...` also for a bad option."""
    first = next(iter(inspect.signature(command).parameters))

    @functools.wraps(command)
    def run(*args, **kwargs):
        try:
            return command(*args, **kwargs)
        except (InputError, ModelError) as exc:
            exc.file = exc.file or (kwargs[first] if first in kwargs else args[0])
            raise
    return run


def emit_json(payload: dict) -> None:
    out(json.dumps(payload, indent=2))


def warn(lines: list[str], path: str) -> None:
    for line in lines:
        click.echo(f"warning: {path}: {line}", err=True)


def parse_pair(text: str, option: str, names: str) -> tuple[float, float]:
    """'R,Z' -> (R, Z); an InputError naming the option otherwise."""
    parts = text.split(",")
    try:
        if len(parts) != 2:
            raise ValueError
        first, second = float(parts[0]), float(parts[1])
        if not (math.isfinite(first) and math.isfinite(second)):
            raise ValueError
    except ValueError:
        raise InputError(option, f"expects {names} as two numbers with a comma, got {text!r}") from None
    return first, second


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="deflect")
def cli():
    """Predict how thin turned walls push away from the tool, and what that leaves on the part.

    Lengths in mm, forces in N, moduli in MPa, density g/cm3, mass g. Predictions are estimates to be
    confirmed on first articles; the machine's and chuck maker's limits and local safety rules come first.
    """


@cli.command()
@click.argument("job_file")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of the table.")
@names_the_job
def section(job_file, as_json):
    """Mass properties and thinnest wall of the finished part in JOB_FILE."""
    from deflect.geometry.section import mass_properties, min_wall
    from deflect.job.reader import read_job
    from deflect.output.tables import section_table, units_note

    job = read_job(job_file)
    warn(job.warnings, job_file)
    props = mass_properties(job.section, job.material.density_g_cm3)
    wall_mm = min_wall(job.section)
    payload = {
        "area_mm2": props.area_mm2,
        "volume_mm3": props.volume_mm3,
        "mass_g": props.mass_g,
        "centroid_r_mm": props.centroid_r_mm,
        "centroid_z_mm": props.centroid_z_mm,
        "inertia_axial_kg_mm2": props.inertia_axial_kg_mm2,
        "min_wall_mm": wall_mm,
        "material": job.material.name,
        "density_g_cm3": job.material.density_g_cm3,
    }
    if as_json:
        emit_json(payload)
    else:
        out(units_note(job.units) + section_table(job.title, payload))


DEFAULT_PATCH_MM = (2.0, 2.0)   # the contact patch of `compliance`: along the boundary, around [mm]
MATRIX_AXES = ["normal (into the material)", "circumferential", "along the boundary"]


def point_record(point) -> dict:
    return {"r": point.r_mm, "z": point.z_mm, "nr": point.nr, "nz": point.nz,
            "compliance_mm_per_N": point.normal_mm_per_n, "r_mm": point.r_mm, "z_mm": point.z_mm,
            "along_boundary_mm": point.along_mm,
            "matrix_mm_per_N": point.matrix_mm_per_n.tolist(),
            "stiffness_N_per_mm": 1.0 / point.normal_mm_per_n if point.normal_mm_per_n > 0 else None,
            "highest_harmonic": point.harmonics}


@cli.command()
@click.argument("job_file")
@click.option("--at", "at", multiple=True, metavar="R,Z",
              help="A point on (or near) the section boundary, in the job's units; repeat for several.")
@click.option("--patch", default=None, metavar="A,W",
              help="Contact patch: A along the section boundary, W around the circumference, in the job's units "
                   "[default: 2 mm by 2 mm, in an inch job too].")
@click.option("--harmonic-tol", "tolerance", default=1e-3, show_default=True, type=float,
              help="Where the Fourier-harmonic sum stops: the estimated error of the whole sum (its fitted tail "
                   "included), relative to the sum (not a drawing tolerance).")
@click.option("--tol", "old_tolerance", type=float, default=None, hidden=True)   # the earlier spelling
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of the table.")
@click.option("--plot", "plot_file", default=None,
              help="Without --at: draw the compliance map along the boundary into this figure file (.png, .pdf, "
                   ".svg ...).")
@names_the_job
def compliance(job_file, at, patch, tolerance, old_tolerance, as_json, plot_file):
    """Compliance of the held part at boundary points: how far the wall gives per newton.

    A unit force presses into the material along the boundary normal, spread over the patch. Without
    --at, the whole boundary is mapped.
    """
    from deflect.job.reader import MM_PER_INCH, read_job
    from deflect.mechanics.compliance import Patch, WallModel
    from deflect.output.files import Outputs
    from deflect.output.tables import compliance_table

    if plot_file:
        from deflect.output.figures import check_figure_name
        check_figure_name(plot_file, "--plot")
    job = read_job(job_file)
    warn(job.warnings, job_file)
    factor = MM_PER_INCH if job.units == "inch" else 1.0
    # the patch is the tool's contact: 2 mm by 2 mm whatever the job's units (2 inches would be 25 times it)
    length_mm, width_mm = (DEFAULT_PATCH_MM if patch is None else
                           tuple(v * factor for v in parse_pair(patch, "--patch", "A,W")))
    option = "--harmonic-tol" if old_tolerance is None else "--tol"
    tolerance = tolerance if old_tolerance is None else old_tolerance
    if not (tolerance > 0 and tolerance < 0.5):
        raise InputError(option, f"must lie between 0 and 0.5, got {tolerance:g}")
    points = [parse_pair(text, "--at", "R,Z") for text in at]
    with Outputs() as outputs:
        figure = outputs.file(plot_file, "--plot") if plot_file and not points else None
        model = WallModel(job.section, job.held, job.material.E_mpa, job.material.nu,
                          Patch(length_mm, width_mm), tolerance)
        if points:
            results = model.at_points([(r * factor, z * factor) for r, z in points])
        else:
            results = model.map()
        payload = {"points": [point_record(p) for p in results],
                   "matrix_axes": MATRIX_AXES,
                   "patch_mm": {"length": length_mm, "width": width_mm},
                   "harmonic_tolerance": tolerance}
        if figure:
            from deflect.output.figures import compliance_map_plot
            compliance_map_plot(job.section, results, job.title, figure)
        outputs.commit()
    if as_json:
        emit_json(payload)
    else:
        out(compliance_table(job.title, results, mapped=not points, units=job.units))
        if figure:
            out(f"compliance map drawn in {plot_file}")


CALIBRATION_HELP = ("A first article's calibration (as `deflect explain --save` writes it) to use instead of the "
                    "job's [job] calibration, if any.")


def read_calibrated_job(job_file: str, calibration_file: str | None, calibration=None):
    """The job, with the calibration file given on the command line (it wins over a [job] calibration key), or
    with `calibration`, one fitted in this run (`deflect report --measured`; it wins over both)."""
    from deflect.job.calibration import read_calibration, with_calibration
    from deflect.job.reader import read_job

    if calibration_file is None and calibration is None:
        return read_job(job_file)
    job = read_job(job_file, calibrated=False)
    try:
        if calibration is not None:
            return with_calibration(job, calibration, key="--measured")
        return with_calibration(job, read_calibration(calibration_file), key="--calibration")
    except InputError as exc:
        exc.file = exc.file or job_file
        raise


def state_calibration(job, payload: dict | None = None) -> None:
    """A calibrated report states itself: a line before the report, or the `calibration` key of the JSON."""
    if job.calibration is None:
        return
    from deflect.output.explain_report import calibration_note, calibration_record

    if payload is None:
        out(calibration_note(job.calibration))
    else:
        payload["calibration"] = calibration_record(job.calibration)


def run_prediction(job_file: str, show_progress: bool, calibration_file: str | None = None, calibration=None,
                   memo: dict | None = None):
    """Read, check and simulate a machining job (shared by `predict` and `demo`): the prediction, its
    verdict (toleranced features, empty without [tolerance]; the grip check; their warnings), the design rules'
    findings and the job (with the calibration of `--calibration` or [job] calibration, if any; `calibration`,
    one fitted in this run, wins over both)."""
    from dataclasses import replace

    from deflect.decisions.conformance import verdict
    from deflect.decisions.rules import check_rules
    from deflect.job.dynamics import dynamics_from_job
    from deflect.job.fits import tolerance_from_table
    from deflect.job.materials import require_cutting_constants
    from deflect.machining.chatter import prediction_warnings
    from deflect.machining.simulate import simulate
    from deflect.machining.targets import process_from_job

    job = read_calibrated_job(job_file, calibration_file, calibration)
    try:
        require_cutting_constants(job.material)   # before any work: the passes need the force constants
        process = process_from_job(job)
        tolerances = tolerance_from_table(job.tables["tolerance"]) if "tolerance" in job.tables else None
        dynamics = dynamics_from_job(job.tables)
        warn(job.warnings + process.warnings + list(dynamics.warnings), job_file)

        def progress(pass_name, cut):
            if show_progress:
                click.echo(f"  machined: {pass_name}, cut {cut + 1}", err=True)

        memo = {} if memo is None else memo   # the cut paths, laid out once for the three of them
        pred = simulate(job, process, progress=progress, memo=memo)
        # the finishing passes' chatter, checked where each meets the most compliant wall and its widest chip
        pred = replace(pred, warnings=pred.warnings + prediction_warnings(job, process, pred, dynamics, memo))
        return pred, verdict(job, process, pred, tolerances, memo), check_rules(job, process), job
    except (InputError, ModelError) as exc:
        exc.file = exc.file or job_file
        raise


def write_outputs(pred, csv_dir, plot_dir, csv_key: str = "--csv", plot_key: str = "--figures") -> None:
    """The CSV files and figures of a prediction, into (temporary) folders; a file that cannot be written is an
    InputError naming the option that gave its folder."""
    if csv_dir:
        from deflect.output.csv_files import write_csv
        write_csv(pred, csv_dir, csv_key)
    if plot_dir:
        from deflect.output.figures import predict_plots
        try:
            predict_plots(pred, plot_dir, plot_key)
        except OSError as exc:
            raise InputError(plot_key, f"cannot write the figures ({exc.strerror or exc})") from None


@cli.command()
@click.argument("job_file")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of the report.")
@click.option("--csv", "csv_dir", default=None,
              help="Write stations, deviation, passes and the machined section as CSV files into this folder.")
@click.option("--figures", "plot_dir", default=None,
              help="Draw the section, the material left and the pass forces as PNG files into this folder.")
@click.option("--plot", "old_plot_dir", default=None, hidden=True)  # the earlier name
@click.option("--dxf", "dxf_file", default=None,
              help="Write the drawn and the predicted section (and the material left, magnified) as a DXF drawing.")
@click.option("--quiet", is_flag=True, help="No progress lines on stderr.")
@click.option("--calibration", "calibration_file", type=click.Path(dir_okay=False), default=None, help=CALIBRATION_HELP)
@click.option("--html", "html_file", default=None, help=HTML_HELP)
@names_the_job
def predict(job_file, as_json, csv_dir, plot_dir, old_plot_dir, dxf_file, quiet, calibration_file, html_file):
    """Machine the part in JOB_FILE pass by pass, with the wall giving way under the tool.

    Reports the push-off at every station, the material left on each finished surface, the mass gain over
    nominal with its range for the spread of the force constants, cycle time and peak power.
    """
    from deflect.output.csv_files import FILES as CSV_FILES
    from deflect.output.figures import PREDICT_FIGURES
    from deflect.output.files import Outputs
    from deflect.output.predict_json import prediction_payload
    from deflect.output.predict_report import predict_report
    from deflect.output.rules_report import rules_payload, rules_summary
    from deflect.output.tables import units_note

    with Outputs() as outputs:
        # the folders are checked before the prediction: a name taken by a file of the user's is refused at once
        figures_option = "--figures" if plot_dir else "--plot"
        plot_dir = plot_dir or old_plot_dir
        csv_temp = outputs.folder(csv_dir, "--csv", CSV_FILES) if csv_dir else None
        plot_temp = outputs.folder(plot_dir, figures_option, PREDICT_FIGURES) if plot_dir else None
        dxf_temp = outputs.file(dxf_file, "--dxf") if dxf_file else None
        html_temp = outputs.file(html_file, "--html") if html_file else None
        pred, judged, rules, job = run_prediction(job_file, show_progress=not (quiet or as_json),
                                                  calibration_file=calibration_file)
        write_outputs(pred, csv_temp, plot_temp, plot_key=figures_option)
        if dxf_temp:
            from deflect.output.dxf_files import prediction_dxf
            try:
                prediction_dxf(pred, job.section, dxf_temp)
            except OSError as exc:
                raise InputError("--dxf", f"cannot write {dxf_file} ({exc.strerror or exc})") from None
        if html_temp:
            from deflect.output.html_chapters import predict_chapter
            write_html(html_temp, pred.title, "machining prediction", [job_file],
                       [predict_chapter(pred, judged.checks, judged.warnings, rules)],
                       units_line=units_note(job.units))
        written = outputs.commit()
    if as_json:
        payload = {**prediction_payload(pred, judged.checks, judged.warnings), "rules": rules_payload(rules)}
        state_calibration(job, payload)
        emit_json(payload)
    else:
        state_calibration(job)
        out(units_note(job.units) + predict_report(pred, judged.checks, judged.warnings, rules_summary(rules)))
        for path in written:
            out(f"wrote {path}")


@cli.command()
@click.option("--out", "out_dir", default="deflect-demo", show_default=True,
              help="Folder for the demo's report (text and HTML), JSON, CSV files and figures.")
def demo(out_dir):
    """Predict the shipped example: a thin-walled aluminium instrument housing (data/examples/housing.toml)."""
    from pathlib import Path

    from deflect.job.materials import library_path
    from deflect.output.csv_files import FILES as CSV_FILES
    from deflect.output.figures import PREDICT_FIGURES
    from deflect.output.files import Outputs
    from deflect.output.predict_json import prediction_payload
    from deflect.output.predict_report import predict_report
    from deflect.output.rules_report import rules_summary

    job_file = str(library_path().parent / "examples" / "housing.toml")
    names = ("report.txt", "report.html", "prediction.json", *(f"csv/{n}" for n in CSV_FILES),
             *(f"figures/{n}" for n in PREDICT_FIGURES))
    with Outputs() as outputs:
        folder = outputs.folder(out_dir, "--out", names)
        click.echo(f"deflect demo: predicting {job_file}", err=True)
        pred, judged, rules, _ = run_prediction(job_file, show_progress=True)
        report = predict_report(pred, judged.checks, judged.warnings, rules_summary(rules))
        try:
            (folder / "report.txt").write_text(report + "\n", encoding="utf-8")
            (folder / "prediction.json").write_text(
                json.dumps(prediction_payload(pred, judged.checks, judged.warnings), indent=2), encoding="utf-8")
        except OSError as exc:
            raise InputError("--out", f"cannot write into {out_dir}: {exc.strerror or exc}") from None
        write_outputs(pred, folder / "csv", folder / "figures", "--out", "--out")
        from deflect.output.html_chapters import predict_chapter
        write_html(folder / "report.html", pred.title, "machining prediction", [job_file],
                   [predict_chapter(pred, judged.checks, judged.warnings, rules)], key="--out")
        written = outputs.commit()
    out(report)
    out(f"\nreport, JSON, CSV and figures written to {Path(out_dir).resolve()}:")
    for path in written:
        out(f"  {path}")


@cli.command()
@click.argument("job_file")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of the report.")
@click.option("--plot", "plot_file", default=None,
              help="Draw the released shape of one finished section around the circumference into this figure "
                   "file (.png, .pdf, .svg ...).")
@click.option("--plot-at", "plot_at", default=None, metavar="SURFACE,Z",
              help="The section --plot draws: od or id and z in the job's units (default: the least round one).")
@click.option("--calibration", "calibration_file", type=click.Path(dir_okay=False), default=None, help=CALIBRATION_HELP)
@click.option("--html", "html_file", default=None, help=HTML_HELP)
@names_the_job
def clamp(job_file, as_json, plot_file, plot_at, calibration_file, html_file):
    """Work holding: the grip window and the shape the grip leaves on surfaces finished in the chuck.

    From [holding]: the least grip that holds the heaviest cut (friction, safety factor, the jaws' loss of grip
    at speed), the most that keeps the finished OD and bore within their diameter tolerance once the jaws let
    go, the roundness and lobes after release, and what widens the window, each computed. Estimates: the chuck
    maker's limits and the machine's interlocks come first.
    """
    from deflect.job.reader import MM_PER_INCH
    from deflect.machining.grip import clamp_study, nearest_point, released_profile
    from deflect.output.clamp_report import clamp_payload, clamp_report
    from deflect.output.files import Outputs
    from deflect.output.tables import units_note

    if plot_file:
        from deflect.output.figures import check_figure_name
        check_figure_name(plot_file, "--plot")
    job = read_calibrated_job(job_file, calibration_file)
    warn(job.warnings, job_file)
    factor = MM_PER_INCH if job.units == "inch" else 1.0
    with Outputs() as outputs:
        figure = outputs.file(plot_file, "--plot") if plot_file else None
        html_temp = outputs.file(html_file, "--html") if html_file else None
        study = clamp_study(job)
        profile = None
        if plot_file:
            index = study.given.worst
            if plot_at:
                surface, _, z_text = plot_at.partition(",")
                surface = surface.strip().lower()
                try:
                    z = float(z_text)
                except ValueError:
                    z = math.nan
                if surface not in ("od", "id") or not math.isfinite(z):
                    raise InputError("--plot-at", f"expects SURFACE,Z with SURFACE od or id, e.g. id,4.0; "
                                                  f"got {plot_at!r}")
                index = nearest_point(study.given, surface, z * factor)
            if index is None:
                raise InputError("--plot", "no OD or ID is finished in this setup outside the grip: nothing to draw")
            profile = released_profile(study.given, index)
            from deflect.output.figures import released_shape_plot
            released_shape_plot(profile, job.title, figure)
        if html_temp:
            write_html(html_temp, study.title, "work holding", [job_file], [clamp_chapter_of(study)],
                       units_line=units_note(job.units))
        outputs.commit()
    if as_json:
        payload = clamp_payload(study)
        state_calibration(job, payload)
        emit_json(payload)
    else:
        state_calibration(job)
        out(units_note(job.units) + clamp_report(study))
        if profile is not None:
            out(f"released shape drawn in {plot_file}")
        if html_file:
            out(f"wrote {html_file}")


@cli.command()
@click.argument("job_file")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of the table.")
@click.option("--contour", "contour_dir", default=None,
              help="Write the compensated finishing contour of each pass (CSV points, ISO 6983 moves, DXF) here.")
@click.option("--design", is_flag=True,
              help="Also find, for each wall, the thinnest drawn wall that holds with the recommended finishing "
                   "(a few more predictions per wall).")
@click.option("--quiet", is_flag=True, help="No progress bar on stderr.")
@click.option("--calibration", "calibration_file", type=click.Path(dir_okay=False), default=None, help=CALIBRATION_HELP)
@click.option("--html", "html_file", default=None, help=HTML_HELP)
@click.option("--apply", "apply_number", type=int, default=None, metavar="N",
              help="Write option N's changes into a copy of the job (--out), comments and layout kept.")
@click.option("--out", "out_file", default=None, metavar="NEW.toml",
              help="The job file --apply writes (a new file; the job itself is never changed).")
@names_the_job
def tune(job_file, as_json, contour_dir, design, quiet, calibration_file, html_file, apply_number, out_file):
    """Remedies that hold the drawing in JOB_FILE's [tolerance], ranked by cycle time.

    Tries feeds, spring cuts, the finishing allowance, the job's other tools, a wear offset, a compensated
    finishing contour and the order of the finishing passes; the first line is the cheapest that meets
    everything. Each option's figures come from a full prediction of the job with its changes written in.
    """
    from deflect.decisions.rules import check_rules
    from deflect.job.materials import require_cutting_constants
    from deflect.machining.targets import process_from_job
    from deflect.output.files import Outputs
    from deflect.output.rules_report import rules_payload, rules_summary
    from deflect.output.tune_report import tune_payload, tune_report, tune_units_note

    check_apply(job_file, apply_number, out_file)
    job = read_calibrated_job(job_file, calibration_file)
    warn(job.warnings, job_file)
    with Outputs() as outputs:
        contour_temp = outputs.folder(contour_dir, "--contour") if contour_dir else None
        html_temp = outputs.file(html_file, "--html") if html_file else None
        out_temp = outputs.file(out_file, "--out") if out_file else None
        require_cutting_constants(job.material)
        process = process_from_job(job)
        surface_of = {p.name: p.surface for p in process.passes}
        result = searched_with_progress(job, hidden=quiet or as_json)
        walls = revise_walls_of(job_file, job, result, quiet or as_json) if design else None
        if contour_temp:
            write_contours(job, result, contour_temp)
        rules = check_rules(job, process)
        if out_temp:
            apply_option(job_file, job, result, apply_number, out_file, out_temp, calibration_file)
        if html_temp:
            from deflect.output.html_chapters import tune_chapter
            write_html(html_temp, job.title, "remedies", [job_file],
                       [tune_chapter(result, surface_of, job.units, walls, rules)],
                       units_line=tune_units_note(job.units))
        written = outputs.commit()
    if as_json:
        payload = {**tune_payload(result, surface_of, job.units, walls), "rules": rules_payload(rules)}
        if out_file:
            payload["applied"] = {"rank": apply_number, "file": str(out_file)}
        state_calibration(job, payload)
        emit_json(payload)
    else:
        state_calibration(job)
        out(tune_report(result, surface_of, job.units, job.title, walls, rules_summary(rules)))
        for path in written:
            out(f"wrote {path}")


@cli.command()
@click.argument("job_file")
@click.option("--pass", "pass_name", default=None, metavar="NAME",
              help="Check this pass only (any pass); by default every finishing pass (allowance 0).")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of the report.")
@click.option("--figures", "figures_dir", default=None,
              help="Draw the lobes of each pass with its operating points and the first mode shapes here (PNG).")
@click.option("--calibration", "calibration_file", type=click.Path(dir_okay=False), default=None, help=CALIBRATION_HELP)
@click.option("--html", "html_file", default=None, help=HTML_HELP)
@names_the_job
def chatter(job_file, pass_name, as_json, figures_dir, calibration_file, html_file):
    """Chatter of thin walls: the part's modes, the stability of each finishing pass, the speeds that cut clean.

    The wall's modes as held and as cut (the stock still ahead of the tool), the regenerative stability of each
    pass at key stations with its worst station, the largest stable depth at its speed and the spindle-speed
    windows where its depth is stable. Damping from [dynamics] (or a recalled default); a tap test's modes
    replace the model's. A first article's calibration (--calibration or [job] calibration) scales each pass's
    forces, and so the depth it can take. Estimates: confirm with a tap test and a trial cut; the machine's
    limits come first.
    """
    from deflect.job.dynamics import dynamics_from_job
    from deflect.job.materials import require_cutting_constants
    from deflect.machining.chatter import chatter_study
    from deflect.machining.targets import process_from_job
    from deflect.output.chatter_report import chatter_payload, chatter_report
    from deflect.output.files import Outputs
    from deflect.output.tables import units_note

    job = read_calibrated_job(job_file, calibration_file)
    with Outputs() as outputs:
        figures_temp = outputs.folder(figures_dir, "--figures") if figures_dir else None
        html_temp = outputs.file(html_file, "--html") if html_file else None
        dynamics = dynamics_from_job(job.tables)
        require_cutting_constants(job.material)
        process = process_from_job(job)
        warn(job.warnings + process.warnings, job_file)
        study = chatter_study(job, process, dynamics, pass_name,
                              with_lobes=figures_dir is not None or html_file is not None)
        if figures_temp:
            from deflect.output.chatter_figures import chatter_figures
            try:
                chatter_figures(study, figures_temp)
            except OSError as exc:
                raise InputError("--figures", f"cannot write into {figures_dir}: {exc.strerror or exc}") from None
        if html_temp:
            from deflect.output.html_chapters import chatter_chapter
            write_html(html_temp, study.title, "chatter check", [job_file], [chatter_chapter(study)],
                       units_line=units_note(job.units))
        written = outputs.commit()
    if as_json:
        payload = chatter_payload(study)
        state_calibration(job, payload)
        emit_json(payload)
    else:
        state_calibration(job)
        out(units_note(job.units) + chatter_report(study))
        for path in written:
            out(f"wrote {path}")


def searched_with_progress(job, hidden: bool, memo: dict | None = None):
    """The remedy search (`deflect.decisions.tune`) with a progress bar on stderr, its options marked for
    chatter (`deflect.decisions.chatter_free`: a limit with a given damping, else a note)."""
    from deflect.decisions.chatter_free import marked_for_chatter
    from deflect.decisions.tune import tune as search_remedies

    with click.progressbar(length=SEARCH_STEPS_SHOWN, label="searching remedies", file=sys.stderr,
                           show_eta=False, hidden=hidden) as bar:
        result = search_remedies(job, progress=short_of_the_end(bar, SEARCH_STEPS_SHOWN), memo=memo)
        result = marked_for_chatter(job, result)
        bar.update(SEARCH_STEPS_SHOWN - bar.pos)
    return result


def short_of_the_end(bar, length: int):
    """A step of the progress bar per call, stopping one short of its end: a search's length is known only
    when it is over, and then the caller fills the bar."""
    def progress():
        if bar.pos < length - 1:
            bar.update(1)
    return progress


SEARCH_STEPS_SHOWN = 60    # the progress bar's length: about the plans a two-surface job takes
WALL_STEPS_SHOWN = 6       # and per wall of the design revision


def revise_walls_of(job_file: str, job, result, quiet: bool):
    """The design revision with the first option's finishing (`deflect.decisions.design`)."""
    import tomllib
    from pathlib import Path

    from deflect.decisions.design import revise_walls
    from deflect.job.fits import tolerance_from_table

    data = tomllib.loads(Path(job_file).read_text(encoding="utf-8"))
    if job.calibration is not None:      # the redrawn jobs carry the same calibration (--calibration or the key)
        data.setdefault("job", {})["calibration"] = str(Path(job.calibration.path).resolve())
    if job.drawing is not None:   # the walls are redrawn on the outline read from the drawing
        from deflect.job.drawing import outline_in
        data["part"] = {"outline": outline_in(job.drawing, job.units)}
    recommended = result.options[0].changes if result.options else ()
    with click.progressbar(length=WALL_STEPS_SHOWN, label="trying wall thicknesses", file=sys.stderr,
                           show_eta=False, hidden=quiet) as bar:
        return revise_walls(data, job_file, job, recommended, tolerance_from_table(job.tables["tolerance"]),
                            progress=short_of_the_end(bar, WALL_STEPS_SHOWN))


def write_contours(job, result, folder: str) -> list:
    """CSV, ISO 6983 and DXF files of every compensated pass of the best option that has one."""
    from pathlib import Path

    from deflect.decisions.tune import job_with
    from deflect.machining.targets import process_from_job
    from deflect.machining.toolpath import compensated_contour
    from deflect.output.dxf_files import contour_dxf
    from deflect.output.programs import contour_csv, iso6983_block

    option = next((o for o in result.options if any(c.key == "compensate" for c in o.changes)), None)
    if option is None:
        raise InputError("--contour", "no option compensates a contour, so there is none to write")
    changed = process_from_job(job_with(job, option.changes))
    into = Path(folder)
    written = []
    try:
        for p in changed.passes:
            if not any(c != p.size_error_mm for _, c in p.compensation):   # nothing programmed (a calibrated
                continue                                                   # size error alone is not a program)
            rows = compensated_contour(job, changed, p)
            stem = "".join(ch if ch.isalnum() else "-" for ch in p.name).strip("-")
            for suffix, text in ((".csv", contour_csv(rows)), (".nc", iso6983_block(rows, p))):
                path = into / f"{stem}-contour{suffix}"
                path.write_text(text, encoding="utf-8")
                written.append(path)
            written.append(contour_dxf(rows, job.section, p.name, into / f"{stem}-contour.dxf"))
    except OSError as exc:
        raise InputError("--contour", f"cannot write into {folder}: {exc.strerror or exc}") from None
    return written


@cli.command()
@click.argument("job_file")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of the report.")
@click.option("--html", "html_file", default=None, help=HTML_HELP)
@names_the_job
def rules(job_file, as_json, html_file):
    """Design rules the part in JOB_FILE must meet: thinnest wall against the material's least, internal
    corners sharper than the nose that finishes them (with the material the nose leaves), stretches the
    finishing insert cannot reach, and what the drawing itself holds (splines, tiny segments, near-tangent
    corners, a size that suggests the wrong unit)."""
    from deflect.decisions.rules import check_rules
    from deflect.job.reader import read_job
    from deflect.machining.targets import process_from_job
    from deflect.output.files import Outputs
    from deflect.output.rules_report import rules_payload, rules_report
    from deflect.output.tables import units_note

    job = read_job(job_file)
    warn(job.warnings, job_file)
    with Outputs() as outputs:
        html_temp = outputs.file(html_file, "--html") if html_file else None
        process = process_from_job(job) if "pass" in job.tables else None
        result = check_rules(job, process)
        if html_temp:
            from deflect.output.html_chapters import rules_chapter
            write_html(html_temp, job.title, "design rules", [job_file], [rules_chapter(result)],
                       units_line=units_note(job.units))
        written = outputs.commit()
    if as_json:
        emit_json(rules_payload(result))
    else:
        out(units_note(job.units) + rules_report(result, job.title))
        for path in written:
            out(f"wrote {path}")


@cli.command(name="import")
@click.argument("drawing_file")
@click.option("--units", type=click.Choice(["mm", "inch"]), default=None,
              help="The drawing's unit, whatever its header says (default: its $INSUNITS; unitless: mm).")
@click.option("--layer", default=None, help="Read only this layer (default: every layer).")
@click.option("--axis", default=None, metavar="y=VALUE|x=VALUE",
              help="The spin axis in drawing coordinates (default: a centre line, else y = 0).")
@click.option("--material", default=None, help="A library material to write into [material].")
@click.option("--out", "out_file", type=click.Path(dir_okay=False), default=None,
              help="Write the job to this file (it must not exist yet) instead of printing it.")
@names_the_job
def import_drawing(drawing_file, units, layer, axis, material, out_file):
    """Write a job whose [part] outline reproduces the DXF half-section in DRAWING_FILE (arcs as arcs).

    Drawing x is read as z (along the spin axis) and y as r; a full profile mirrored about the axis gives
    its half above it. Notes on what was joined, replaced or ignored go to stderr and into the job's header.
    """
    from pathlib import Path

    from deflect.job.drawing import drawing_notes, drawing_section, read_drawing
    from deflect.job.materials import material_from_job
    from deflect.output.job_files import job_text

    drawing = read_drawing(drawing_file, units=units, layer=layer, axis=axis)
    section = drawing_section(drawing, key="entities")
    if material is not None:
        try:
            material_from_job({"name": material})
        except InputError as exc:
            raise InputError("--material", exc.message) from None
    notes = drawing_notes(drawing, section)
    warn(notes, drawing_file)
    text = job_text(drawing, notes, material)
    if out_file is None:
        out(text.rstrip("\n"))
        return
    target = Path(out_file)
    if target.exists():
        raise InputError("--out", f"{out_file} exists already; choose another name (a job file is never overwritten)")
    try:
        temporary = target.with_name(target.name + ".part")
        temporary.write_text(text, encoding="utf-8")
        temporary.replace(target)
    except OSError as exc:
        raise InputError("--out", f"cannot write {out_file} ({exc.strerror or exc})") from None
    click.echo(f"wrote {out_file}", err=True)


@cli.command()
@click.argument("job_file")
@click.argument("measured_file")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of the report.")
@click.option("--save", "save_file", default=None,
              help="Write the calibration (factors and size errors with their intervals, where they came from) "
                   "to this TOML file, for `predict`, `tune` and `clamp --calibration FILE` or [job] calibration.")
@click.option("--figures", "figure_dir", default=None,
              help="Draw the profiles and the mass split as a PNG file into this folder.")
@click.option("--per-pass", is_flag=True, help="One force factor per finishing pass instead of per finishing tool.")
@click.option("--search", is_flag=True,
              help="For the next part, run the whole remedy search of `deflect tune` with the calibrated constants "
                   "(its slowest step: tens of seconds) instead of the wear offsets alone.")
@click.option("--quiet", is_flag=True, help="No progress bar on stderr.")
@click.option("--html", "html_file", default=None, help=HTML_HELP)
@names_the_job
def explain(job_file, measured_file, as_json, save_file, figure_dir, per_pass, search, quiet, html_file):
    """A measured first article (MEASURED_FILE) of JOB_FILE: what caused its extra material, the force constants
    calibrated on it, and what to change for the next part.

    Fits a force factor per finishing tool (on its three Kienzle constants together), a size error per finished
    surface and, with [holding] and roundness measured, a grip factor, by weighted least squares with 95 %
    intervals; splits the measured mass gain by cause; gives the wear offsets that centre the next part (with
    --search, the whole remedy search of `deflect tune`) with the calibrated constants.
    """
    from datetime import date

    from deflect.decisions.first_article import explain as explain_first_article
    from deflect.decisions.first_article import next_part
    from deflect.job.calibration import calibration_toml
    from deflect.job.materials import require_cutting_constants
    from deflect.job.measured import read_measured
    from deflect.job.reader import read_job
    from deflect.machining.simulate import kept_workers
    from deflect.machining.targets import process_from_job
    from deflect.output.explain_report import explain_payload, explain_report, explain_units_note
    from deflect.output.figures import first_article_plot
    from deflect.output.files import Outputs

    job = read_job(job_file, calibrated=False)
    warn(job.warnings, job_file)
    measured = read_measured(measured_file, job)
    with Outputs() as outputs:
        # the outputs are checked before the fit: a name taken by a file of the user's is refused at once
        figures_temp = outputs.folder(figure_dir, "--figures", ("first-article.png",)) if figure_dir else None
        save_temp = outputs.file(save_file, "--save") if save_file else None
        html_temp = outputs.file(html_file, "--html") if html_file else None
        require_cutting_constants(job.material)
        process = process_from_job(job)
        warn(process.warnings, job_file)
        memo: dict = {}
        with kept_workers():
            result = explain_first_article(job, process, measured, "pass" if per_pass else "tool", memo,
                                           date=date.today().isoformat())
            with click.progressbar(length=SEARCH_STEPS_SHOWN, label="next part: searching remedies", file=sys.stderr,
                                   show_eta=False, hidden=quiet or as_json or not search) as bar:
                remedies = next_part(job, result.calibration, memo, search, short_of_the_end(bar, SEARCH_STEPS_SHOWN))
                bar.update(SEARCH_STEPS_SHOWN - bar.pos)
        if figures_temp:
            first_article_plot(result, figures_temp / "first-article.png")
        if save_temp:
            try:
                save_temp.write_text(calibration_toml(result.calibration), encoding="utf-8")
            except OSError as exc:
                raise InputError("--save", f"cannot write {save_file} ({exc.strerror or exc})") from None
        surface_of = {p.name: p.surface for p in process.passes}
        if html_temp:
            from deflect.output.html_chapters import explain_chapter
            write_html(html_temp, result.title, "first article explained", [job_file, measured_file],
                       [explain_chapter(result, remedies, surface_of, job.units, search)],
                       units_line=explain_units_note(job.units))
        written = outputs.commit()
    if as_json:
        emit_json(explain_payload(result, remedies, surface_of, job.units, search,
                                  str(save_file) if save_file else None))
    else:
        out(explain_report(result, remedies, surface_of, job.units, search))
        for path in written:
            out(f"wrote {path}")


# ---------------------------------------------------------------------------------------------------
# the HTML report, a remedy written into a job

def write_html(path, title: str, what: str, job_files: list, chapters: list, notes=(), remarks=(),
               key: str = "--html", units_line: str = "") -> None:
    """The chapters as one HTML report (`deflect.output.html_report`), written to `path`: the staging place
    `Outputs.file` gave for the option `key`, moved into place with the command's other files. `units_line`: the
    line an inch job's terminal report opens with, said first at the top of the page as well ("" for a mm job)."""
    from pathlib import Path

    from deflect import __version__
    from deflect.output.html_report import JobSource, Report, render, report_date

    jobs = tuple(JobSource(Path(f).name, Path(f).read_text(encoding="utf-8", errors="replace")) for f in job_files)
    notes = ((units_line.strip(),) if units_line else ()) + tuple(notes)
    report = Report(title, what, jobs, tuple(chapters), __version__, report_date(), notes, tuple(remarks))
    try:
        Path(path).write_text(render(report), encoding="utf-8")
    except OSError as exc:
        raise InputError(key, f"cannot write the report ({exc.strerror or exc})") from None


def clamp_chapter_of(study):
    """The work-holding chapter, with the released shape of the least round section finished in the chuck."""
    from deflect.machining.grip import released_profile
    from deflect.output.html_chapters import clamp_chapter

    index = study.given.worst
    return clamp_chapter(study, released_profile(study.given, index) if index is not None else None)


def explained(job_file: str, measured_file: str, memo: dict):
    """The first article's chapter, JSON and result (with its calibration) for `deflect report --measured`
    (`deflect explain` without --search: the next part's wear offsets with the calibrated constants); memo: the
    report's, whose prediction and remedies then reuse the key stations the fit computed."""
    from datetime import date

    from deflect.decisions.first_article import explain as explain_first_article
    from deflect.decisions.first_article import next_part
    from deflect.job.materials import require_cutting_constants
    from deflect.job.measured import read_measured
    from deflect.job.reader import read_job
    from deflect.machining.simulate import kept_workers
    from deflect.machining.targets import process_from_job
    from deflect.output.explain_report import explain_payload
    from deflect.output.html_chapters import explain_chapter

    job = read_job(job_file, calibrated=False)
    measured = read_measured(measured_file, job)
    require_cutting_constants(job.material)
    process = process_from_job(job)
    with kept_workers():
        result = explain_first_article(job, process, measured, "tool", memo, date=date.today().isoformat())
        remedies = next_part(job, result.calibration, memo, False, None)
    surface_of = {p.name: p.surface for p in process.passes}
    return (explain_chapter(result, remedies, surface_of, job.units, False),
            explain_payload(result, remedies, surface_of, job.units, False, None), result)


def chatter_of(job):
    """The chatter study of every finishing pass, with its lobes (`deflect.machining.chatter`)."""
    from deflect.job.dynamics import dynamics_from_job
    from deflect.machining.chatter import chatter_study
    from deflect.machining.targets import process_from_job

    return chatter_study(job, process_from_job(job), dynamics_from_job(job.tables), None, with_lobes=True)


def check_apply(job_file: str, number, out_file) -> None:
    """Before the search: --apply and --out come together, N counts from 1, the new job is not the job itself
    (whether it can be written, `Outputs.file` checks)."""
    from pathlib import Path

    if number is None and out_file is None:
        return
    if number is None:
        raise InputError("--out", "writes the job with an option's changes: give the option with --apply N")
    if out_file is None:
        raise InputError("--apply", "give the file to write the changed job to with --out NEW.toml")
    if number < 1:
        raise InputError("--apply", f"options are numbered from 1 as the table ranks them, got {number}")
    if Path(out_file).resolve() == Path(job_file).resolve():
        raise InputError("--out", "is the job file itself; write the changed job to a new file")


def apply_option(job_file: str, job, result, number: int, out_file, path, calibration_file=None) -> None:
    """Write option `number`'s changes into a copy of the job file (`deflect.output.remedy_job`), with the
    calibration given on the command line, if any, named in it: to `path`, the staging place of `out_file`."""
    from pathlib import Path

    from deflect import __version__
    from deflect.output.html_report import report_date
    from deflect.output.remedy_job import job_text_with, written_header
    from deflect.output.tune_report import change_record

    if number > len(result.options):
        found = f"options 1 to {len(result.options)}" if result.options else "no option"
        raise InputError("--apply", f"there is no option {number}: the search found {found}")
    option = result.options[number - 1]
    if not option.meets:
        warn([f"option {number} does not hold the drawing ({'; '.join(option.broken) or 'see the table'})"],
             job_file)
    label = f"deflect tune option {number}"
    calibration = Path(calibration_file) if calibration_file else None
    text = job_text_with(Path(job_file).read_text(encoding="utf-8"),
                         [change_record(c, job.units) for c in option.changes], label, job.units,
                         Path(job_file).parent, Path(out_file).parent, calibration)
    try:
        Path(path).write_text(written_header(label, Path(job_file).name, __version__, report_date()) + text,
                              encoding="utf-8")
    except OSError as exc:
        raise InputError("--out", f"cannot write {out_file} ({exc.strerror or exc})") from None


@cli.command()
@click.argument("job_file")
@click.option("--html", "html_file", required=True,
              help="The HTML file to write: one self-contained page that prints to clean A4 or Letter pages.")
@click.option("--json", "as_json", is_flag=True,
              help="Also print one JSON object: each part's JSON under its command's name (predict, rules, clamp, "
                   "chatter, tune).")
@click.option("--measured", "measured_file", default=None,
              help="A measured first article of the job (as `deflect explain` reads it): its explanation is added.")
@click.option("--quiet", is_flag=True, help="No progress on stderr.")
@names_the_job
def report(job_file, html_file, measured_file, as_json, quiet):
    """One report of JOB_FILE to hand over, as a single HTML file.

    The prediction and the design rules; with [holding], the work holding; with [dynamics], the chatter check;
    with [tolerance], the remedies ranked by cycle time; with --measured, the first article explained, and every
    other part calibrated on it (as `deflect explain --save` writes the calibration and `--calibration` reads it;
    the top of the report says so, with the uncalibrated headline beside it). Key figures and cautions first, then
    the inputs, every table and figure of those commands, and the job file as given; the tool's version and the
    date. No scripts and nothing fetched: it reads and prints anywhere.
    """
    from deflect.output.files import Outputs

    with Outputs() as outputs:
        html_temp = outputs.file(html_file, "--html")       # checked before any work
        chapters, payload, notes, remarks = report_parts(job_file, measured_file, quiet or as_json)
        sources = [job_file, measured_file] if measured_file else [job_file]
        write_html(html_temp, payload["title"], "report", sources, chapters, notes=notes, remarks=remarks)
        outputs.commit()
    if as_json:
        emit_json(payload)
    else:
        out(f"wrote {html_file}: " + ", ".join(chapter.title.lower() for chapter in chapters))


def report_parts(job_file: str, measured_file: str | None, quiet: bool):
    """The chapters, the JSON, the notes (at the top) and the remarks (at the foot of the first page) of
    `deflect report` (its docstring). With a first article, its fitted calibration is the job's for every part."""
    from pathlib import Path

    from deflect.job.materials import require_cutting_constants
    from deflect.machining.grip import clamp_study
    from deflect.machining.targets import process_from_job
    from deflect.output.chatter_report import chatter_payload
    from deflect.output.clamp_report import clamp_payload
    from deflect.output.explain_report import calibrated_report_note, calibration_note
    from deflect.output.html_chapters import chatter_chapter, predict_chapter, rules_chapter, tune_chapter
    from deflect.output.predict_json import prediction_payload
    from deflect.output.rules_report import rules_payload
    from deflect.output.tune_report import tune_payload, tune_units_note

    memo: dict = {}      # key stations and cut paths, computed once for the first article, prediction and remedies
    first_article = explained(job_file, measured_file, memo) if measured_file else None
    fitted = first_article[2] if first_article else None
    pred, judged, rules, job = run_prediction(job_file, show_progress=not quiet,
                                              calibration=fitted.calibration if fitted else None, memo=memo)
    chapters = [predict_chapter(pred, judged.checks, judged.warnings, rules), rules_chapter(rules, False)]
    payload = {"title": pred.title, "predict": prediction_payload(pred, judged.checks, judged.warnings),
               "rules": rules_payload(rules), "explain": None, "clamp": None, "chatter": None, "tune": None}
    # an inch job's report says where its lengths are mm and where inches (the remedies' changes), as `tune` does
    units_line = tune_units_note(job.units).strip()
    notes, remarks = ([units_line] if units_line else []), []
    if fitted is not None:
        notes.append(calibrated_report_note(fitted.calibration, Path(measured_file).name, fitted.uncalibrated))
    elif job.calibration is not None:
        remarks.append(calibration_note(job.calibration))
    if first_article:
        chapters.append(first_article[0])
        payload["explain"] = first_article[1]
    if "holding" in job.tables:
        study = clamp_study(job)
        chapters.append(clamp_chapter_of(study))
        payload["clamp"] = clamp_payload(study)
    else:
        remarks.append("No [holding] in the job: the part is held as its [[held]] boxes say, and no "
                       "work-holding study is made.")
    if "dynamics" in job.tables:
        study = chatter_of(job)
        chapters.append(chatter_chapter(study))
        payload["chatter"] = chatter_payload(study)
    else:
        remarks.append("No [dynamics] in the job: the chatter check (which needs the wall's damping) is left out; "
                       "deflect chatter JOB --html FILE runs it with a recalled damping.")
    if "tolerance" in job.tables:
        require_cutting_constants(job.material)
        surface_of = {p.name: p.surface for p in process_from_job(job).passes}
        result = searched_with_progress(job, hidden=quiet, memo=memo)
        chapters.append(tune_chapter(result, surface_of, job.units))
        payload["tune"] = tune_payload(result, surface_of, job.units)
    else:
        remarks.append("No [tolerance] in the job: there is no drawing to hold, so no remedies are searched.")
    if job.calibration is not None:        # each calibrated part says so, as its own command's JSON does
        for part in ("predict", "clamp", "chatter", "tune"):
            if payload[part] is not None:
                state_calibration(job, payload[part])
    return chapters, payload, notes, remarks


@cli.command()
@click.argument("job_a")
@click.argument("job_b")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of the table.")
@click.option("--html", "html_file", default=None, help=HTML_HELP)
@click.option("--calibration", "calibration_file", default=None,
              help="Read JOB_B with this first article's calibration (as `deflect explain --save` writes it): a job "
                   "against the same job calibrated.")
@click.option("--quiet", is_flag=True, help="No progress lines on stderr.")
def compare(job_a, job_b, as_json, html_file, calibration_file, quiet):
    """Two jobs side by side: JOB_A and JOB_B predicted, and the change from A to B.

    Mass and gain, the most material left, cycle time, the OD and ID diameters and the wall at the held end,
    middle and free end, each toleranced feature in or out, and the two material-left profiles overlaid (with
    --html). Typically a job and the same job with a remedy written in (`deflect tune --apply`); two different
    parts (a wall revision) may be compared too, and the report says so at the top.
    """
    from pathlib import Path

    from deflect.decisions.compare import Compared
    from deflect.decisions.compare import compare as compare_jobs
    from deflect.job.reader import read_job
    from deflect.output.compare_report import compare_payload, compare_report, part_words
    from deflect.output.files import Outputs
    from deflect.output.tables import units_note

    with Outputs() as outputs:
        html_temp = outputs.file(html_file, "--html") if html_file else None
        units = {read_job(job_a).units,         # both read and checked before either is predicted
                 read_calibrated_job(job_b, calibration_file).units}
        sides = []
        for job_file, calibration in ((job_a, None), (job_b, calibration_file)):
            if not quiet and not as_json:
                click.echo(f"predicting {job_file}", err=True)
            pred, judged, _, job = run_prediction(job_file, show_progress=False, calibration_file=calibration)
            sides.append(Compared(Path(job_file).name, pred, judged.checks, job.calibration))
        comparison = compare_jobs(*sides)
        if html_temp:
            from deflect.output.html_chapters import compare_chapter
            a, b = comparison.a.prediction, comparison.b.prediction
            title = a.title if a.title == b.title else f"{a.title} against {b.title}"
            write_html(html_temp, title, "comparison of two jobs", [job_a, job_b], [compare_chapter(comparison)],
                       (part_words(comparison),), units_line=units_note("inch" if "inch" in units else "mm"))
        written = outputs.commit()
    if as_json:
        emit_json(compare_payload(comparison))
    else:
        out(units_note("inch" if "inch" in units else "mm") + compare_report(comparison))
        for path in written:
            out(f"wrote {path}")


def main(argv: list[str] | None = None) -> None:
    """Entry point: runs the click group and turns every input problem into one `error:` line, exit 2."""
    try:
        cli.main(args=argv, prog_name="deflect", standalone_mode=False)
    except (InputError, ModelError) as exc:
        click.echo(exc.line(), err=True)
        sys.exit(EXIT_BAD_INPUT)
    except click.UsageError as exc:
        command = exc.ctx.command_path if exc.ctx else "deflect"
        click.echo(f"error: {command}: {exc.format_message()}", err=True)
        sys.exit(EXIT_BAD_INPUT)
    except click.Abort:
        click.echo("error: aborted", err=True)
        sys.exit(1)
    except click.exceptions.Exit as exc:
        sys.exit(exc.exit_code)
    except click.ClickException as exc:
        click.echo(f"error: {exc.format_message()}", err=True)
        sys.exit(EXIT_BAD_INPUT)
    except StdoutGone as exc:
        silence_stdout()
        click.echo(f"error: cannot write the output to stdout: {exc}", err=True)
        sys.exit(EXIT_CANNOT_WRITE)


def silence_stdout() -> None:
    """Point stdout at the null device, so that Python's last flush on exit does not fail a second time with
    its own message (what the Python documentation advises for a closed pipe)."""
    try:
        sys.stdout.flush()
    except (OSError, ValueError):
        pass
    try:
        null = os.open(os.devnull, os.O_WRONLY)
        os.dup2(null, sys.stdout.fileno())
        os.close(null)
    except (OSError, ValueError, AttributeError, io.UnsupportedOperation):
        pass        # stdout is not a file (a test's captured stream): nothing is flushed at exit
