"""Figures: plain results -> PNG files, or SVG text for the HTML report. Drawing only; no physics is computed here.

Each figure of a result is drawn by a `*_figure` function that returns the matplotlib figure; `*_plot` writes it
as PNG, `svg_text` gives it as SVG (text drawn as paths, so it looks the same without the fonts; no date and
fixed ids, so the same figure gives the same text). A user's text on a figure (a title, a pass name) goes
through `plain`. matplotlib is imported inside each function with the file-only Agg backend, so the solver
path and the command line start without it.
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np

from deflect.errors import InputError

DPI = 120


def _pyplot():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


# Formats matplotlib lists but cannot write without more software (pgf needs a LaTeX installation).
_NEEDS_MORE = ("pgf",)


def figure_formats() -> list[str]:
    """The file name endings a figure can be written with (matplotlib's own list, without those that need
    more than matplotlib)."""
    from matplotlib.backend_bases import FigureCanvasBase

    return sorted(f for f in FigureCanvasBase.get_supported_filetypes() if f not in _NEEDS_MORE)


def check_figure_name(path, key: str) -> None:
    """InputError(key) when a figure cannot be written under that name (checked before any work): its ending
    must be one of `figure_formats`, e.g. .png."""
    suffix = Path(path).suffix.lower().lstrip(".")
    formats = figure_formats()
    if suffix not in formats:
        given = f"ends in .{suffix}" if suffix else "has no ending"
        raise InputError(key, f"{str(path)!r} {given}, which is not a figure format; give a name ending in "
                              f"{', '.join('.' + f for f in formats)} (e.g. map.png)")


def _save(plt, fig, path) -> None:
    """Lay the figure out, write it as PNG at a readable resolution, free it."""
    fig.tight_layout()
    fig.savefig(path, dpi=DPI)
    plt.close(fig)


def plain(text: str) -> str:
    """A user's text (a job title, a pass name) as matplotlib draws it literally: a pair of $ would start its
    mathematical notation (and an unbalanced formula stops the drawing)."""
    return str(text).replace("$", r"\$")


SVG_SETTINGS = {"svg.fonttype": "path", "svg.hashsalt": "deflect"}


def svg_text(fig) -> str:
    """The figure laid out and written as SVG text, then freed."""
    import matplotlib

    fig.tight_layout()
    buffer = io.StringIO()
    with matplotlib.rc_context(SVG_SETTINGS):
        fig.savefig(buffer, format="svg", metadata={"Date": None})
    _pyplot().close(fig)
    return buffer.getvalue()


def compliance_map_plot(section, points: list, title: str, path: str) -> None:
    """The section with its boundary coloured by normal compliance, and the compliance along the boundary."""
    plt = _pyplot()
    from matplotlib.colors import LogNorm

    outline = section.polygon()
    values_um = np.array([1e3 * max(p.normal_mm_per_n, 1e-12) for p in points])
    r = np.array([p.r_mm for p in points])
    z = np.array([p.z_mm for p in points])
    fig, (ax_section, ax_line) = plt.subplots(1, 2, figsize=(12, 5.5), gridspec_kw={"width_ratios": [1, 1.4]})
    closed = np.vstack([outline, outline[:1]])
    ax_section.fill(closed[:, 0], closed[:, 1], color="0.88", label="section")
    ax_section.plot(closed[:, 0], closed[:, 1], color="0.3", lw=0.8)
    shown = ax_section.scatter(r, z, c=values_um, cmap="viridis", s=14,
                               norm=LogNorm(vmin=max(values_um.min(), values_um.max() * 1e-4), vmax=values_um.max()),
                               label="loaded points (held zones off the scale)")
    fig.colorbar(shown, ax=ax_section, label="normal compliance [um/N]")
    ax_section.set_aspect("equal")
    ax_section.set_xlabel("r [mm]")
    ax_section.set_ylabel("z [mm]")
    ax_section.set_title("where the wall gives most")
    # below the axes, where it covers neither the part nor an axis label
    ax_section.legend(loc="upper center", bbox_to_anchor=(0.5, -0.12), fontsize=8, ncol=1, frameon=False)

    along = np.array([p.along_mm for p in points], dtype=float)
    # a gap where points are missing (the spin axis, a face shorter than the patch) is left open
    gap = np.diff(along) > 1.5 * np.median(np.diff(along)) if len(along) > 2 else np.zeros(0, bool)
    for i, stretch in enumerate(np.split(np.arange(len(points)), np.flatnonzero(gap) + 1)):
        ax_line.semilogy(along[stretch], values_um[stretch], ".-", lw=0.8, color="tab:blue",
                         label="normal compliance" if i == 0 else None)
    ax_line.set_ylim(bottom=max(values_um.min(), values_um.max() * 1e-4) / 2.0)
    ax_line.set_xlabel("position along the boundary [mm] (counter-clockwise from the start of the outline)")
    ax_line.set_ylabel("normal compliance [um/N]")
    ax_line.set_title("compliance along the boundary")
    ax_line.grid(True, which="both", alpha=0.3)
    ax_line.legend(loc="upper left", fontsize=8)
    fig.suptitle(f"Compliance map: {plain(title)}")
    _save(plt, fig, path)


SURFACE_LABELS = {"od": "OD", "id": "ID", "face": "face"}
SURFACE_COLOURS = {"od": "tab:blue", "id": "tab:orange", "face": "tab:green"}
MAGNIFIED_SHARE = 0.05          # the largest deviation is drawn as about this share of the part's size
NICE_STEPS = (1.0, 2.0, 5.0)
TRUE_SCALE_UP_TO = 4.0          # slenderer sections are drawn with r and z to different scales, to be seen


def magnification(max_deviation_mm: float, size_mm: float, share: float = MAGNIFIED_SHARE) -> float:
    """Factor on the deviation for the section figure: 1, 2 or 5 x 10^k, nearest (on a log scale) to the
    factor that draws the largest deviation as `share` of the part's size; never below 1 (true scale)."""
    if max_deviation_mm <= 0.0 or size_mm <= 0.0:
        return 1.0
    wanted = share * size_mm / max_deviation_mm
    if wanted <= 1.0:
        return 1.0
    decade = 10.0 ** np.floor(np.log10(wanted))
    candidates = [step * decade * scale for scale in (1.0, 10.0) for step in NICE_STEPS]
    return float(min(candidates, key=lambda c: abs(np.log10(c / wanted))))


def closed_ring(rz: np.ndarray) -> np.ndarray:
    return np.vstack([rz, rz[:1]])


def runs(mask: np.ndarray) -> list[np.ndarray]:
    """Indices of the stretches of consecutive True entries."""
    chosen = np.flatnonzero(mask)
    if len(chosen) == 0:
        return []
    return np.split(chosen, np.flatnonzero(np.diff(chosen) > 1) + 1)


def section_plot(pred, path: Path) -> Path:
    plt = _pyplot()
    _save(plt, section_figure(pred), path)
    return path


def section_figure(pred):
    """Stock (faint), nominal and as-machined outlines, and the material left on the finished surfaces drawn
    magnified on the normals. The magnification is set by the finished surfaces alone: stock that no pass
    removed (tenths of a millimetre, in the true-scale outline) would otherwise shrink the push-off's
    micrometres out of sight."""
    plt = _pyplot()
    d = pred.deviation
    extent = pred.nominal_rz.max(axis=0) - pred.nominal_rz.min(axis=0)
    finished = np.array([s != "unmachined" for s in d.surface], bool)
    largest = float(np.max(np.abs(d.deviation_mm[finished]), initial=0.0))
    factor = magnification(largest, float(extent.max()))
    magnified = d.points_rz + factor * d.deviation_mm[:, None] * d.normals
    fig, ax = plt.subplots(figsize=(8, 8))
    stock, nominal, machined = (closed_ring(rz) for rz in (pred.stock_rz, pred.nominal_rz, pred.machined_rz))
    ax.fill(stock[:, 0], stock[:, 1], color="0.93", label="stock")
    ax.plot(stock[:, 0], stock[:, 1], color="0.75", lw=0.6)
    ax.plot(nominal[:, 0], nominal[:, 1], color="k", lw=1.0, label="nominal (as drawn)")
    ax.plot(machined[:, 0], machined[:, 1], color="tab:blue", lw=0.9, ls="--",
            label="predicted as machined (true scale)")
    for i, stretch in enumerate(runs(finished)):
        ax.plot(*magnified[stretch].T, color="tab:red", lw=1.0,
                label=f"material left on finished surfaces x {factor:.0f}" if i == 0 else None)
    slender = max(extent) > TRUE_SCALE_UP_TO * max(min(extent), 1e-9)
    if slender:
        ax.set_xlabel("r [mm] (r and z to different scales)")
    else:
        ax.set_aspect("equal", adjustable="datalim")
        ax.set_xlabel("r [mm]")
    ax.set_ylabel("z [mm]")
    ax.grid(True, alpha=0.3)
    ax.legend(loc="best", fontsize=8)
    ax.set_title(f"Section: {plain(pred.title)}\nmaterial left on finished surfaces x {factor:.0f} "
                 f"(largest {1e3 * largest:.1f} um a side)")
    return fig


def deviation_plot(pred, path: Path) -> Path:
    plt = _pyplot()
    _save(plt, deviation_figure(pred), path)
    return path


def deviation_figure(pred):
    """Material left along each finished OD and ID against z, and along the faces against r."""
    return profiles_figure([("", pred)], f"Material left beyond the drawn surface (> 0 thicker): {plain(pred.title)}")


PROFILE_STYLES = ("-", "--", ":", "-.")


def profiles_figure(named: list, title: str):
    """Material left along the finished OD and ID against z, and across the faces against r, of one or more
    (name, prediction) pairs overlaid: a colour per surface, a line style per prediction. `title` is drawn as
    given (user text in it passed through `plain`)."""
    plt = _pyplot()
    kinds_of = [np.array(pred.deviation.surface) for _, pred in named]
    present = set().union(*(set(kinds) for kinds in kinds_of))
    panels = []                     # (what, coordinate drawn along: 1 = z, 0 = r, surface kinds)
    if present & {"od", "id"}:
        panels.append(("along the axis", 1, ("od", "id")))
    if "face" in present:
        panels.append(("across the faces", 0, ("face",)))
    panels = panels or [("along the axis", 1, ())]
    fig, axes = plt.subplots(1, len(panels), figsize=(6 * len(panels) + 2, 5), squeeze=False)
    for ax, (what, axis, kinds_here) in zip(axes[0], panels):
        ax.axhline(0.0, color="k", lw=0.8, label="as drawn")
        for j, ((name, pred), kinds) in enumerate(zip(named, kinds_of)):
            d = pred.deviation
            for kind in kinds_here:
                label = SURFACE_LABELS[kind] + (f": {plain(name)}" if name else "")
                for i, stretch in enumerate(runs(kinds == kind)):
                    ax.plot(d.points_rz[stretch, axis], 1e3 * d.deviation_mm[stretch], color=SURFACE_COLOURS[kind],
                            ls=PROFILE_STYLES[j % len(PROFILE_STYLES)], lw=1.2, label=label if i == 0 else None)
        ax.set_xlabel("z [mm]" if axis == 1 else "r [mm]")
        ax.set_ylabel("material left, a side [um]")
        ax.set_title(f"finished surfaces {what}")
        ax.grid(True, alpha=0.3)
        ax.legend(loc="best", fontsize=8)
    fig.suptitle(title)
    return fig


def passes_plot(pred, path: Path) -> Path:
    plt = _pyplot()
    _save(plt, passes_figure(pred), path)
    return path


def passes_figure(pred):
    """Passive force and push-off along every pass: z for OD and ID passes, r for face passes."""
    plt = _pyplot()
    along_z = [p for p in pred.passes if p.surface != "face"]
    along_r = [p for p in pred.passes if p.surface == "face"]
    columns = [(axis, passes) for axis, passes in ((1, along_z), (0, along_r)) if passes] or [(1, [])]
    fig, axes = plt.subplots(2, len(columns), figsize=(7 * len(columns) + 1, 7), sharex="col", squeeze=False)
    colours = plt.rcParams["axes.prop_cycle"].by_key()["color"]
    styles = ("-", "--", ":", "-.")
    for column, (axis, passes) in enumerate(columns):
        ax_force, ax_push = axes[0, column], axes[1, column]
        for i, p in enumerate(passes):
            for j, t in enumerate(p.cuts):
                x = t.z_mm if axis == 1 else t.r_mm
                label = plain(p.name) if len(p.cuts) == 1 else f"{plain(p.name)}, cut {t.cut + 1}"
                style = {"color": colours[i % len(colours)], "ls": styles[j % len(styles)], "lw": 1.1}
                ax_force.plot(x, t.passive_n, label=label, **style)
                ax_push.plot(x, 1e3 * t.deflection_mm, label=label, **style)
        where = "OD and ID passes" if axis == 1 else "face passes"
        ax_force.set_title(f"{where}: passive force")
        ax_force.set_ylabel("passive force [N]")
        ax_push.set_title(f"{where}: push-off of part and tool")
        ax_push.set_ylabel("push-off [um]")
        ax_push.set_xlabel("tool position z [mm]" if axis == 1 else "tool position r [mm]")
        for ax in (ax_force, ax_push):
            ax.axhline(0.0, color="0.5", lw=0.6)
            ax.grid(True, alpha=0.3)
            if passes:
                ax.legend(loc="best", fontsize=8)
    fig.suptitle(f"Forces and push-off along the passes: {plain(pred.title)}")
    return fig


PREDICT_FIGURES = ("section.png", "deviation.png", "passes.png")   # as `predict_plots` writes them


def predict_plots(pred, folder, key: str = "--figures") -> list[Path]:
    """Write section.png, deviation.png and passes.png of a machining prediction into `folder` (created if
    missing; an InputError naming `key`, the option that gave it, when it cannot be)."""
    from deflect.output.csv_files import output_folder

    out = output_folder(folder, key)
    section, deviation, passes = PREDICT_FIGURES
    return [section_plot(pred, out / section), deviation_plot(pred, out / deviation), passes_plot(pred, out / passes)]


# ---------------------------------------------------------------------------------------------------
# work holding (deflect clamp)

LOBE_SHARE = 0.15      # the largest radial deviation is drawn as about this share of the radius


def nice_length(value: float) -> float:
    """1, 2 or 5 x 10^k, the largest not above value (value > 0)."""
    decade = 10.0 ** np.floor(np.log10(value))
    return float(max(step * decade for step in NICE_STEPS if step * decade <= value * (1.0 + 1e-9)))


def scale_bar(ax, profile, factor: float, largest_mm: float) -> None:
    """A radial bar of a round length in um, drawn at the plot's magnification outward from the as-cut
    circle, midway between the first two jaws: how small the drawn deviation really is."""
    length_mm = nice_length(0.5 * largest_mm)
    jaws = len(profile.jaw_deg)
    angle = np.radians(180.0 / jaws if jaws else 45.0)
    ax.set_rlabel_position(np.degrees(angle) + (360.0 / jaws if jaws else 90.0))   # the radii's labels clear of it
    outer = profile.r_mm + factor * length_mm
    ax.plot([angle, angle], [profile.r_mm, outer], color="k", lw=2.5, solid_capstyle="butt",
            label=f"scale: {1e3 * length_mm:g} um drawn x {factor:g}")
    for end in (profile.r_mm, outer):
        ax.plot([angle - 0.02, angle + 0.02], [end, end], color="k", lw=1.2)
    ax.annotate(f"{1e3 * length_mm:g} um", xy=(angle, outer), xytext=(6, 0), textcoords="offset points",
                fontsize=9, va="center")


def released_shape_plot(profile, title: str, path: str) -> None:
    plt = _pyplot()
    _save(plt, released_shape_figure(profile, title), path)


def released_shape_figure(profile, title: str):
    """Polar plot: the surface as cut in the chuck (round), the same surface after release (deviation
    magnified), the jaws' positions, and a scale bar that says in um how large the magnified deviation is."""
    plt = _pyplot()
    largest = float(np.max(np.abs(profile.radial_mm), initial=0.0))
    factor = magnification(largest, profile.r_mm, LOBE_SHARE)
    theta = np.radians(profile.theta_deg)
    fig = plt.figure(figsize=(7.5, 7.5))
    ax = fig.add_subplot(projection="polar")
    ax.plot(theta, np.full_like(theta, profile.r_mm), color="k", lw=1.0, ls="--",
            label=f"as cut in the chuck: round, diameter {2 * profile.r_mm:.3f} mm")
    ax.plot(theta, profile.r_mm + factor * profile.radial_mm, color="tab:red", lw=1.6,
            label=f"after release, radial deviation x {factor:g} "
                  f"(peak to valley {1e3 * np.ptp(profile.radial_mm):.1f} um)")
    outer = profile.r_mm + factor * largest
    for k, jaw in enumerate(profile.jaw_deg):
        half = np.radians(max(profile.jaw_width_deg, 1.0)) / 2.0
        span = np.linspace(np.radians(jaw) - half, np.radians(jaw) + half, 30)
        ax.fill_between(span, 1.04 * outer, 1.12 * outer, color="tab:blue", alpha=0.6,
                        label=f"jaws ({len(profile.jaw_deg)}, {profile.jaw_width_deg:.3g} deg wide)" if k == 0
                        else None)
    if largest > 0.0:
        scale_bar(ax, profile, factor, largest)
    ax.set_ylim(0.0, 1.18 * outer)
    ax.set_xlabel("angle around the part from the middle of a jaw [deg]")
    ax.set_ylabel(f"radius [mm]: as cut + {factor:g} x deviation", labelpad=28)
    ax.grid(True, alpha=0.4)
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.1), fontsize=8)
    ax.set_title(f"{plain(title)}\nreleased shape of the {SURFACE_LABELS.get(profile.surface, profile.surface)} at "
                 f"z = {profile.z_mm:.2f} mm (deviation magnified x {factor:g})", fontsize=10)
    return fig


PROFILE_PANELS = {"od": "OD diameter", "id": "ID diameter", "wall": "wall thickness"}
FIGURE_CAUSES = {"push-off": "push-off", "size error": "size error", "unmachined": "unmachined",
                 "density": "batch density", "layers": "layer sums"}


def first_article_plot(result, path) -> Path:
    plt = _pyplot()
    _save(plt, first_article_figure(result), path)
    return Path(path)


def first_article_figure(result):
    """The first article: measured, uncalibrated and calibrated diameters and wall along z (against the drawing,
    um; the measured ones with their 95 % bars), and the measured mass gain split by cause."""
    plt = _pyplot()
    panels = list(result.profiles)
    rows = (len(panels) + 2) // 2          # two panels a row: the profiles, then the mass
    fig, axes = plt.subplots(rows, 2, figsize=(12, 4.6 * rows + 0.6), squeeze=False)
    axes = axes.ravel()
    for ax in axes[len(panels) + 1:]:
        ax.set_axis_off()
    for ax, profile in zip(axes, panels):
        ax.plot(1000 * profile.uncalibrated_mm, profile.z_mm, "--", color="0.55", label="uncalibrated")
        ax.plot(1000 * profile.calibrated_mm, profile.z_mm, "-", color="tab:blue", label="calibrated")
        mine = [r for r in result.readings if r.reading.kind in ("diameter", "wall")
                and (r.reading.surface if r.reading.kind == "diameter" else "wall") == profile.surface]
        if mine:
            ax.errorbar([1000 * (r.reading.value_mm - r.reading.nominal_mm) for r in mine],
                        [r.reading.at_mm for r in mine], xerr=[2000 * r.uncertainty_mm for r in mine], fmt="o",
                        color="tab:red", capsize=3, label="measured (+/- 2 u)")
        ax.axvline(0.0, color="0.2", lw=0.8)
        ax.set_xlabel(f"{PROFILE_PANELS[profile.surface]} - drawn [um]")
        ax.set_ylabel("z [mm]")
        ax.set_title(PROFILE_PANELS[profile.surface])
        ax.grid(True, alpha=0.3)
        ax.legend(loc="best", fontsize=8)
    ax = axes[len(panels)]
    mass = result.mass
    if mass is None:
        ax.text(0.5, 0.5, "the part was not weighed", ha="center", va="center", transform=ax.transAxes)
        ax.set_axis_off()
    else:
        labels = [FIGURE_CAUSES[s.cause] + (f", {s.where.split(' (')[0]}" if s.where else "") for s in mass.shares]
        values = [s.mass_g for s in mass.shares]
        labels += ["rest"]
        values += [mass.rest_g]
        colours = ["tab:blue" if s.cause == "push-off" else "tab:orange" if s.cause == "size error" else "0.6"
                   for s in mass.shares] + ["tab:red"]
        y = np.arange(len(values))[::-1]
        ax.barh(y, values, color=colours)
        ax.errorbar([mass.rest_g], [y[-1]], xerr=[mass.rest_allowed_g], fmt="none", color="k", capsize=4,
                    label="what the measurement allows (95 %)")
        ax.set_yticks(y, labels, fontsize=8)
        ax.axvline(0.0, color="0.2", lw=0.8)
        ax.set_xlabel("mass [g]")
        ax.set_title(f"measured gain {mass.measured_g - mass.nominal_g:+.3f} g by cause")
        ax.grid(True, axis="x", alpha=0.3)
        ax.legend(loc="best", fontsize=8)
    fig.suptitle(f"First article: {plain(result.title)}")
    return fig
