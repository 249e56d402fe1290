"""Make ``manifold_plate.dxf``: the cross-section of a long manifold plate, drawn with ezdxf.

An invented part for the examples and tests (not a real product): a steel plate 80 x 50 mm in
section with its four long edges rounded to R 6, and two drilled passages, 16 mm and 10 mm, that
run along its length. The drawing is in millimetres ($INSUNITS = 4) and uses what the DXF reader
of femheat reads (`femheat.geometry.dxf`):

- the outline: one closed LWPOLYLINE on layer 0 (face ``outline``), its rounded corners drawn
  as bulges (a quarter circle has bulge tan(90 deg / 4));
- the passages: two CIRCLEs on layer ``passage`` (face ``passage``);
- the underside, on which the plate lies: a LINE on layer ``underside`` drawn over the bottom
  edge of the polyline (face ``underside``);
- a dash-dot centre line through the passages on layer ``center``, which the reader passes
  over.

Run from anywhere::

    python geometries/make_plate_dxf.py

`area()` gives the closed-form area of the section, which the tests compare with the built shape.
"""

from __future__ import annotations

import math
from pathlib import Path

__all__ = ["WIDTH", "HEIGHT", "CORNER", "PASSAGES", "area", "underside_length", "write"]

# all in millimetres, as drawn; the section lies in 0 <= x <= WIDTH, 0 <= y <= HEIGHT
WIDTH, HEIGHT = 80.0, 50.0
CORNER = 6.0  # radius of the rounded long edges
PASSAGES = ((28.0, 25.0, 8.0), (60.0, 22.0, 5.0))  # centre x, centre y, radius


def area() -> float:
    """Closed-form area of the section, m2: rectangle less the four corner spandrels
    (4 - pi) r^2, less the passages pi r^2."""
    mm2 = WIDTH * HEIGHT - (4.0 - math.pi) * CORNER**2 - sum(math.pi * r**2 for *_, r in PASSAGES)
    return mm2 * 1e-6


def underside_length() -> float:
    """Length of the straight bottom edge between the roundings, m."""
    return (WIDTH - 2.0 * CORNER) * 1e-3


def write(path: str | Path) -> Path:
    """Draw the section and save it as DXF (millimetres) at `path`."""
    import ezdxf

    path = Path(path)
    doc = ezdxf.new("R2010", setup=["linetypes"], units=4)  # $INSUNITS = 4: millimetres
    doc.layers.add("passage", color=1)
    doc.layers.add("underside", color=3)
    doc.layers.add("center", color=4, linetype="CENTER")
    msp = doc.modelspace()
    b = math.tan(math.radians(90.0) / 4.0)  # bulge of a quarter circle, counter-clockwise
    w, h, r = WIDTH, HEIGHT, CORNER
    msp.add_lwpolyline(
        [
            (r, 0, 0),
            (w - r, 0, b),
            (w, r, 0),
            (w, h - r, b),
            (w - r, h, 0),
            (r, h, b),
            (0, h - r, 0),
            (0, r, b),
        ],
        format="xyb",
        close=True,
    )
    for x, y, radius in PASSAGES:
        msp.add_circle((x, y), radius, dxfattribs={"layer": "passage"})
    msp.add_line((r, 0), (w - r, 0), dxfattribs={"layer": "underside"})
    msp.add_line((-5, 25), (w + 5, 25), dxfattribs={"layer": "center"})  # dash-dot, passed over
    doc.saveas(path)
    return path


if __name__ == "__main__":
    out = write(Path(__file__).with_name("manifold_plate.dxf"))
    print(f"wrote {out}: section area {area() * 1e6:.1f} mm2")
