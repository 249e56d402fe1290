"""DXF drawings for the shape ``outline`` (`femheat.geometry.dxf`).

Every drawing here is written with ezdxf into a temporary folder. Checks and their sources:

- Areas of the built shapes against closed forms of elementary geometry: a rectangle a b less a
  circle pi r^2; a slot (stadium) 2 r L + pi r^2; a rectangle with corners rounded to r less
  (4 - pi) r^2. Volumes of revolution by Pappus' theorem, V = 2 pi x_c A (a torus
  2 pi^2 R r^2, a disc pi R^2 t). gmsh's geometry must match to round-off; the meshed area
  may differ by the chord segments cut off the arcs, bounded as in `tests/test_geometry_2d.py`
  (c^3 / (12 r) per chord of length c on radius r [derived]).
- Bulges: the DXF reference defines the bulge of a polyline vertex as tan(theta / 4), theta the
  included angle of the arc to the next vertex, negative when clockwise (Autodesk, *DXF
  Reference*, LWPOLYLINE group code 42 [memory]). The arcs read are compared with ezdxf's own
  `ezdxf.math.bulge_to_arc`, and world positions of mirrored entities (extrusion (0, 0, -1))
  with `ezdxf.bbox.extents` (ezdxf as the reference library).
- Units: $INSUNITS 1 = inches, 4 = millimetres, 5 = centimetres, 6 = metres (Autodesk, *DXF
  Reference*, HEADER section [memory]; the same codes as `ezdxf.units`); 1 in = 25.4 mm
  exactly (international yard and pound, 1959).
- The example case (geometries/manifold_plate.toml): its underside lies on the hearth and is
  insulated, so it acts as a plane of symmetry and the last point to reach the target lies on
  it (an adiabatic face is a symmetry plane of the mirrored part; maximum principle [derived]).
"""

from __future__ import annotations

import importlib.util
import math
from pathlib import Path

import numpy as np
import pytest

ezdxf = pytest.importorskip("ezdxf")

from femheat.case import load_case  # noqa: E402
from femheat.cli import main  # noqa: E402
from femheat.errors import CaseError  # noqa: E402
from femheat.geometry import ShapeParamError, check_params, get_shape  # noqa: E402
from femheat.geometry.dxf import face_name, read_dxf  # noqa: E402
from femheat.geometry.loops import arc_geometry, loop_area  # noqa: E402
from femheat.geometry.outline import outline_loops  # noqa: E402
from femheat.mesh import gmsh_session, mesh_part  # noqa: E402
from femheat.problem import build_problem  # noqa: E402
from femheat.run import run_problem  # noqa: E402

GEOMETRIES = Path(__file__).resolve().parent.parent / "geometries"
QUARTER = math.tan(math.radians(90.0) / 4.0)  # bulge of a quarter circle (DXF reference)


def _drawing(units: int | None = 4):
    """A new drawing with the CENTER line type; $INSUNITS = units (None: 0, unitless)."""
    doc = ezdxf.new("R2010", setup=["linetypes"])
    doc.units = 0 if units is None else units
    return doc, doc.modelspace()


def _save(doc, tmp_path, name="part.dxf") -> str:
    path = tmp_path / name
    doc.saveas(path)
    return str(path)


def _params(path, units=None) -> dict:
    return {"file": str(path), "units": units}


def _occ_measure(params: dict, model: str = "planar") -> float:
    """Area (planar, m2) or volume by Pappus (axisymmetric, m3) of the geometry gmsh builds."""
    with gmsh_session() as gmsh:
        built = get_shape("outline").build(gmsh, params, model)
        total = 0.0
        for tag in built.volume_tags:
            mass = gmsh.model.occ.getMass(2, tag)
            if model == "axisymmetric":
                mass *= 2.0 * math.pi * gmsh.model.occ.getCenterOfMass(2, tag)[0]
            total += mass
        return total


def _mesh_area(mesh) -> float:
    p = mesh.points[mesh.cells]
    a, b = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]
    area = 0.5 * np.abs(a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0])
    if mesh.axisymmetric:
        return float((2.0 * math.pi * p[:, :, 0].mean(axis=1) * area).sum())
    return float(area.sum())


def _chord_bound(loops, h: float, weight_r: float | None = None) -> float:
    """Largest area between the arcs and their mesh chords, chords up to 1.5 h [derived]."""
    total = 0.0
    for segs in loops:
        for s in segs:
            if s.is_arc:
                _, r, _, phi = arc_geometry(s)
                total += abs(phi) * (1.5 * h) ** 2 / 12.0
    return total * (2.0 * math.pi * weight_r if weight_r else 1.0)


def _net_area(loops) -> float:
    return abs(loop_area(loops[0])) - sum(abs(loop_area(lp)) for lp in loops[1:])


# --- areas and face names ----------------------------------------------------------------------


def test_rectangle_with_a_round_hole(tmp_path):
    """60 x 40 mm plate on layer 'plate' less a 16 mm bore on layer 'bore': a b - pi r^2
    (elementary geometry); the meshed area within the chord bound."""
    doc, msp = _drawing(units=4)
    msp.add_lwpolyline(
        [(0, 0), (60, 0), (60, 40), (0, 40)], close=True, dxfattribs={"layer": "plate"}
    )
    msp.add_circle((22, 18), 8, dxfattribs={"layer": "bore"})
    p = _params(_save(doc, tmp_path))
    area = (60 * 40 - math.pi * 8**2) * 1e-6
    assert get_shape("outline").names_of_faces(p) == ("plate", "bore")
    assert _occ_measure(p) == pytest.approx(area, rel=1e-9)
    h = 0.002
    mesh = mesh_part("outline", p, "planar", h)
    assert abs(_mesh_area(mesh) - area) <= _chord_bound(outline_loops(read_dxf(p["file"])), h)
    bore = mesh.points[mesh.faces["bore"]]
    assert np.allclose(np.linalg.norm(bore - [0.022, 0.018], axis=-1), 0.008)


def test_square_flange_blank_with_a_bolt_circle(tmp_path):
    """A 120 mm square blank with a 40 mm bore and eight 12 mm bolt holes on a 90 mm circle
    (more edge pieces than the crossing check takes at once): a^2 - pi R^2 - 8 pi r^2
    (elementary geometry); the eight holes are one face."""
    doc, msp = _drawing(units=4)
    msp.add_lwpolyline([(0, 0), (120, 0), (120, 120), (0, 120)], close=True)
    msp.add_circle((60, 60), 20, dxfattribs={"layer": "bore"})
    for k in range(8):
        t = 2 * math.pi * k / 8
        msp.add_circle(
            (60 + 45 * math.cos(t), 60 + 45 * math.sin(t)), 6, dxfattribs={"layer": "bolt"}
        )
    p = _params(_save(doc, tmp_path))
    area = (120**2 - math.pi * 20**2 - 8 * math.pi * 6**2) * 1e-6
    assert _net_area(outline_loops(read_dxf(p["file"]))) == pytest.approx(area, rel=1e-12)
    assert get_shape("outline").names_of_faces(p) == ("outline", "bolt", "bore")


def test_slot_of_bulge_arcs_both_ways_round(tmp_path):
    """A slot (stadium) of straight length L = 50 and radius r = 10 mm, ends drawn as
    half-circle bulges (bulge 1): area 2 r L + pi r^2 (elementary geometry), drawn counter-
    clockwise (bulge +1) and clockwise (bulge -1). The arcs agree with ezdxf.math.bulge_to_arc."""
    from ezdxf.math import bulge_to_arc

    L, r = 50.0, 10.0
    ccw = [(0, 0, 0), (L, 0, 1), (L, 2 * r, 0), (0, 2 * r, 1)]
    # the same loop backwards: a bulge belongs to the edge leaving its vertex, and flips sign
    cw = [(0, 2 * r, 0), (L, 2 * r, -1), (L, 0, 0), (0, 0, -1)]
    area = (2 * r * L + math.pi * r**2) * 1e-6
    for k, pts in enumerate((ccw, cw)):
        doc, msp = _drawing(units=4)
        msp.add_lwpolyline(pts, format="xyb", close=True)
        p = _params(_save(doc, tmp_path, f"slot{k}.dxf"))
        loops = outline_loops(read_dxf(p["file"]))
        assert _net_area(loops) == pytest.approx(area, rel=1e-12)
        assert _occ_measure(p) == pytest.approx(area, rel=1e-9)
        arcs = [s for s in loops[0] if s.is_arc]
        assert len(arcs) == 2
        for i, (x, y, b) in enumerate(pts):
            if b == 0:
                continue
            nx, ny, _ = pts[(i + 1) % len(pts)]
            centre, _, _, radius = bulge_to_arc((x, y), (nx, ny), b)
            seg = next(s for s in arcs if np.allclose(s.start, (x * 1e-3, y * 1e-3)))
            c, rr, _, sweep = arc_geometry(seg)
            assert np.allclose(c, np.array([centre.x, centre.y]) * 1e-3, atol=1e-12)
            assert rr == pytest.approx(radius * 1e-3, rel=1e-12)
            assert sweep == pytest.approx(4 * math.atan(b), rel=1e-12)  # tan(theta/4) = bulge


def test_old_style_polylines(tmp_path):
    """POLYLINE entities: a 2D polyline rectangle 70 x 30 mm whose last point repeats its first
    (closed without the flag), a round hole drawn as a closed 2-vertex 2D polyline with bulges
    1 and 1 (two half circles, r = 6) and a 3D polyline triangle hole (legs 10 mm):
    a b - pi r^2 - 10 x 10 / 2 (elementary geometry)."""
    doc, msp = _drawing(units=4)
    msp.add_polyline2d([(0, 0), (70, 0), (70, 30), (0, 30), (0, 0)])
    hole = msp.add_polyline2d([(14, 15), (26, 15)], close=True, dxfattribs={"layer": "bore"})
    for v in hole.vertices:
        v.dxf.bulge = 1.0
    msp.add_polyline3d([(40, 10, 0), (50, 10, 0), (40, 20, 0)], close=True)
    p = _params(_save(doc, tmp_path))
    area = (70 * 30 - math.pi * 6**2 - 10 * 10 / 2) * 1e-6
    assert _occ_measure(p) == pytest.approx(area, rel=1e-9)
    assert get_shape("outline").names_of_faces(p) == ("outline", "bore", "hole_1")


def test_mirrored_polyline_lies_where_ezdxf_puts_it(tmp_path):
    """An LWPOLYLINE with extrusion (0, 0, -1) (a mirrored entity, OCS x = -world x): the
    shape's bounding box equals ezdxf.bbox.extents of the entity, its area is unchanged
    (rectangle with one corner rounded by a bulge: a b - (1 - pi/4) r^2)."""
    from ezdxf import bbox

    doc, msp = _drawing(units=4)
    e = msp.add_lwpolyline(
        [(10, 0, 0), (40, 0, QUARTER), (50, 10, 0), (50, 30, 0), (10, 30, 0)],
        format="xyb",
        close=True,
        dxfattribs={"extrusion": (0, 0, -1)},
    )
    ext = bbox.extents([e])
    p = _params(_save(doc, tmp_path))
    with gmsh_session() as gmsh:
        built = get_shape("outline").build(gmsh, p, "planar")
        box = gmsh.model.getBoundingBox(2, built.volume_tags[0])
    assert np.allclose(
        [box[0], box[1], box[3], box[4]],
        np.array([ext.extmin.x, ext.extmin.y, ext.extmax.x, ext.extmax.y]) * 1e-3,
        atol=1e-6,  # OpenCASCADE widens boxes by its tolerance
    )
    assert ext.extmax.x <= -10 + 1e-9  # really mirrored into x < 0
    area = (40 * 30 - (1 - math.pi / 4) * 10**2) * 1e-6
    assert _net_area(outline_loops(read_dxf(p["file"]))) == pytest.approx(area, rel=1e-12)


def test_layers_name_faces_and_default_names(tmp_path):
    """Layer 0 gives outline, hole_1, hole_2 (numbered left to right); other layers are
    lowercased and cleaned; a LINE on a layer drawn over a polyline edge names that edge; a
    dashed centre line is passed over."""
    doc, msp = _drawing(units=4)
    doc.layers.add("center", linetype="CENTER")
    msp.add_lwpolyline([(0, 0), (100, 0), (100, 40), (0, 40)], close=True)
    msp.add_circle((70, 20), 5)  # hole_2: right
    msp.add_circle((20, 20), 5)  # hole_1: left
    msp.add_lwpolyline(
        [(40, 15), (55, 15), (55, 25), (40, 25)], close=True, dxfattribs={"layer": "Bore Ø20"}
    )
    msp.add_line((0, 0), (100, 0), dxfattribs={"layer": "UNDERSIDE"})
    msp.add_line((-5, 20), (105, 20), dxfattribs={"layer": "center"})
    outline = read_dxf(_save(doc, tmp_path))
    loops = outline_loops(outline)
    assert [s.name for s in loops[0]] == ["underside", "outline", "outline", "outline"]
    names = [{s.name for s in lp} for lp in loops[1:]]
    assert names == [{"hole_1"}, {"bore_20"}, {"hole_2"}]
    centres = [np.mean([s.start for s in lp], axis=0)[0] for lp in loops[1:]]
    assert centres == sorted(centres)
    assert face_name("0") == "" and face_name("2nd cut") == "layer_2nd_cut"


def test_chain_of_lines_and_arcs_with_a_face_per_layer(tmp_path):
    """A plate 80 x 40 mm with two corners rounded to r = 8, drawn as separate LINE and ARC
    entities (in scrambled order and direction) on two layers: area a b - 2 (1 - pi/4) r^2."""
    r = 8

    def draw():
        doc, msp = _drawing(units=4)
        msp.add_line((80, 40), (r, 40), dxfattribs={"layer": "top"})
        msp.add_line((0, 0), (80 - r, 0))
        msp.add_arc((80 - r, r), r, 270, 0)  # bottom right corner, counter-clockwise
        msp.add_line((0, 40 - r), (0, 0))
        msp.add_line((80, r), (80, 40))
        msp.add_arc((r, 40 - r), r, 90, 180, dxfattribs={"layer": "top"})  # top left corner
        return doc, msp

    doc, _ = draw()
    p = _params(_save(doc, tmp_path, "chain.dxf"))
    area = (80 * 40 - 2 * (1 - math.pi / 4) * r**2) * 1e-6
    assert _occ_measure(p) == pytest.approx(area, rel=1e-9)
    doc, msp = draw()
    msp.add_line((20, 10), (30, 10))  # a stray line inside: it closes no loop
    with pytest.raises(CaseError) as err:
        read_dxf(_save(doc, tmp_path, "stray.dxf"))
    _one_line(err, "LINE #", "on layer '0'", "its end at (20, 10) mm joins no other edge")
    assert set(get_shape("outline").names_of_faces(p)) == {"top", "outline"}


# --- units -------------------------------------------------------------------------------------


def _square(units, size=60.0, tmp_path=None, name="sq.dxf"):
    doc, msp = _drawing(units=units)
    msp.add_lwpolyline([(0, 0), (size, 0), (size, size), (0, size)], close=True)
    return _save(doc, tmp_path, name)


def test_units_from_the_header_or_the_case(tmp_path):
    """A 60 mm square in a drawing in mm ($INSUNITS = 4) is 0.06 m; in inches ($INSUNITS = 1)
    60 x 0.0254 m; a unitless drawing needs [part] units, which also overrides the header."""
    side = [p.x for p in read_dxf(_square(4, tmp_path=tmp_path, name="mm.dxf")).loops[0]]
    assert max(side) == pytest.approx(0.06, rel=1e-12)
    inch = read_dxf(_square(1, tmp_path=tmp_path, name="in.dxf")).loops[0]
    assert max(v.y for v in inch) == pytest.approx(60 * 0.0254, rel=1e-12)
    cm = read_dxf(_square(5, tmp_path=tmp_path, name="cm.dxf")).loops[0]
    assert max(v.x for v in cm) == pytest.approx(0.6, rel=1e-12)
    bare = _square(None, tmp_path=tmp_path, name="bare.dxf")
    with pytest.raises(CaseError) as err:
        read_dxf(bare)
    msg = str(err.value)
    assert msg.startswith("part.file: bare.dxf: the drawing does not state its units")
    assert 'add units = "mm"' in msg and "\n" not in msg
    assert max(v.x for v in read_dxf(bare, "mm").loops[0]) == pytest.approx(0.06, rel=1e-12)
    over = read_dxf(_square(1, tmp_path=tmp_path, name="in.dxf"), "mm").loops[0]
    assert max(v.x for v in over) == pytest.approx(0.06, rel=1e-12)
    dm = _square(14, tmp_path=tmp_path, name="dm.dxf")  # decimetres: not read
    with pytest.raises(CaseError, match=r"\$INSUNITS = 14\), which are not read"):
        read_dxf(dm)


def test_units_key_is_checked():
    with pytest.raises(ShapeParamError, match="unknown unit 'furlong'"):
        check_params("outline", "planar", {"file": "a.dxf", "units": "furlong"})
    with pytest.raises(ShapeParamError, match="read only for DXF drawings"):
        check_params("outline", "planar", {"file": "a.outline", "units": "mm"})
    assert check_params("outline", "planar", {"file": "a.DXF", "units": "in"})["units"] == "in"


# --- axisymmetric ------------------------------------------------------------------------------


def test_torus_ring_volume_by_pappus(tmp_path):
    """A ring of round section r = 10 mm about R = 40 mm (a CIRCLE): V = 2 pi R pi r^2."""
    doc, msp = _drawing(units=4)
    msp.add_circle((40, 0), 10, dxfattribs={"layer": "surface"})
    p = _params(_save(doc, tmp_path))
    volume = 2 * math.pi * 0.040 * math.pi * 0.010**2
    assert _occ_measure(p, "axisymmetric") == pytest.approx(volume, rel=1e-9)
    h = 0.002
    mesh = mesh_part("outline", p, "axisymmetric", h)
    bound = _chord_bound(outline_loops(read_dxf(p["file"])), h, weight_r=0.05)
    assert abs(_mesh_area(mesh) - volume) <= bound
    assert mesh.face_names == ("surface",)


def test_disc_on_the_axis_needs_an_axis_line(tmp_path):
    """A disc R 50 x 20 mm drawn from x = 0: without a line on layer 'axis' over the edge on
    x = 0 it is refused; a dashed centre line on layer axis, longer than the part, names it.
    V = pi R^2 t (Pappus)."""
    doc, msp = _drawing(units=4)
    msp.add_lwpolyline([(0, 0), (50, 0), (50, 20), (0, 20)], close=True)
    bare = _params(_save(doc, tmp_path, "bare.dxf"))
    get_shape("outline").names_of_faces(bare)  # fine as a planar shape
    with pytest.raises(CaseError) as err:
        _occ_measure(bare, "axisymmetric")
    msg = str(err.value)
    assert "lies on the axis x = 0 but is named 'outline'" in msg
    assert "layer 'axis'" in msg and "\n" not in msg
    doc.layers.add("axis", linetype="CENTER")
    msp.add_line((0, -10), (0, 30), dxfattribs={"layer": "axis"})
    p = _params(_save(doc, tmp_path, "disc.dxf"))
    assert set(get_shape("outline").names_of_faces(p)) == {"outline", "axis"}
    volume = math.pi * 0.05**2 * 0.02
    assert _occ_measure(p, "axisymmetric") == pytest.approx(volume, rel=1e-9)
    msp.add_line((10, 0), (10, 20), dxfattribs={"layer": "axis", "linetype": "Continuous"})
    with pytest.raises(CaseError):  # a stray continuous line inside the part
        read_dxf(_save(doc, tmp_path, "stray.dxf"))


# --- errors ------------------------------------------------------------------------------------


def _one_line(exc_info, *words):
    msg = str(exc_info.value)
    assert msg.startswith("part.file: ") and "; fix: " in msg and "\n" not in msg, msg
    for w in words:
        assert w in msg, msg


def test_errors_name_the_file_and_the_fix(tmp_path):
    text = tmp_path / "text.dxf"
    text.write_text("outline\n0 0\n1 0\n1 1\nclose\n", encoding="utf-8")
    with pytest.raises(CaseError) as err:
        read_dxf(text)
    _one_line(err, "text.dxf", "DXF")
    with pytest.raises(CaseError) as err:
        read_dxf(tmp_path / "missing.dxf")
    _one_line(err, "no such file")

    doc, msp = _drawing()
    msp.add_text("PLATE 60 x 40")
    with pytest.raises(CaseError) as err:
        read_dxf(_save(doc, tmp_path, "empty.dxf"))
    _one_line(err, "no closed polyline", "1 TEXT")

    doc, msp = _drawing()
    msp.add_lwpolyline([(0, 0), (60, 0), (60, 40), (0, 40)])  # not closed
    with pytest.raises(CaseError) as err:
        read_dxf(_save(doc, tmp_path, "open.dxf"))
    _one_line(err, "no closed loop in the drawing", "LWPOLYLINE", "is open", "close the polyline")

    doc, msp = _drawing()  # a hole that cuts the outline's edge
    msp.add_lwpolyline([(0, 0), (60, 0), (60, 40), (0, 40)], close=True)
    msp.add_circle((58, 20), 5)
    with pytest.raises(CaseError) as err:
        outline_loops(read_dxf(_save(doc, tmp_path, "cut.dxf")))
    _one_line(err, "meets")

    doc, msp = _drawing()  # a bow tie
    msp.add_lwpolyline([(0, 0), (60, 40), (60, 0), (0, 40)], close=True)
    with pytest.raises(CaseError) as err:
        outline_loops(read_dxf(_save(doc, tmp_path, "bow.dxf")))
    _one_line(err, "crosses itself")

    doc, msp = _drawing()  # three lines from one corner
    msp.add_lwpolyline([(0, 0), (60, 0), (60, 40), (0, 40)], close=True)
    msp.add_line((60, 40), (80, 60))
    with pytest.raises(CaseError) as err:
        read_dxf(_save(doc, tmp_path, "branch.dxf"))
    _one_line(err, "3 edges meet at (60, 40) mm")

    doc, msp = _drawing()
    msp.add_lwpolyline([(0, 0), (60, 0), (60, 40), (0, 40)], close=True)
    msp.add_ellipse((30, 20), major_axis=(10, 0), ratio=0.5)
    with pytest.raises(CaseError) as err:
        read_dxf(_save(doc, tmp_path, "ellipse.dxf"))
    _one_line(err, "ELLIPSE", "not read")
    doc.layers.add("construction").off()
    doc.modelspace().query("ELLIPSE")[0].dxf.layer = "construction"
    assert len(read_dxf(_save(doc, tmp_path, "ellipse_off.dxf")).loops) == 1


def test_bad_drawing_through_the_cli(tmp_path, capsys):
    """`femheat check` on a case whose drawing is open: exit 2, one line naming part.file."""
    doc, msp = _drawing()
    msp.add_lwpolyline([(0, 0), (60, 0), (60, 40), (0, 40)])
    _save(doc, tmp_path, "manifold_plate.dxf")
    text = (GEOMETRIES / "manifold_plate.toml").read_text(encoding="utf-8")
    case = tmp_path / "case.toml"
    case.write_text(text, encoding="utf-8")
    assert main(["check", str(case)]) == 2
    err = capsys.readouterr().err.strip()
    assert (
        err.startswith("error: part.file: manifold_plate.dxf: no closed loop") and "\n" not in err
    )


def test_shapes_command_mentions_dxf(capsys):
    assert main(["shapes", "outline"]) == 0
    out = capsys.readouterr().out
    assert "DXF" in out and "units" in out and "$INSUNITS" in out


# --- the example drawing and case --------------------------------------------------------------


def _maker():
    spec = importlib.util.spec_from_file_location(
        "make_plate_dxf", GEOMETRIES / "make_plate_dxf.py"
    )
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_example_drawing_matches_its_script(tmp_path):
    """manifold_plate.dxf (and a fresh copy written by make_plate_dxf.py): the closed-form
    area of the script, the faces it draws, and the underside edge length."""
    maker = _maker()
    for path in (GEOMETRIES / "manifold_plate.dxf", maker.write(tmp_path / "fresh.dxf")):
        loops = outline_loops(read_dxf(path))
        assert _net_area(loops) == pytest.approx(maker.area(), rel=1e-12)
        p = _params(path)
        assert get_shape("outline").names_of_faces(p) == ("underside", "outline", "passage")
        under = [s for s in loops[0] if s.name == "underside"]
        assert len(under) == 1
        assert math.dist(under[0].start, under[0].end) == pytest.approx(maker.underside_length())


def test_example_case_meshes_and_heats(tmp_path, monkeypatch):
    """geometries/manifold_plate.toml runs to its target; the last point lies on the insulated
    underside (y = 0); energy balance within 0.1 % (the run summary's warning limit)."""
    monkeypatch.chdir(tmp_path)
    problem = build_problem(load_case(GEOMETRIES / "manifold_plate.toml"))
    assert _mesh_area(problem.mesh) == pytest.approx(_maker().area(), rel=2e-3)
    result = run_problem(problem)
    assert result.target.reached
    assert abs(result.energy.relative_error) < 1e-3
    assert abs(result.target.last_point[1]) < 1e-9
    print(
        f"manifold plate: target at {result.target.time:.0f} s, "
        f"last point {result.target.last_point}"
    )
