"""Terminal tables: plain results -> text. Formatting only; no physics is computed here."""

from __future__ import annotations


def table(rows: list[tuple[str, str]], title: str = "") -> str:
    """Two-column table: label left, value right-aligned."""
    width_label = max(len(label) for label, _ in rows)
    width_value = max(len(value) for _, value in rows)
    lines = [title, "-" * max(len(title), width_label + width_value + 3)] if title else []
    lines += [f"{label:<{width_label}}   {value:>{width_value}}" for label, value in rows]
    return "\n".join(lines)


def grid(header: list[str], rows: list[list[str]]) -> str:
    """Column table with right-aligned cells and a rule under the header."""
    widths = [max(len(header[i]), *(len(row[i]) for row in rows)) for i in range(len(header))]

    def line(cells: list[str]) -> str:
        return "  ".join(f"{cell:>{width}}" for cell, width in zip(cells, widths))

    return "\n".join([line(header), line(["-" * w for w in widths]), *(line(row) for row in rows)])


def section_table(title: str, props: dict) -> str:
    rows = [
        ("material", f"{props['material']} ({props['density_g_cm3']:.3f} g/cm3)"),
        ("section area", f"{props['area_mm2']:.4f} mm2"),
        ("volume", f"{props['volume_mm3']:.3f} mm3"),
        ("mass", f"{props['mass_g']:.4f} g"),
        ("centroid of section, r", f"{props['centroid_r_mm']:.4f} mm"),
        ("centroid of section, z", f"{props['centroid_z_mm']:.4f} mm"),
        ("axial inertia (about the spin axis)", f"{props['inertia_axial_kg_mm2']:.5g} kg mm2"),
        ("thinnest wall", f"{props['min_wall_mm']:.4f} mm"),
    ]
    return table(rows, title=f"Section of the finished part: {title}")


def compliance_table(title: str, points: list, mapped: bool) -> str:
    """Compliance per point: normal, circumferential and along-boundary diagonal, and the stiffness."""
    header = ["r mm", "z mm", "nr", "nz", "normal um/N", "circ. um/N", "along um/N", "stiffness N/um"]
    rows = []
    for p in points:
        c = p.matrix_mm_per_n
        stiffness = f"{1e-3 / c[0, 0]:.3g}" if c[0, 0] > 0 else "held"
        rows.append([f"{p.r_mm:.3f}", f"{p.z_mm:.3f}", f"{p.nr:+.2f}", f"{p.nz:+.2f}",
                     f"{1e3 * c[0, 0]:.4g}", f"{1e3 * c[1, 1]:.4g}", f"{1e3 * c[2, 2]:.4g}", stiffness])
    what = "along the whole boundary" if mapped else "at the asked points"
    summed = f"(Fourier harmonics 0..{max(p.harmonics for p in points)} summed)" if points else ""
    return f"Compliance of the held part {what}: {title} {summed}\n" + grid(header, rows)
