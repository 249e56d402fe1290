"""2D shapes: planar sections, axisymmetric profiles, outline files and ``femheat shapes``.

Checks and their sources:

- Areas and volumes of the built shapes against closed-form formulas: rectangles and circles,
  with each rounding of radius r adding or removing the corner spandrel r^2 (1 - pi/4); bodies
  of revolution by Pappus' theorem (V = 2 pi x_c A) or the solid's own formula. The formulas
  are cross-checked against section tables of the trade (values [memory], to their printed
  three figures). The geometry gmsh builds must match to round-off; the meshed area may differ
  by the chord segments cut off the arcs, bounded in `_chord_bound` [derived].
- A sphere (axisymmetric half-profile) heated by convection against the exact series
  (Incropera, DeWitt, Bergman, Lavine, *Fundamentals of Heat and Mass Transfer*, 6th ed.,
  sec. 5.6 [memory for the section number]; evaluated by `femheat.exact`, itself checked in
  `tests/test_exact.py`).
- An equal-leg angle: the target time converges as the mesh is refined (observed order and
  Richardson-extrapolated value printed), and the last point lies on the bisector, the line of
  symmetry of the section.
- Outline files: the parser's errors; areas of the example outline.
- ``femheat shapes`` lists every registered shape, its parameters and its faces.
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path

import numpy as np
import pytest

from femheat import exact
from femheat.case import load_case, parse_case
from femheat.cli import main
from femheat.errors import CaseError
from femheat.geometry import SHAPES, check_params, get_shape
from femheat.geometry.loops import arc_geometry
from femheat.geometry.outline import outline_loops, parse_outline, read_outline
from femheat.geometry.profiles import profile_loops
from femheat.geometry.sections import section_loops
from femheat.mesh import from_gmsh, gmsh_session, mesh_part
from femheat.problem import build_problem
from femheat.run import run_problem

GEOMETRIES = Path(__file__).resolve().parent.parent / "geometries"
SPANDREL = 1.0 - math.pi / 4.0  # area of a rounded corner's spandrel over r^2 [derived]
# centroid of a quarter-circle spandrel, from its corner along each edge, over r [derived:
# (corner square - quarter disc) moments, the quarter disc's centroid at 4 r / (3 pi)]
SPANDREL_X = (10.0 - 3.0 * math.pi) / (12.0 - 3.0 * math.pi)


# --- measuring built and meshed shapes -----------------------------------------------------


def _occ_measure(shape: str, params: dict, model: str) -> float:
    """Area (planar, m2 per m), volume by Pappus (axisymmetric) or volume (solid) of the
    geometry gmsh builds, before meshing."""
    with gmsh_session() as gmsh:
        built = get_shape(shape).build(gmsh, params, model)
        occ = gmsh.model.occ
        total = 0.0
        for tag in built.volume_tags:
            mass = occ.getMass(built.dim, tag)
            if model == "axisymmetric":
                mass *= 2.0 * math.pi * occ.getCenterOfMass(2, tag)[0]
            total += mass
        return total


def _mesh_measure(mesh) -> float:
    """Area of the triangles (planar), their volume of revolution (Pappus per triangle, exact
    for a triangle) or the volume of the tetrahedra."""
    p = mesh.points[mesh.cells]
    if mesh.dim == 3:
        a, b, c = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0], p[:, 3] - p[:, 0]
        return float(np.abs(np.einsum("ij,ij->i", a, np.cross(b, c))).sum() / 6.0)
    a, b = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]
    area = 0.5 * np.abs(a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0])
    if mesh.axisymmetric:
        return float((2.0 * math.pi * p[:, :, 0].mean(axis=1) * area).sum())
    return float(area.sum())


def _chord_bound(loops, h: float, weight_r: float | None = None) -> float:
    """Largest area between the arcs and their mesh chords [derived].

    A chord of length c on an arc of radius r cuts off r^2 (phi - sin phi)/2 ~ c^3/(12 r), so
    an arc of length L in chords of at most c loses at most L c^2 / (12 r). gmsh keeps chords
    near the size h; c = 1.5 h covers its overshoot. For a body of revolution the area is
    weighted by 2 pi times the largest radius `weight_r`.
    """
    total = 0.0
    for segs in loops:
        for s in segs:
            if s.is_arc:
                _, r, _, phi = arc_geometry(s)
                total += r * abs(phi) * (1.5 * h) ** 2 / (12.0 * r)
    return total * (2.0 * math.pi * weight_r if weight_r else 1.0)


# --- planar sections -------------------------------------------------------------------------

# (shape, [part] parameters in m, closed-form area in m2, source of the formula)
SECTIONS = [
    ("plate", {"width": 0.2, "thickness": 0.025}, 0.2 * 0.025, "rectangle w t"),
    ("round_bar", {"diameter": 0.05}, math.pi * 0.05**2 / 4, "circle pi D^2/4"),
    (
        "tube",
        {"outer_diameter": 0.0483, "wall": 0.004},
        math.pi / 4 * (0.0483**2 - 0.0403**2),
        "annulus pi (D^2 - d^2)/4",
    ),
    (
        "angle",
        {"leg_a": 0.06, "thickness": 0.006, "root_radius": 0.008, "toe_radius": 0.004},
        0.006 * (2 * 0.06 - 0.006) + SPANDREL * (0.008**2 - 2 * 0.004**2),
        "t (2a - t), plus the root spandrel, minus the two toe spandrels",
    ),
    (
        "angle",
        {
            "leg_a": 0.1,
            "leg_b": 0.065,
            "thickness": 0.008,
            "root_radius": 0.006,
            "heel_radius": 0.014,
        },
        0.008 * (0.1 + 0.065 - 0.008) + SPANDREL * (0.006**2 - 0.014**2),
        "t (a + b - t), plus the root spandrel, minus the heel spandrel",
    ),
    (
        "tee",
        {
            "width": 0.1,
            "depth": 0.1,
            "flange_thickness": 0.011,
            "web_thickness": 0.011,
            "root_radius": 0.011,
        },
        0.1 * 0.011 + (0.1 - 0.011) * 0.011 + 2 * SPANDREL * 0.011**2,
        "b tf + (d - tf) tw plus two root spandrels",
    ),
    (
        "i_section",
        {
            "width": 0.1,
            "depth": 0.2,
            "flange_thickness": 0.0085,
            "web_thickness": 0.0056,
            "root_radius": 0.012,
        },
        2 * 0.1 * 0.0085 + (0.2 - 2 * 0.0085) * 0.0056 + 4 * SPANDREL * 0.012**2,
        "2 b tf + (h - 2 tf) tw plus four root spandrels",
    ),
    (
        "channel",
        {
            "width": 0.055,
            "depth": 0.1,
            "flange_thickness": 0.0075,
            "web_thickness": 0.0045,
            "root_radius": 0.01,
        },
        2 * 0.055 * 0.0075 + (0.1 - 2 * 0.0075) * 0.0045 + 2 * SPANDREL * 0.01**2,
        "2 b tf + (h - 2 tf) tw plus two root spandrels",
    ),
    (
        "hollow_section",
        {"width": 0.1, "depth": 0.05, "wall": 0.005, "outer_radius": 0.01},
        2 * 0.005 * (0.1 + 0.05 - 2 * 0.005) - 4 * SPANDREL * (0.01**2 - 0.005**2),
        "2 t (B + H - 2 t) - (4 - pi)(ro^2 - ri^2), EN 10219-2 Annex B [memory]",
    ),
]


@pytest.mark.parametrize(("shape", "params", "area", "formula"), SECTIONS)
def test_section_area_matches_closed_form(shape, params, area, formula):
    """Closed-form area of the section, with the spandrels of its roundings."""
    p = check_params(shape, "planar", params)
    assert _occ_measure(shape, p, "planar") == pytest.approx(area, rel=1e-9), formula
    mesh = mesh_part(shape, p, "planar", None)  # default size
    h = mesh.size
    bound = _chord_bound(section_loops(shape, p), h)
    assert bound < 5e-3 * area  # tight enough to see a missing rounding
    assert abs(_mesh_measure(mesh) - area) <= bound + 1e-12 * area, formula


@pytest.mark.parametrize(
    ("index", "table_cm2", "source"),
    [
        (3, 6.91, "L 60x60x6, EN 10056-1 section table: A = 6.91 cm2 [memory]"),
        (6, 28.5, "IPE 200, Euronorm 19-57 / EN 10365 section table: A = 28.5 cm2 [memory]"),
        (7, 12.5, "UPE 100, EN 10365 section table: A = 12.5 cm2 [memory]"),
        (8, 13.4, "RHS 100x50x5 cold formed, EN 10219-2 table: A = 13.4 cm2 [memory]"),
    ],
)
def test_section_formulas_against_trade_tables(index, table_cm2, source):
    """The parametrisation and formula reproduce the tabulated areas to their 3 figures."""
    shape, params, area, _ = SECTIONS[index]
    assert 1e4 * area == pytest.approx(table_cm2, abs=0.05), source


def test_section_faces_named_as_documented():
    """Every face a section reports exists in the mesh, and the list matches the docs."""
    p = check_params(
        "angle",
        "planar",
        {"leg_a": 0.06, "thickness": 0.006, "root_radius": 0.008, "toe_radius": 0.004},
    )
    names = get_shape("angle").names_of_faces(p)
    assert names == (
        "leg_a_outer",
        "leg_a_tip",
        "leg_a_inner",
        "root",
        "leg_b_inner",
        "leg_b_tip",
        "leg_b_outer",
    )  # no heel: heel_radius is 0
    mesh = mesh_part("angle", p, "planar", 0.0015)
    assert set(mesh.face_names) == set(names)
    # the tip face runs to the far tangent point of the toe rounding: t - r2 + pi r2 / 2 long;
    # chords of angle phi are shorter than their arcs by phi^2 / 24 [derived]: at h = 1.5 mm
    # on r2 = 4 mm, 0.6 % of the rounding's length
    tip = mesh.points[mesh.faces["leg_a_tip"]]
    length = np.linalg.norm(tip[:, 1] - tip[:, 0], axis=1).sum()
    assert length == pytest.approx(0.006 - 0.004 + math.pi * 0.004 / 2, rel=6e-3)


@pytest.mark.parametrize(
    ("shape", "params", "where", "words"),
    [
        (
            "angle",
            {"leg_a": 0.06, "thickness": 0.006, "root_radius": 0.06},
            "root_radius",
            "0.06 m",
        ),
        ("angle", {"leg_a": 0.05, "thickness": 0.05}, "thickness", "leg_a"),
        ("angle", {"leg_a": 0.06, "thickness": 0.006, "toe_radius": 0.008}, "toe_radius", "0.008"),
        ("angle", {"leg_a": 0.06, "thickness": 0.006, "heel_radius": 0.01}, "heel_radius", "0.01"),
        ("tube", {"outer_diameter": 0.05, "wall": 0.03}, "wall", "round_bar"),
        (
            "i_section",
            {
                "width": 0.1,
                "depth": 0.2,
                "flange_thickness": 0.01,
                "web_thickness": 0.006,
                "root_radius": 0.05,
            },
            "root_radius",
            "0.047",
        ),
        ("hollow_section", {"width": 0.1, "depth": 0.05, "wall": 0.03}, "wall", "0.025"),
        ("ring", {"outer_diameter": 0.1, "inner_diameter": 0.1, "height": 0.02}, "inner", "disc"),
        ("stepped_shaft", {"steps": [[0.05, 0.1], [0.05, 0.2]]}, "steps[1]", "merge"),
        (
            "flange",
            {
                "outer_diameter": 0.2,
                "bore_diameter": 0.06,
                "disc_thickness": 0.02,
                "hub_diameter": 0.1,
                "hub_length": 0.03,
                "raised_face_diameter": 0.12,
            },
            "raised_face_height",
            "neither",
        ),
        (
            "flange",
            {
                "outer_diameter": 0.2,
                "bore_diameter": 0.06,
                "disc_thickness": 0.02,
                "hub_diameter": 0.1,
                "hub_length": 0.03,
                "hub_fillet": 0.05,
            },
            "hub_fillet",
            "0.05",
        ),
    ],
)
def test_inconsistent_parameters_name_the_parameter(shape, params, where, words):
    """A radius or thickness that does not fit is one line naming the key and the numbers."""
    model = (
        "planar" if shape in ("angle", "tube", "i_section", "hollow_section") else "axisymmetric"
    )
    data = _case_data({"model": model, "shape": shape, **params})
    with pytest.raises(CaseError) as err:
        parse_case(data)
    text = str(err.value)
    assert text.startswith(f"part.{where}"), text
    assert words in text and "; fix: " in text and "\n" not in text, text


# --- axisymmetric profiles and the solid ball ----------------------------------------------

FLANGE = {
    "outer_diameter": 0.235,
    "bore_diameter": 0.1,
    "disc_thickness": 0.026,
    "hub_diameter": 0.15,
    "hub_length": 0.045,
    "hub_fillet": 0.008,
    "raised_face_diameter": 0.162,
    "raised_face_height": 0.002,
}


def _flange_volume(p: dict) -> float:
    """Rings of the raised face, disc and straight hub, plus the fillet ring by Pappus."""
    rb, rr, ro, rh = (
        p[k] / 2
        for k in ("bore_diameter", "raised_face_diameter", "outer_diameter", "hub_diameter")
    )
    ring = math.pi * (
        (rr**2 - rb**2) * p["raised_face_height"]
        + (ro**2 - rb**2) * p["disc_thickness"]
        + (rh**2 - rb**2) * p["hub_length"]
    )
    r = p["hub_fillet"]
    return ring + 2 * math.pi * (rh + SPANDREL_X * r) * SPANDREL * r**2


TAPERED = {
    "outer_diameter": 0.2,
    "bore_diameter": 0.06,
    "disc_thickness": 0.02,
    "hub_diameter": 0.1,
    "hub_end_diameter": 0.08,
    "hub_length": 0.05,
}

# (shape, parameters, closed-form volume in m3, source)
PROFILES = [
    ("disc", {"diameter": 0.3, "thickness": 0.05}, math.pi * 0.15**2 * 0.05, "cylinder"),
    (
        "ring",
        {"outer_diameter": 0.3, "inner_diameter": 0.2, "height": 0.05},
        math.pi * (0.15**2 - 0.1**2) * 0.05,
        "hollow cylinder",
    ),
    ("sphere", {"radius": 0.05}, 4 / 3 * math.pi * 0.05**3, "sphere 4 pi R^3 / 3"),
    (
        "stepped_shaft",
        {"steps": [[0.06, 0.1], [0.1, 0.05], [0.08, 0.2]]},
        math.pi / 4 * (0.06**2 * 0.1 + 0.1**2 * 0.05 + 0.08**2 * 0.2),
        "sum of cylinders pi d^2 L / 4",
    ),
    ("flange", FLANGE, _flange_volume(FLANGE), "rings plus the fillet ring (Pappus)"),
    (
        "flange",
        TAPERED,
        math.pi * ((0.1**2 - 0.03**2) * 0.02 - 0.03**2 * 0.05)
        + math.pi * 0.05 / 3 * (0.05**2 + 0.05 * 0.04 + 0.04**2),
        "disc ring plus the hub frustum pi L (R1^2 + R1 R2 + R2^2)/3 less the bore",
    ),
]


@pytest.mark.parametrize(("shape", "params", "volume", "formula"), PROFILES)
def test_profile_volume_matches_closed_form(shape, params, volume, formula):
    """Volume of revolution of the half-profile (Pappus) against the solid's formula."""
    p = check_params(shape, "axisymmetric", params)
    assert _occ_measure(shape, p, "axisymmetric") == pytest.approx(volume, rel=1e-9), formula
    h = get_shape(shape).thickness(p) / 4.0
    mesh = mesh_part(shape, p, "axisymmetric", h)
    bound = _chord_bound(profile_loops(shape, p), h, weight_r=mesh.points[:, 0].max())
    assert abs(_mesh_measure(mesh) - volume) <= bound + 1e-12 * volume, formula
    axis = [n for n in get_shape(shape).names_of_faces(p) if n in get_shape(shape).axis_faces]
    for name in axis:  # axis faces lie on x = 0
        assert np.abs(mesh.points[mesh.faces[name], 0]).max() < 1e-12


def test_stepped_shaft_faces():
    p = check_params("stepped_shaft", "axisymmetric", {"steps": [[0.06, 0.1], [0.1, 0.05]]})
    names = get_shape("stepped_shaft").names_of_faces(p)
    assert names == ("first_end", "step_1", "shoulder_1_2", "step_2", "last_end", "axis")
    one = check_params("stepped_shaft", "axisymmetric", {"steps": [[0.06, 0.1]]})
    assert get_shape("stepped_shaft").names_of_faces(one) == (
        "first_end",
        "step_1",
        "last_end",
        "axis",
    )
    mesh = mesh_part("stepped_shaft", p, "axisymmetric", 0.004)
    shoulder = mesh.points[mesh.faces["shoulder_1_2"]]
    assert np.allclose(shoulder[..., 1], 0.1) and shoulder[..., 0].min() == pytest.approx(0.03)


def test_solid_ball_volume_and_face():
    """The same name builds the 3D ball, face "surface". The inscribed polyhedron lies
    inside the sphere by at most the sagitta e^2 / (8 R) of an edge e, so it misses at most
    4 pi R^2 e^2 / (8 R) of the volume: 3/8 (e/R)^2 relative, with e <= 1.5 h [derived]."""
    r = 0.05
    p = check_params("sphere", "solid", {"radius": r})
    exact_v = 4 / 3 * math.pi * r**3
    assert _occ_measure("sphere", p, "solid") == pytest.approx(exact_v, rel=1e-6)
    mesh = mesh_part("sphere", p, "solid", None)
    assert mesh.face_names == ("surface",)
    deficit = (exact_v - _mesh_measure(mesh)) / exact_v
    assert 0 < deficit < 3 / 8 * (1.5 * mesh.size / r) ** 2
    surf = mesh.points[np.unique(mesh.faces["surface"])]
    assert np.allclose(np.linalg.norm(surf, axis=1), r, rtol=1e-9)


# --- heating: the sphere against the exact series ---------------------------------------------

RHO, K, CP = 7800.0, 40.0, 460.0  # kg/m3, W/(m K), J/(kg K): constant, invented for the check


@pytest.mark.parametrize(
    "model, bi", [("axisymmetric", 1.0), ("axisymmetric", 4.0), ("solid", 1.0)]
)
def test_sphere_profile_target_time_against_exact_series(model, bi):
    """Sphere (half-profile or solid ball), convection only, default mesh and tolerance: the
    time for the centre to reach the target within 0.5 % of the exact series (Incropera 6th
    ed. sec. 5.6, 1 - z cot z = Bi)."""
    r, t_gas, t0, target = 0.05, 900.0, 20.0, 880.0
    htc = bi * K / r
    case = parse_case(
        {
            "part": {"model": model, "shape": "sphere", "radius": r},
            "material": {"density": RHO, "conductivity": K, "specific_heat": CP},
            "furnace": {"temperature": t_gas, "htc": htc, "emissivity": 0},
            "initial": {"temperature": t0},
            "target": {"temperature": target},
        }
    )
    problem = build_problem(case)
    result = run_problem(problem)
    fo = exact.fourier_at("sphere", bi, (target - t_gas) / (t0 - t_gas), 0.0)
    t_exact = fo * r**2 * RHO * CP / K
    err = result.target.time / t_exact - 1.0
    print(
        f"sphere {model} Bi={bi:g}: {result.target.time:.2f} s, "
        f"exact {t_exact:.2f} s, {100 * err:+.3f} %"
    )
    assert abs(err) < 5e-3
    # the centre (to within one element: a ball's mesh need not have a node at the centre)
    assert np.linalg.norm(result.target.last_point) <= problem.mesh.size


# --- the equal-leg angle: convergence and symmetry -------------------------------------------

ANGLE = {"leg_a": 0.06, "thickness": 0.006, "root_radius": 0.008, "toe_radius": 0.004}


def _angle_case(faces: dict, tolerance: float | None = None):
    """L 60x60x6 stainless-like angle (k = 15 W/(m K), rho c = 7900 x 500 [memory, typical
    austenitic]) cooled from 1050 C in water at 40 C with h = 5000 W/(m2 K) (common practice,
    no source: water quench above 1000) to 100 C; Bi = h (t/2) / k = 1."""
    data = {
        "part": {"model": "planar", "shape": "angle", **ANGLE},
        "material": {"density": 7900, "conductivity": 15, "specific_heat": 500},
        "furnace": {"temperature": 40, "htc": 5000, "emissivity": 0},
        "faces": faces,
        "initial": {"temperature": 1050},
        "target": {"temperature": 100},
    }
    if tolerance:
        data["solver"] = {"tolerance": tolerance}
    return parse_case(data)


def _nested_angle_meshes(params: dict, h0: float, levels: int):
    """Meshes of the angle at h0, h0/2, h0/4 ...: each level splits every triangle of the one
    before into four, new boundary nodes placed on the curves (gmsh refine), so every mesh
    holds the nodes of the coarser ones."""
    meshes = []
    with gmsh_session() as gmsh:
        built = get_shape("angle").build(gmsh, params, "planar")
        gmsh.model.addPhysicalGroup(2, built.volume_tags, name="part")
        for name, tags in built.faces.items():
            gmsh.model.addPhysicalGroup(1, tags, name=name)
        gmsh.option.setNumber("Mesh.MeshSizeMax", h0)
        gmsh.option.setNumber("Mesh.Algorithm", 6)
        gmsh.model.mesh.generate(2)
        for level in range(levels):
            if level:
                gmsh.model.mesh.refine()
            meshes.append(from_gmsh(gmsh, 2, False, h0 / 2**level))
    return meshes


def test_angle_target_time_converges_with_the_mesh():
    """Target time on nested meshes t/4, t/8, t/16 converges at about second order (P1
    elements: order 2 expected, Toptan et al., SAND2020-3887 R, 2020, for the field error);
    the default mesh is within 0.5 % of the Richardson-extrapolated value.

    The backs of both legs are insulated, which by mirror symmetry is a quarter of a
    cruciform bar with legs 2t thick: its coldest point is then the heel, a node of every
    mesh, so the study sees the discretisation error rather than how close a node happens to
    fall to the coldest point (with all faces exposed that node-sampling effect is of the same
    size, about 2e-4 of the time at t/16, and makes the sequence erratic). A tight step
    tolerance keeps the time-stepping error below 1e-5 of the time.
    """
    backs = {"leg_a_outer": {"condition": "insulated"}, "leg_b_outer": {"condition": "insulated"}}
    case = _angle_case(backs, tolerance=5e-7)
    times = []
    for mesh in _nested_angle_meshes(case.part.params, ANGLE["thickness"] / 4, 3):
        result = run_problem(build_problem(case, mesh=mesh))
        assert np.allclose(result.target.last_point, 0.0)  # the heel
        times.append(result.target.time)
    d1, d2 = times[0] - times[1], times[1] - times[2]
    order = math.log2(d1 / d2)
    extrapolated = times[2] + (times[2] - times[1]) / (2**order - 1)
    default = run_problem(build_problem(_angle_case(backs))).target.time
    print(
        f"angle: times {', '.join(f'{t:.4f}' for t in times)} s at t/4, t/8, t/16; observed "
        f"order {order:.2f}; extrapolated {extrapolated:.4f} s; default mesh and tolerance "
        f"{default:.4f} s ({100 * (default / extrapolated - 1):+.3f} %)"
    )
    assert d1 * d2 > 0 and abs(d2) < abs(d1)
    assert 1.3 < order < 2.7
    assert abs(default / extrapolated - 1) < 5e-3


def test_angle_last_point_on_the_bisector_near_the_heel():
    """All faces exposed, default settings: the section is symmetric about y = x, so the last
    point lies on that bisector (within one element: the mesh itself is not symmetric),
    between the heel and the root rounding, where the section is thickest."""
    problem = build_problem(_angle_case({}))
    x, y = run_problem(problem).target.last_point
    h = problem.mesh.size
    assert abs(x - y) / math.sqrt(2) <= h
    t, r1 = ANGLE["thickness"], ANGLE["root_radius"]
    root = (t + r1 - r1 / math.sqrt(2)) * math.sqrt(2)  # root surface along the bisector
    assert 0 < (x + y) / math.sqrt(2) < root


# --- outline files -----------------------------------------------------------------------------


def test_bracket_outline_area_and_faces():
    """angle_bracket.outline: foot 100 x 12 and upright 16 x 52 mm, a half-round lug of
    radius 8, less a bore of radius 4, less the heel spandrel (r = 10), plus the root spandrel
    (r = 6)."""
    area = (
        100 * 12 + 16 * 52 + math.pi * 8**2 / 2 - math.pi * 4**2 - SPANDREL * (10**2 - 6**2)
    ) * 1e-6
    p = {"file": str(GEOMETRIES / "angle_bracket.outline")}
    names = get_shape("outline").names_of_faces(p)
    assert names == (
        "heel",
        "underside",
        "foot_end",
        "foot_top",
        "upright_front",
        "lug",
        "upright_back",
        "bore",
    )
    assert _occ_measure("outline", p, "planar") == pytest.approx(area, rel=1e-9)
    h = 0.002
    mesh = mesh_part("outline", p, "planar", h)
    bound = _chord_bound(outline_loops(read_outline(p["file"])), h)
    assert abs(_mesh_measure(mesh) - area) <= bound
    bore = mesh.points[mesh.faces["bore"]]
    assert np.allclose(np.linalg.norm(bore - [0.008, 0.064], axis=-1), 0.004)


def test_axisymmetric_outline_with_a_hole(tmp_path):
    """A disc R 50 x 20 mm with a ring channel of radius 4 mm about r = 30 mm: volume
    pi R^2 t - 2 pi 30 pi 4^2 (Pappus)."""
    f = tmp_path / "disc.outline"
    f.write_text(
        "units mm\noutline\n 0 0 face bottom\n 50 0 face rim\n 50 20 face top\n"
        " 0 20 face axis\nclose\nhole channel\n 26 10 through 30 14\n 34 10 through 30 6\nclose\n",
        encoding="utf-8",
    )
    volume = (math.pi * 50**2 * 20 - 2 * math.pi * 30 * math.pi * 4**2) * 1e-9
    p = {"file": str(f)}
    assert _occ_measure("outline", p, "axisymmetric") == pytest.approx(volume, rel=1e-9)
    mesh = mesh_part("outline", p, "axisymmetric", 0.002)
    assert set(mesh.face_names) == {"bottom", "rim", "top", "axis", "channel"}
    assert np.abs(mesh.points[mesh.faces["axis"], 0]).max() < 1e-12


def test_outline_default_face_names_and_units():
    outline = parse_outline(
        "units cm\noutline\n0 0\n4 0 face right\n4 3 face top round 1\n0 3\nclose\n"
        "hole\n1 1 through 1.5 1.5\n2 1 through 1.5 0.5\nclose\n",
        "t.outline",
    )
    loops = outline_loops(outline)
    assert [s.name for s in loops[0]] == ["outline", "right", "top", "top", "top"]
    assert {s.name for s in loops[1]} == {"hole_1"}
    assert loops[0][1].start == (0.04, 0.0)  # cm -> m


BAD_OUTLINES = [
    ("outline\n0 0\n1 0\n1 1\n", "not closed", "line 1"),
    ("outline\n0 0\n1 0\n0 1\n1 1\nclose\n", "crosses itself", "line"),
    (
        "outline\n0 0\n1 0\n1 1\n0 1\nclose\nhole\n2 2\n3 2\n3 3\nclose\n",
        "not inside the outline",
        "line 7",
    ),
    ("outline\n0 0\n1 0\n1 1\n0 1\nclose\nhole\n0.5 0.5\n1.5 0.5\n0.5 0.8\nclose\n", "meets", ""),
    ("units mm\noutline\n0 0\n1 0 radius 2\n", "unknown word 'radius'", "line 4"),
    ("outline\n0 0\n1 zero\n", "'zero' is not a number", "line 3"),
    ("outline\n0 0\n10 0 round 6\n10 10 round 6\n0 10\nclose\n", "only 10 long", "line 4"),
    ("0 0\n", "outside a loop", "line 1"),
    ("hole\n0 0\n1 0\n1 1\nclose\n", "no 'outline'", ""),
    ("outline\n0 0\n1 0 centre 0.4 0.2\n1 1\nclose\n", "not the same", "line 3"),
    ("outline\n0 0\n1 0\n1 0\n0 1\nclose\n", "repeats", "line 4"),
    ("outline\n0 0 face 2nd\n1 0\n0 1\nclose\n", "not allowed", "line 2"),
]


@pytest.mark.parametrize(("text", "words", "line"), BAD_OUTLINES)
def test_outline_errors_name_the_line(text, words, line):
    with pytest.raises(CaseError) as err:
        outline_loops(parse_outline(text, "bad.outline"))
    msg = str(err.value)
    assert msg.startswith("part.file: bad.outline") and words in msg, msg
    assert line in msg and "; fix: " in msg and "\n" not in msg, msg


def test_outline_axisymmetric_errors():
    left = parse_outline("outline\n0 0\n1 0\n1 1 through 0.5 1.6\n0 1 face axis\nclose\n", "l")
    outline_loops(left, "planar")  # a fine planar outline
    with pytest.raises(CaseError, match="left of the axis"):
        outline_loops(parse_outline("outline\n-1 0\n1 0\n1 1\nclose\n", "l"), "axisymmetric")
    unnamed = parse_outline("outline\n0 0\n1 0\n1 1\n0 1\nclose\n", "u")
    with pytest.raises(CaseError, match="lies on the axis x = 0 but is named 'outline'"):
        outline_loops(unnamed, "axisymmetric")
    bulge = parse_outline("outline\n0 0\n1 0\n1 1\n0 1 face axis through -0.2 0.5\nclose\n", "b")
    with pytest.raises(CaseError, match="left of the axis"):
        outline_loops(bulge, "axisymmetric")


def test_outline_file_problems_through_the_cli(tmp_path, capsys):
    """Missing, unreadable and malformed outline files: exit 2 and one line naming part.file."""
    case = tmp_path / "case.toml"
    text = (GEOMETRIES / "angle_bracket.toml").read_text(encoding="utf-8")
    for body, words in [
        (None, "no such file"),
        (b"\xff\xfe outline", "not UTF-8"),
        (b"outline\n0 0\n1 0\n1 1 bulge 0.5\nclose\n", "line 4: unknown word 'bulge'"),
    ]:
        target = tmp_path / "part.outline"
        if body is not None:
            target.write_bytes(body)
        case.write_text(text.replace("angle_bracket.outline", "part.outline"), encoding="utf-8")
        assert main(["check", str(case)]) == 2
        err = capsys.readouterr().err.strip()
        assert err.startswith("error: part.file:") and words in err and "\n" not in err, err


# --- example cases in geometries/ --------------------------------------------------------------


@pytest.mark.parametrize("name", ["angle_bracket.toml", "weld_neck_flange.toml"])
def test_example_cases_run(name, tmp_path, monkeypatch):
    """The example cases run to their target from any working folder (files are found from
    the case file's folder); energy balance within 0.1 % (the warning limit of the run
    summary); the last point is a node of the part."""
    monkeypatch.chdir(tmp_path)
    case = load_case(GEOMETRIES / name)
    problem = build_problem(case)
    result = run_problem(problem)
    assert result.target.reached
    assert abs(result.energy.relative_error) < 1e-3
    assert list(result.target.last_point) in problem.mesh.points.tolist()
    with open(GEOMETRIES / name, "rb") as fh:
        part = tomllib.load(fh)["part"]
    assert not Path(part.get("file", "x")).is_absolute()


# --- femheat shapes ----------------------------------------------------------------------------


def test_shapes_command_lists_every_shape_parameter_and_face(capsys):
    assert main(["shapes"]) == 0
    out = capsys.readouterr().out
    for shape in SHAPES.values():
        assert f"{shape.name}  (model: {' or '.join(shape.models)})" in out
        for p in shape.params:
            assert f"    {p.name}" in out
        for face in shape.faces:
            assert face in out
    assert "faces: heel, leg_a_outer, leg_a_tip, leg_a_inner, root, leg_b_inner" in out
    assert "faces: surface, axis (the axis: no condition)" in out


def test_shapes_command_one_shape_and_unknown(capsys):
    assert main(["shapes", "flange"]) == 0
    out = capsys.readouterr().out
    assert out.startswith("flange  (model: axisymmetric)") and "raised_face_height" in out
    assert "\nangle  (model" not in out
    assert main(["shapes", "anglee"]) == 2
    assert "did you mean 'angle'?" in capsys.readouterr().err


def _case_data(part: dict) -> dict:
    return {
        "part": part,
        "material": {"density": RHO, "conductivity": K, "specific_heat": CP},
        "furnace": {"temperature": 900, "htc": 100, "emissivity": 0},
        "initial": {"temperature": 20},
        "target": {"temperature": 880},
    }
