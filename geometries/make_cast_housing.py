"""Make ``cast_housing.step``: a small cast housing, drawn with gmsh's OpenCASCADE kernel.

An invented part for the examples and tests (not a real product): a hollow box body with
filleted vertical edges, open at the bottom, standing on a bolting flange with four holes, and a
round boss with a bore on top. Walls 10 mm, top 12 mm, flange 12 mm. Run from anywhere::

    python geometries/make_cast_housing.py

The model is drawn in metres and the STEP file is written in millimetres (its unit is stated in
the file, so femheat reads it back in metres with scale = 1). `volume()` and `hearth_area()`
give the closed-form volume and the area of the flange underside (z = 0), which the tests
compare with the meshed part.
"""

from __future__ import annotations

import math
from pathlib import Path

__all__ = ["FLANGE", "BODY", "volume", "hearth_area", "build", "write"]

# all in metres; x along the length, y across, z up; the flange underside is z = 0
FLANGE = (0.200, 0.140, 0.012)  # length, width, thickness
BODY = (0.160, 0.100, 0.080)  # outer length, width, height above the flange
WALL = 0.010  # side walls
TOP = 0.012  # top plate
FILLET = 0.008  # radius on the body's four vertical outer edges
BOSS_RADIUS, BOSS_HEIGHT = 0.025, 0.015
BORE_RADIUS = 0.0125  # through the boss and the top plate
HOLE_RADIUS = 0.006  # bolt holes through the flange
HOLES = ((0.090, 0.060), (-0.090, 0.060), (-0.090, -0.060), (0.090, -0.060))  # from the centre

CAVITY = (BODY[0] - 2 * WALL, BODY[1] - 2 * WALL)  # open at the bottom
CAVITY_TOP = FLANGE[2] + BODY[2] - TOP  # z of the cavity ceiling
TOP_Z = FLANGE[2] + BODY[2]  # z of the body top (boss base)


def volume() -> float:
    """Closed-form volume of the housing, m3 (box, cylinder and fillet-corner areas)."""
    flange = FLANGE[0] * FLANGE[1] * FLANGE[2] - len(HOLES) * math.pi * HOLE_RADIUS**2 * FLANGE[2]
    body = (BODY[0] * BODY[1] - (4.0 - math.pi) * FILLET**2) * BODY[2]
    boss = math.pi * BOSS_RADIUS**2 * BOSS_HEIGHT
    cavity = CAVITY[0] * CAVITY[1] * CAVITY_TOP
    bore = math.pi * BORE_RADIUS**2 * (TOP_Z + BOSS_HEIGHT - CAVITY_TOP)
    return flange + body + boss - cavity - bore


def hearth_area() -> float:
    """Closed-form area of the flange underside at z = 0, m2."""
    holes = len(HOLES) * math.pi * HOLE_RADIUS**2
    return FLANGE[0] * FLANGE[1] - CAVITY[0] * CAVITY[1] - holes


def build(gmsh) -> int:
    """Draw the housing in the current gmsh model; returns its volume tag."""
    occ = gmsh.model.occ
    fx, fy, fz = FLANGE
    flange = occ.addBox(-fx / 2, -fy / 2, 0.0, fx, fy, fz)
    bx, by, bz = BODY
    body = occ.addBox(-bx / 2, -by / 2, fz, bx, by, bz)
    occ.synchronize()
    vertical = []
    for _, c in gmsh.model.getBoundary(
        gmsh.model.getBoundary([(3, body)], oriented=False), combined=False, oriented=False
    ):
        b = gmsh.model.getBoundingBox(1, abs(c))
        if b[5] - b[2] > 0.5 * bz and abs(c) not in vertical:
            vertical.append(abs(c))
    body = occ.fillet([body], vertical, [FILLET])[0][1]
    boss = occ.addCylinder(0.0, 0.0, TOP_Z, 0.0, 0.0, BOSS_HEIGHT, BOSS_RADIUS)
    solid, _ = occ.fuse([(3, flange)], [(3, body), (3, boss)])
    cx, cy = CAVITY
    cuts = [(3, occ.addBox(-cx / 2, -cy / 2, -0.001, cx, cy, CAVITY_TOP + 0.001))]
    cuts.append((3, occ.addCylinder(0, 0, CAVITY_TOP - 0.001, 0, 0, 0.05, BORE_RADIUS)))
    for x, y in HOLES:
        cuts.append((3, occ.addCylinder(x, y, -0.001, 0, 0, fz + 0.002, HOLE_RADIUS)))
    out, _ = occ.cut(solid, cuts)
    occ.synchronize()
    return out[0][1]


def write(path: str | Path) -> Path:
    """Build the housing and write it as STEP (millimetres) to `path`."""
    import gmsh

    path = Path(path)
    started = not gmsh.isInitialized()
    if started:
        gmsh.initialize(interruptible=False)
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        gmsh.model.add("cast_housing")
        build(gmsh)
        gmsh.option.setString("Geometry.OCCTargetUnit", "M")  # model in m, file states mm
        gmsh.write(str(path))
    finally:
        gmsh.model.remove()
        if started:
            gmsh.finalize()
    return path


if __name__ == "__main__":
    out = write(Path(__file__).with_name("cast_housing.step"))
    print(
        f"wrote {out}: volume {volume() * 1e6:.1f} cm3, hearth face {hearth_area() * 1e4:.1f} cm2"
    )
