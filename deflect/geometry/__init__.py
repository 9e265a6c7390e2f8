"""Geometry of the part: the drawn half-section and the boxes where it is held.

    section.py   an outline of lines, fillets and arcs -> `Section`; its mass properties (Pappus) and thinnest wall
    corners.py   concave corners of a section and the material a tool nose of radius r leaves in them (exact)
    boxes.py     `HeldBox`: a box of the (r, z) half-plane in which the material is held rigid
    gauging.py   what a gauge reads on a section: diameters and wall at a height, a face's height at a radius

The shapes every later room works on. May import: `deflect.errors` only.
"""
