"""Mechanics: the forces of a cut and how the held wall gives way under them.

    cutting.py     depth, feed, speed, tool, material -> Kienzle forces on Colwell's equivalent edge, power,
                   theoretical roughness, cutting time
    shell/         section + held boxes -> shell of revolution (mid-surface mesh, Fourier-harmonic stiffness)
    compliance.py  boundary points + contact patch -> 3x3 compliance of the wall
    clamping.py    the jaws' squeeze on the part and the shape a surface cut round in it takes once released
    chuck.py       jaw-chuck formulas: centrifugal force of the jaws, torque a grip holds (VDI 3106)
    modes.py       held section + density -> natural modes (n, m), frequency response where the tool bears
    stability.py   frequency response + cut -> regenerative chatter limit and lobes (Tlusty; Colwell's chord)

Physics of one state of the part; nothing here knows about passes. May import: `deflect.errors`,
`deflect.geometry`, `deflect.job`.
"""
