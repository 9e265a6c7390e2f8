"""Figures of `deflect chatter`: the lobes of each pass with its operating points, and the finished part's first
mode shapes. Drawing only; the figures come from `deflect.machining.chatter`. Each is drawn by a `*_figure`
function (as SVG for the HTML report through `figures.svg_text`) and written as PNG by its `*_plot`. matplotlib
is imported inside the functions (file-only Agg backend).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from deflect.machining.chatter import ChatterStudy, PassChatter
from deflect.output.figures import DPI, plain

SHAPE_SHARE = 0.12               # the largest displacement drawn as this share of the part's size
AROUND_POINTS = 361


def _pyplot():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def file_stem(name: str) -> str:
    return "".join(ch if ch.isalnum() else "-" for ch in name).strip("-") or "pass"


def _lobe_panel(ax, lobes, p: PassChatter, legend: bool) -> None:
    """One panel: the unstable region over speed and depth, the stable windows at the pass's depth, its points."""
    log_margin = np.log(np.clip(lobes.margin, 1e-6, 1e6))   # inf (far from any limit) clipped
    ax.contourf(lobes.speeds_rpm, lobes.depths_mm, log_margin, levels=[-20.0, 0.0], colors=["#f2b8b5"])
    ax.contour(lobes.speeds_rpm, lobes.depths_mm, log_margin, levels=[0.0], colors=["#b3261e"], linewidths=0.8)
    w = p.worst
    low, high = lobes.speeds_rpm[0], lobes.speeds_rpm[-1]
    shown = [(max(lo, low), min(hi, high)) for lo, hi in p.stable_speeds_rpm if hi >= low and lo <= high]
    for i, (lo, hi) in enumerate(shown):
        ax.hlines(w.depth_mm, lo, max(hi, lo + 2e-3 * (high - low)), color="#2e7d32", lw=7, alpha=0.7,
                  label="speeds where every station is stable at its depth" if i == 0 else None)
    marker, colour, word = ("o", "#1b5e20", "stable") if w.stable else ("X", "#b3261e", "chatters")
    ax.plot([w.speed_rpm], [w.depth_mm], marker, color=colour, ms=9,
            label=f"the pass at its worst station: {word} ({sum(not s.stable for s in p.stations)} of "
                  f"{len(p.stations)} stations chatter)")
    others = [s for s in p.stations if s is not w]
    if others:
        ax.plot([s.speed_rpm for s in others], [s.depth_mm for s in others], ".", color="0.25", ms=4,
                label="its other stations (their own lobes differ)")
    ax.plot([], [], "s", color="#f2b8b5", ms=10, label=f"chatters at the worst station (r {w.r_mm:.1f}, "
                                                        f"z {w.z_mm:.1f} mm)")
    ax.set_yscale("log")
    ax.set_xlim(low, high)
    ax.set_ylim(lobes.depths_mm[0], lobes.depths_mm[-1])
    ax.set_xlabel("spindle speed [1/min]")
    ax.set_ylabel("depth of cut [mm]")
    ax.grid(True, which="both", alpha=0.3)
    if legend:
        ax.legend(loc="upper left", fontsize=8)


def lobes_plot(p: PassChatter, title: str, path) -> None:
    _save(lobes_figure(p, title), path)


def _save(fig, path) -> None:
    fig.tight_layout()
    fig.savefig(path, dpi=DPI)
    _pyplot().close(fig)


def lobes_figure(p: PassChatter, title: str):
    """The lobes of the pass's worst station over the machine's speeds, and a close-up around the widest stable
    window (or the pass's speed)."""
    plt = _pyplot()
    fig, (top, bottom) = plt.subplots(2, 1, figsize=(10, 9))
    _lobe_panel(top, p.lobes, p, legend=True)
    top.set_title(f"{plain(title)}: pass '{plain(p.name)}', {plain(p.tool)}, feed {p.feed_mm:g} mm/rev")
    _lobe_panel(bottom, p.zoom, p, legend=False)
    what = "the widest stable window" if p.stable_speeds_rpm else "the pass's speed"
    bottom.set_title(f"close-up around {what}", fontsize=10)
    return fig


def mode_shapes_plot(study: ChatterStudy, path) -> None:
    _save(mode_shapes_figure(study), path)


def mode_shapes_figure(study: ChatterStudy):
    """The first modes of the finished part: the mid-surface in the half-section, at rest and deflected, and the
    waves around the circumference at the node that moves most."""
    plt = _pyplot()
    shapes = study.shapes
    nodes = study.mesh_nodes_rz
    size = max(np.ptp(nodes[:, 0]), np.ptp(nodes[:, 1]), 1e-9)
    fig, axes = plt.subplots(2, len(shapes), figsize=(3.2 * len(shapes), 7.0), squeeze=False)
    frequency_of = {(row.n, row.m): row.frequency_hz for row in study.modes}
    for column, mode in enumerate(shapes):
        u = mode.shape[:, [0, 2]]                       # u_r, u_z at each node
        scale = SHAPE_SHARE * size / max(np.abs(u).max(), 1e-300)
        side = axes[0, column]
        for a, b in study.mesh_elements:
            side.plot(nodes[[a, b], 0], nodes[[a, b], 1], color="0.6", lw=2.5)
            moved = nodes[[a, b]] + scale * u[[a, b]]
            side.plot(moved[:, 0], moved[:, 1], color="#1565c0", lw=1.5)
        side.set_aspect("equal")
        side.set_xlabel("r [mm]")
        side.set_ylabel("z [mm]")
        frequency = frequency_of.get((mode.n, mode.m), mode.frequency_hz)
        side.set_title(f"n = {mode.n}, m = {mode.m}: {frequency:.0f} Hz", fontsize=10)
        top = axes[1, column]
        k = int(np.argmax(np.abs(mode.shape[:, 0])))
        theta = np.linspace(0.0, 2.0 * np.pi, AROUND_POINTS)
        radius = nodes[k, 0]
        moved = radius + scale * mode.shape[k, 0] * np.cos(mode.n * theta)
        top.plot(radius * np.cos(theta), radius * np.sin(theta), color="0.6", lw=2.5)
        top.plot(moved * np.cos(theta), moved * np.sin(theta), color="#1565c0", lw=1.5)
        top.set_aspect("equal")
        top.set_title(f"around, at z = {nodes[k, 1]:.1f} mm", fontsize=9)
        top.axis("off")
    fig.suptitle(f"{plain(study.title)}: first modes of the finished part as held (deflection exaggerated)",
                 fontsize=11)
    return fig


def chatter_figures(study: ChatterStudy, folder) -> list[Path]:
    """Every figure of a study into the folder: one lobe map per pass and the mode shapes."""
    out = Path(folder)
    out.mkdir(parents=True, exist_ok=True)
    written = []
    for p in study.passes:
        if p.lobes is None:
            continue
        path = out / f"lobes-{file_stem(p.name)}.png"
        lobes_plot(p, study.title, path)
        written.append(path)
    if study.shapes:
        path = out / "mode-shapes.png"
        mode_shapes_plot(study, path)
        written.append(path)
    return written
