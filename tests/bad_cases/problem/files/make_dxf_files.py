"""Make the DXF drawings the problem-stage bad cases point at (run once; files are kept).

Each drawing is wrong in one way: ``open_polyline.dxf`` holds only an open polyline (no closed
loop), ``no_units.dxf`` a closed one in a drawing that does not state its units ($INSUNITS =
0) while the case gives no ``units``. ``not_a_drawing.dxf`` is written by hand (text).
"""

from pathlib import Path

import ezdxf

HERE = Path(__file__).parent


def main() -> None:
    doc = ezdxf.new("R2000", units=4)  # millimetres
    doc.modelspace().add_lwpolyline([(0, 0), (60, 0), (60, 40), (0, 40)])  # not closed
    doc.saveas(HERE / "open_polyline.dxf")

    doc = ezdxf.new("R2000")
    doc.units = 0  # unitless
    doc.modelspace().add_lwpolyline([(0, 0), (60, 0), (60, 40), (0, 40)], close=True)
    doc.saveas(HERE / "no_units.dxf")


if __name__ == "__main__":
    main()
