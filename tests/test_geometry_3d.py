"""Solid parts: cylinder, extrusions, revolutions, STEP/BREP files, face selection, mesh files.

Geometry checks compare the OpenCASCADE solid (volumes and face areas from gmsh, before
meshing) with closed-form formulas; run checks compare target times with exact solutions.
Sources are named beside each check. Meshes are kept small (a few thousand nodes).
"""

from __future__ import annotations

import copy
import importlib.util
import math
from pathlib import Path

import numpy as np
import pytest

from femheat import exact
from femheat.case import load_case, parse_case
from femheat.cli import main
from femheat.errors import CaseError
from femheat.geometry import check_params, get_shape
from femheat.mesh import gmsh_session, mesh_part
from femheat.problem import build_problem
from femheat.run import run_problem

ROOT = Path(__file__).resolve().parents[1]
GEOMETRIES = ROOT / "geometries"


def _housing_module():
    spec = importlib.util.spec_from_file_location(
        "make_cast_housing", GEOMETRIES / "make_cast_housing.py"
    )
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


HOUSING = _housing_module()
HOUSING_STEP = GEOMETRIES / "cast_housing.step"


def geometry(shape: str, params: dict, model: str = "solid"):
    """Build a registered shape with gmsh (no mesh): face names, volume (m3), face areas (m2)."""
    checked = check_params(shape, model, params)
    with gmsh_session() as gmsh:
        built = get_shape(shape).build(gmsh, checked, model)
        volume = sum(gmsh.model.occ.getMass(3, t) for t in built.volume_tags)
        areas = {
            name: sum(gmsh.model.occ.getMass(2, t) for t in tags)
            for name, tags in built.faces.items()
        }
    return built, volume, areas


def mesh_volume(mesh) -> float:
    p = mesh.points[mesh.cells]
    a, b, c = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0], p[:, 3] - p[:, 0]
    return float(np.abs(np.einsum("ij,ij->i", a, np.cross(b, c))).sum() / 6.0)


def mesh_area(mesh, name: str) -> float:
    p = mesh.points[mesh.faces[name]]
    if mesh.dim == 2:
        return float(np.linalg.norm(p[:, 1] - p[:, 0], axis=1).sum())
    return float(0.5 * np.linalg.norm(np.cross(p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]), axis=1).sum())


STEEL = {"density": 7800, "conductivity": 40, "specific_heat": 460}


def solid_case(part: dict, **sections) -> dict:
    data = {
        "title": "solid test",
        "part": {"model": "solid", **part},
        "material": dict(STEEL),
        "furnace": {"temperature": 900, "htc": 300, "emissivity": 0},
        "initial": {"temperature": 20},
        "target": {"temperature": 870},
    }
    data.update(copy.deepcopy(sections))
    return data


# --- volumes and faces of built solids ---------------------------------------------------------


def test_cylinder_volume_and_face_areas():
    r, length = 0.05, 0.12
    built, volume, areas = geometry("cylinder", {"radius": r, "length": length})
    # closed form: V = pi r^2 L, side 2 pi r L, ends pi r^2 (elementary mensuration)
    assert volume == pytest.approx(math.pi * r**2 * length, rel=1e-9)
    assert areas["side"] == pytest.approx(2 * math.pi * r * length, rel=1e-9)
    assert areas["end_bottom"] == pytest.approx(math.pi * r**2, rel=1e-9)
    assert areas["end_top"] == pytest.approx(math.pi * r**2, rel=1e-9)
    assert get_shape("cylinder").names_of_faces({}) == tuple(built.faces)


def test_extruded_rectangle_is_a_box_with_named_sides_and_ends():
    a, b, length = 0.04, 0.02, 0.1
    params = {"section": {"shape": "rectangle", "size": [a, b]}, "length": length}
    built, volume, areas = geometry("extruded", params)
    # closed form: prism V = A L; side faces a L and b L, ends a b
    assert volume == pytest.approx(a * b * length, rel=1e-9)
    assert areas["xmin"] == pytest.approx(b * length, rel=1e-9)
    assert areas["xmax"] == pytest.approx(b * length, rel=1e-9)
    assert areas["ymin"] == pytest.approx(a * length, rel=1e-9)
    assert areas["ymax"] == pytest.approx(a * length, rel=1e-9)
    assert areas["end_bottom"] == pytest.approx(a * b, rel=1e-9)
    assert areas["end_top"] == pytest.approx(a * b, rel=1e-9)
    checked = check_params("extruded", "solid", params)
    assert set(get_shape("extruded").names_of_faces(checked)) == set(built.faces)


def test_extruded_angle_section_volume():
    """Equal angle 100 x 100 x 10, root radius 12, toe radius 6, 0.3 m long."""
    a, t, r1, r2, length = 0.1, 0.01, 0.012, 0.006, 0.3
    section = {
        "shape": "angle",
        "leg_a": a,
        "thickness": t,
        "root_radius": r1,
        "toe_radius": r2,
    }
    built, volume, areas = geometry("extruded", {"section": section, "length": length})
    # [derived] area of an angle: two legs t (2a - t), plus the root fillet (1 - pi/4) r1^2,
    # minus the two toe roundings (1 - pi/4) r2^2 each
    area = t * (2 * a - t) + (1 - math.pi / 4) * (r1**2 - 2 * r2**2)
    assert volume == pytest.approx(area * length, rel=1e-9)
    # cross-check of the formula: EN 10056-1 tabulates 19.2 cm2 for L 100x100x10 [memory]
    assert area * 1e4 == pytest.approx(19.2, rel=0.005)
    assert areas["end_bottom"] == pytest.approx(area, rel=1e-9)
    assert areas["leg_a_outer"] == pytest.approx(a * length, rel=1e-9)
    checked = check_params("extruded", "solid", {"section": section, "length": length})
    assert set(get_shape("extruded").names_of_faces(checked)) == set(built.faces)
    assert {"leg_a_tip", "root", "leg_b_inner"} <= set(built.faces)


def test_revolved_ring_sector_volume_and_cut_faces():
    ro, ri, height, angle = 0.06, 0.035, 0.04, 90.0
    profile = {"shape": "ring", "outer_diameter": 2 * ro, "inner_diameter": 2 * ri}
    params = {"profile": {**profile, "height": height}, "angle": angle}
    built, volume, areas = geometry("revolved", params)
    theta = math.radians(angle)
    # closed form: sector of a hollow cylinder V = (theta / 2)(ro^2 - ri^2) h
    assert volume == pytest.approx(theta / 2 * (ro**2 - ri**2) * height, rel=1e-9)
    assert areas["cut_start"] == pytest.approx((ro - ri) * height, rel=1e-9)
    assert areas["cut_end"] == pytest.approx((ro - ri) * height, rel=1e-9)
    assert areas["outer"] == pytest.approx(theta * ro * height, rel=1e-9)
    assert areas["inner"] == pytest.approx(theta * ri * height, rel=1e-9)
    assert areas["top"] == pytest.approx(theta / 2 * (ro**2 - ri**2), rel=1e-9)


def test_revolved_half_sphere_drops_the_axis_face():
    r = 0.05
    built, volume, areas = geometry(
        "revolved", {"profile": {"shape": "sphere", "radius": r}, "angle": 180}
    )
    # closed form: half ball V = (2/3) pi r^3, curved surface 2 pi r^2, each cut a half disc
    assert volume == pytest.approx(2 / 3 * math.pi * r**3, rel=1e-9)
    assert areas["surface"] == pytest.approx(2 * math.pi * r**2, rel=1e-9)
    assert areas["cut_start"] == pytest.approx(math.pi * r**2 / 2, rel=1e-9)
    assert areas["cut_end"] == pytest.approx(math.pi * r**2 / 2, rel=1e-9)
    assert "axis" not in built.faces


def test_full_revolution_has_no_cut_faces():
    r, h = 0.05, 0.1
    params = {"profile": {"shape": "rectangle", "size": [r, h]}, "angle": 360}
    built, volume, _ = geometry("revolved", params)
    assert volume == pytest.approx(math.pi * r**2 * h, rel=1e-9)  # closed form: cylinder
    assert set(built.faces) == {"xmax", "ymin", "ymax"}
    checked = check_params("revolved", "solid", params)
    assert set(get_shape("revolved").names_of_faces(checked)) == set(built.faces)


def test_revolved_flange_sector_obeys_pappus():
    profile = {
        "shape": "flange",
        "outer_diameter": 0.3,
        "bore_diameter": 0.1,
        "disc_thickness": 0.03,
        "hub_diameter": 0.15,
        "hub_length": 0.05,
        "hub_fillet": 0.01,
        "raised_face_diameter": 0.18,
        "raised_face_height": 0.003,
    }
    angle = 90.0
    built, volume, areas = geometry("revolved", {"profile": profile, "angle": angle})
    # the profile's own area and centroid radius, from its 2D drawing
    checked = check_params(
        "flange", "axisymmetric", {k: v for k, v in profile.items() if k != "shape"}
    )
    with gmsh_session() as gmsh:
        flat = get_shape("flange").build(gmsh, checked, "axisymmetric")
        area = sum(gmsh.model.occ.getMass(2, t) for t in flat.volume_tags)
        moment = sum(
            gmsh.model.occ.getMass(2, t) * gmsh.model.occ.getCenterOfMass(2, t)[0]
            for t in flat.volume_tags
        )
    # Pappus's second theorem: V = theta * x_c * A (Beer & Johnston, Vector Mechanics for
    # Engineers: Statics, sec. 5.7 [memory])
    assert volume == pytest.approx(math.radians(angle) * moment, rel=1e-9)
    assert area > 0
    names = get_shape("flange").names_of_faces(checked)
    assert set(built.faces) == set(names) | {"cut_start", "cut_end"}
    # each cut plane is a copy of the profile
    assert areas["cut_start"] == pytest.approx(area, rel=1e-9)
    assert areas["cut_end"] == pytest.approx(area, rel=1e-9)


def test_section_and_profile_errors_name_the_sub_table():
    bad = solid_case(
        {"shape": "extruded", "length": 0.1, "section": {"shape": "rectangle", "size": [0.1]}}
    )
    with pytest.raises(CaseError) as info:
        parse_case(bad)
    assert info.value.where == "part.section"
    assert "size" in info.value.problem
    bad = solid_case({"shape": "revolved", "angle": 90, "profile": {"shape": "box", "size": [1]}})
    with pytest.raises(CaseError) as info:
        parse_case(bad)
    assert info.value.where == "part.profile"
    assert "does not fit model 'axisymmetric'" in info.value.problem


# --- the 3D cylinder against the exact product solution -----------------------------------------


def test_cylinder_heated_on_all_faces_matches_product_solution():
    """Finite cylinder R = 0.04 m, L = 0.08 m, h = 300 on every face, default mesh and
    tolerance: time for the centre to reach 870 C in a 900 C furnace from 20 C."""
    r, length = 0.04, 0.08
    case = parse_case(solid_case({"shape": "cylinder", "radius": r, "length": length}))
    result = run_problem(build_problem(case))
    k, rho, c, h = 40.0, 7800.0, 460.0, 300.0
    alpha = k / (rho * c)
    theta = (870.0 - 900.0) / (20.0 - 900.0)
    half = length / 2
    # exact: product of the infinite cylinder and slab series, Incropera 6th ed. sec. 5.8
    reference = exact.product_time(
        [("cylinder", h * r / k, alpha / r**2, 0.0), ("slab", h * half / k, alpha / half**2, 0.0)],
        theta,
    )
    assert result.target.reached
    error = result.target.time / reference - 1.0
    print(f"3D cylinder: {result.problem.mesh.nodes} nodes, time error {100 * error:+.3f} %")
    assert abs(error) < 0.005
    # the last point is the centre (symmetry of the exact solution), within one element
    size = result.problem.mesh.size
    assert np.linalg.norm(np.subtract(result.target.last_point, (0, 0, half))) < 1.5 * size


def test_quarter_sector_with_insulated_cuts_matches_the_whole_cylinder():
    """One eighth of the same kind of cylinder: the r-z rectangle R x L/2 turned by 90 degrees,
    the two cut planes and the mid-plane (ymin) insulated."""
    r, half = 0.04, 0.04
    data = solid_case(
        {
            "shape": "revolved",
            "angle": 90,
            "profile": {"shape": "rectangle", "size": [r, half]},
        },
        faces={n: {"condition": "symmetry"} for n in ("cut_start", "cut_end", "ymin")},
    )
    result = run_problem(build_problem(parse_case(data)))
    k, rho, c, h = 40.0, 7800.0, 460.0, 300.0
    alpha = k / (rho * c)
    theta = (870.0 - 900.0) / (20.0 - 900.0)
    # exact: cylinder series x slab series, Incropera 6th ed. sec. 5.8
    reference = exact.product_time(
        [("cylinder", h * r / k, alpha / r**2, 0.0), ("slab", h * half / k, alpha / half**2, 0.0)],
        theta,
    )
    error = result.target.time / reference - 1.0
    print(f"90 degree sector: {result.problem.mesh.nodes} nodes, time error {100 * error:+.3f} %")
    assert abs(error) < 0.005


# --- CAD files ----------------------------------------------------------------------------------


def _draw_part(gmsh, unit: float = 1.0) -> int:
    """A block with a through hole and a boss, in metres times `unit`."""
    occ = gmsh.model.occ
    block = occ.addBox(0, 0, 0, 0.1 * unit, 0.06 * unit, 0.03 * unit)
    boss = occ.addCylinder(0.07 * unit, 0.03 * unit, 0.03 * unit, 0, 0, 0.02 * unit, 0.015 * unit)
    hole = occ.addCylinder(0.03 * unit, 0.03 * unit, -unit, 0, 0, 3 * unit, 0.01 * unit)
    fused, _ = occ.fuse([(3, block)], [(3, boss)])
    out, _ = occ.cut(fused, [(3, hole)])
    occ.synchronize()
    return out[0][1]


def _write_part(path: Path, unit: float = 1.0) -> tuple[float, int]:
    """Write the part; return its volume (file numbers cubed) and its number of faces."""
    with gmsh_session() as gmsh:
        tag = _draw_part(gmsh, unit)
        volume = gmsh.model.occ.getMass(3, tag)
        faces = len(gmsh.model.getBoundary([(3, tag)], oriented=False))
        gmsh.option.setString("Geometry.OCCTargetUnit", "M")
        gmsh.write(str(path))
    return volume, faces


def test_step_round_trip_keeps_volume_and_faces(tmp_path, capfd):
    path = tmp_path / "part.step"
    volume, faces = _write_part(path)
    capfd.readouterr()  # the STEP writer talks on stdout; reading must not
    built, read_volume, _ = geometry("step", {"file": str(path)})
    assert read_volume == pytest.approx(volume, rel=1e-9)
    assert len(built.faces) == faces
    assert all(name.startswith("surface_") for name in built.faces)
    mesh = mesh_part("step", check_params("step", "solid", {"file": str(path)}), "solid", 0.006)
    assert len(mesh.faces) == faces
    # the mesh approximates the curved faces by flat triangles: volume within 1 %
    assert mesh_volume(mesh) == pytest.approx(volume, rel=0.01)
    assert capfd.readouterr().out == ""


def test_brep_file_in_millimetres_with_scale(tmp_path):
    path = tmp_path / "part.brep"
    volume_mm3, faces = _write_part(path, unit=1000.0)  # BREP carries no unit: numbers in mm
    built, volume, _ = geometry("brep", {"file": str(path), "scale": 0.001})
    assert volume == pytest.approx(volume_mm3 * 1e-9, rel=1e-9)
    assert len(built.faces) == faces


def test_step_file_states_its_unit():
    """The housing is written in millimetres; it is read back in metres at scale 1."""
    _, volume, _ = geometry("step", {"file": str(HOUSING_STEP)})
    # closed form of the drawn solid (boxes, cylinders, fillet corners), make_cast_housing.py
    assert volume == pytest.approx(HOUSING.volume(), rel=1e-9)


# --- face selection --------------------------------------------------------------------------


def _housing_areas(select: list[dict]):
    return geometry("step", {"file": str(HOUSING_STEP), "select": select})


def test_selection_by_plane_box_and_normal_picks_the_expected_faces():
    h = HOUSING
    sel = [
        {"name": "hearth", "plane": "z = 0"},
        {"name": "cavity", "box": [-0.07, -0.04, 0.0, 0.07, 0.04, 0.0801]},
        {"name": "up", "normal": [0, 0, 1]},
    ]
    built, _, areas = _housing_areas(sel)
    bore = math.pi * h.BORE_RADIUS**2
    holes = len(h.HOLES) * math.pi * h.HOLE_RADIUS**2
    cx, cy = h.CAVITY
    # closed forms from the drawing (make_cast_housing.py):
    # flange underside = flange - cavity opening - bolt holes
    assert areas["hearth"] == pytest.approx(h.hearth_area(), rel=1e-9)
    # cavity = four walls up to the ceiling + ceiling less the bore
    assert areas["cavity"] == pytest.approx(2 * (cx + cy) * h.CAVITY_TOP + cx * cy - bore, rel=1e-9)
    # faces looking up (flange top, body top, boss top) together cover the plan view of the
    # flange less the bolt holes and the bore
    assert areas["up"] == pytest.approx(h.FLANGE[0] * h.FLANGE[1] - holes - bore, rel=1e-9)
    assert len(built.faces["hearth"]) == 1
    assert len(built.faces["up"]) == 3
    # unselected faces keep their default names
    rest = [n for n in built.faces if n not in ("hearth", "cavity", "up")]
    assert rest and all(n.startswith("surface_") for n in rest)


def test_selection_by_downward_normal_and_by_surface_id():
    h = HOUSING
    built, _, areas = _housing_areas([{"name": "down", "normal": [0, 0, -1], "angle": 1}])
    cx, cy = h.CAVITY
    ceiling = cx * cy - math.pi * h.BORE_RADIUS**2
    # downward: the flange underside and the cavity ceiling (outward normal points into it)
    assert areas["down"] == pytest.approx(h.hearth_area() + ceiling, rel=1e-9)
    ids = built.faces["down"]
    again, _, areas2 = _housing_areas([{"name": "picked", "surfaces": ids}])
    assert sorted(again.faces["picked"]) == sorted(ids)
    assert areas2["picked"] == pytest.approx(areas["down"], rel=1e-12)
    # criteria combine: down-facing and within 1 mm of the hearth
    box = [-1, -1, -0.001, 1, 1, 0.001]
    both, _, areas3 = _housing_areas([{"name": "hearth", "normal": [0, 0, -1], "box": box}])
    assert areas3["hearth"] == pytest.approx(h.hearth_area(), rel=1e-9)


def test_selection_on_an_extrusion_renames_section_faces():
    params = {
        "section": {"shape": "rectangle", "size": [0.04, 0.02]},
        "length": 0.1,
        "select": [{"name": "hearth", "plane": "y = 0"}],
    }
    built, _, areas = geometry("extruded", params)
    assert "ymin" not in built.faces
    assert areas["hearth"] == pytest.approx(0.04 * 0.1, rel=1e-9)  # closed form: a L
    assert get_shape("extruded").names_of_faces(check_params("extruded", "solid", params)) == ()


def test_empty_or_overlapping_selection_is_an_error_naming_it():
    sel = [{"name": "hearth", "plane": "z = 0"}, {"name": "nothing", "plane": "z = 0.5"}]
    with pytest.raises(CaseError) as info:
        _housing_areas(sel)
    assert info.value.where == "part.select[1]"
    assert "'nothing' picks no face" in info.value.problem
    sel = [{"name": "a", "plane": "z = 0"}, {"name": "b", "normal": [0, 0, -1]}]
    with pytest.raises(CaseError) as info:
        _housing_areas(sel)
    assert info.value.where == "part.select[1]"
    assert "already picked by 'a'" in info.value.problem
    with pytest.raises(CaseError) as info:
        _housing_areas([{"name": "x", "surfaces": [999]}])
    assert info.value.where == "part.select[0].surfaces"


def test_bad_selection_tables_fail_when_the_case_is_read():
    part = {"shape": "step", "file": "x.step"}
    for select, text in (
        ([{"name": "a"}], "has no criterion"),
        ([{"name": "a", "plane": "z 0"}], "plane"),
        ([{"name": "a", "normal": [0, 0, 0]}], "zero"),
        ([{"name": "a b", "plane": "z = 0"}], "name"),
        ([{"name": "a", "plane": "z = 0", "side": 1}], "unknown key"),
    ):
        with pytest.raises(CaseError) as info:
            parse_case(solid_case({**part, "select": select}))
        assert info.value.where == "part.select[0]", info.value
        assert text in info.value.problem


# --- CAD errors -----------------------------------------------------------------------------


def _cad_error(tmp_path, part: dict) -> CaseError:
    path = tmp_path / "case.toml"
    lines = ['title = "cad"', "[part]", 'model = "solid"']
    lines += [f"{k} = {v!r}".replace("'", '"') for k, v in part.items()]
    lines += [
        "[material]",
        "density = 7800",
        "conductivity = 40",
        "specific_heat = 460",
        "[furnace]",
        "temperature = 900",
        "htc = 100",
        "emissivity = 0.8",
        "[initial]",
        "temperature = 20",
    ]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    with pytest.raises(CaseError) as info:
        build_problem(load_case(path))
    return info.value


def test_missing_unreadable_and_surface_only_cad_files(tmp_path, capfd):
    err = _cad_error(tmp_path, {"shape": "step", "file": "missing.step"})
    assert err.where == "part.file" and "no such file" in err.problem
    (tmp_path / "junk.step").write_text("not a step file\n", encoding="utf-8")
    err = _cad_error(tmp_path, {"shape": "step", "file": "junk.step"})
    assert err.where == "part.file" and "could not be read as STEP" in err.problem
    with gmsh_session() as gmsh:
        gmsh.model.occ.addRectangle(0, 0, 0, 0.1, 0.1)
        gmsh.model.occ.synchronize()
        gmsh.write(str(tmp_path / "sheet.step"))
    err = _cad_error(tmp_path, {"shape": "step", "file": "sheet.step"})
    assert err.where == "part.file" and "holds no solid (found 1 surfaces" in err.problem
    capfd.readouterr()
    code = main(["check", str(tmp_path / "case.toml")])
    out = capfd.readouterr()
    assert code == 2 and out.out == ""
    assert out.err.strip().count("\n") == 0 and "; fix: " in out.err


def test_implausible_size_suggests_the_scale(tmp_path):
    step = str(HOUSING_STEP)
    err = _cad_error(tmp_path, {"shape": "step", "file": step, "scale": 1000})
    assert err.where == "part.scale" and "over 20 m" in err.problem and "scale = 1" in err.fix
    err = _cad_error(tmp_path, {"shape": "step", "file": step, "scale": 0.001})
    assert err.where == "part.scale" and "under 1 mm" in err.problem
    with pytest.raises(CaseError) as info:
        parse_case(solid_case({"shape": "step", "file": "part.brep"}))
    assert info.value.where == "part.file" and 'shape = "brep"' in info.value.fix


# --- the example case -----------------------------------------------------------------------


def test_example_housing_case_meshes_with_named_faces():
    case = load_case(GEOMETRIES / "cast_housing.toml")
    problem = build_problem(case)
    mesh = problem.mesh
    assert {"hearth", "cavity"} <= set(mesh.face_names)
    h = HOUSING
    # flat faces are meshed exactly; curved ones (holes, fillets, boss) by chords: 1 % here
    assert mesh_volume(mesh) == pytest.approx(h.volume(), rel=0.01)
    assert mesh_area(mesh, "hearth") == pytest.approx(h.hearth_area(), rel=0.01)
    assert problem.face_labels["hearth"] == "insulated"


@pytest.mark.slow
def test_example_housing_case_runs_and_conserves_energy():
    result = run_problem(build_problem(load_case(GEOMETRIES / "cast_housing.toml")))
    assert result.target.reached
    # conservation of energy: heat in through the faces equals the heat stored
    assert abs(result.energy.relative_error) < 1e-3


# --- mesh files -------------------------------------------------------------------------------


def _two_block_mesh(path: Path, order: int = 1, size: float = 0.01) -> int:
    """Two fused blocks (0.15 x 0.05 x 0.04 m), bottom named 'hearth', volumes 'steel' and
    unnamed; returns the node count gmsh made (before raising the order)."""
    with gmsh_session() as gmsh:
        occ = gmsh.model.occ
        a = occ.addBox(0, 0, 0, 0.1, 0.05, 0.04)
        b = occ.addBox(0.1, 0, 0, 0.05, 0.05, 0.04)
        occ.fragment([(3, a)], [(3, b)])
        occ.synchronize()
        vols = [t for _, t in gmsh.model.getEntities(3)]
        bnd = gmsh.model.getBoundary([(3, v) for v in vols], combined=True, oriented=False)
        bottom = [t for _, t in bnd if gmsh.model.getBoundingBox(2, t)[5] < 1e-6]
        gmsh.model.addPhysicalGroup(3, [vols[0]], name="steel")
        gmsh.model.addPhysicalGroup(3, [vols[1]])
        gmsh.model.addPhysicalGroup(2, bottom, name="hearth")
        gmsh.option.setNumber("Mesh.MeshSizeMax", size)
        gmsh.model.mesh.generate(3)
        nodes = len(gmsh.model.mesh.getNodes()[0])
        if order > 1:
            gmsh.model.mesh.setOrder(order)
        gmsh.write(str(path))
    return nodes


def test_gmsh_mesh_file_keeps_nodes_face_names_and_zones(tmp_path):
    path = tmp_path / "two.msh"
    nodes = _two_block_mesh(path)
    data = solid_case({"mesh": str(path)}, faces={"hearth": {"condition": "insulated"}})
    case = parse_case(data)
    problem = build_problem(case)
    mesh = problem.mesh
    assert problem.shape == "mesh"
    assert mesh.nodes == nodes
    assert set(mesh.face_names) == {"hearth", "unnamed"}
    assert mesh_area(mesh, "hearth") == pytest.approx(0.15 * 0.05, rel=1e-12)  # flat: exact
    # every boundary triangle is in exactly one face: total = box surface, closed form
    total = 2 * (0.15 * 0.05 + 0.15 * 0.04 + 0.05 * 0.04)
    assert sum(mesh_area(mesh, n) for n in mesh.face_names) == pytest.approx(total, rel=1e-12)
    assert set(mesh.zones) == {"steel", "group_2"}
    cells = mesh.points[mesh.cells[mesh.zones["steel"]]].mean(axis=1)
    assert np.all(cells[:, 0] < 0.1 + 1e-12)  # the named zone is the first block
    assert problem.face_labels["hearth"] == "insulated"


def load_mesh(path: Path, model: str = "solid"):
    from femheat.geometry.meshfile import load_mesh_file

    return load_mesh_file(path, model)


def test_quadratic_mesh_file_is_made_linear(tmp_path):
    path = tmp_path / "quad.msh"
    nodes = _two_block_mesh(path, order=2)
    mesh = load_mesh(path)
    assert mesh.nodes == nodes  # the mid-side nodes are dropped, the vertices kept
    assert mesh.cells.shape[1] == 4


def test_abaqus_mesh_file_element_sets_become_faces(tmp_path):
    import meshio

    _two_block_mesh(tmp_path / "two.msh")
    m = meshio.read(tmp_path / "two.msh")
    # one block per cell type (meshio's Abaqus writer splits a set over several blocks)
    tri = np.concatenate([b.data for b in m.cells if b.type == "triangle"])
    tet = np.concatenate([b.data for b in m.cells if b.type == "tetra"])
    sets = {"hearth": [np.arange(len(tri)), np.array([], dtype=int)]}
    meshio.Mesh(m.points, [("triangle", tri), ("tetra", tet)], cell_sets=sets).write(
        tmp_path / "two.inp"
    )
    mesh = load_mesh(tmp_path / "two.inp")
    assert mesh.nodes == m.points.shape[0]
    assert mesh_area(mesh, "hearth") == pytest.approx(0.15 * 0.05, rel=1e-12)
    assert "unnamed" in mesh.face_names


def test_planar_mesh_file_run_matches_the_slab_series(tmp_path):
    """A 2D mesh made elsewhere, 0.05 m x 0.005 m, heated on x = 0.05 only: a slab of
    half-thickness 0.05 m with its mid-plane at x = 0."""
    length, height = 0.05, 0.005
    with gmsh_session() as gmsh:
        tag = gmsh.model.occ.addRectangle(0, 0, 0, length, height)
        gmsh.model.occ.synchronize()
        named: dict[str, list[int]] = {}
        for _, c in gmsh.model.getBoundary([(2, tag)], oriented=False):
            b = gmsh.model.getBoundingBox(1, abs(c))
            key = "heated" if b[0] > length / 2 else "closed"
            named.setdefault(key, []).append(abs(c))
        gmsh.model.addPhysicalGroup(2, [tag], name="part")
        for name, tags in named.items():
            gmsh.model.addPhysicalGroup(1, tags, name=name)
        gmsh.option.setNumber("Mesh.MeshSizeMax", height / 20)
        gmsh.model.mesh.generate(2)
        gmsh.write(str(tmp_path / "slab.msh"))
    data = solid_case(
        {"mesh": str(tmp_path / "slab.msh")}, faces={"closed": {"condition": "insulated"}}
    )
    data["part"]["model"] = "planar"
    result = run_problem(build_problem(parse_case(data)))
    k, rho, c, h = 40.0, 7800.0, 460.0, 300.0
    theta = (870.0 - 900.0) / (20.0 - 900.0)
    # exact slab series, Carslaw & Jaeger 2nd ed. 1959; Incropera 6th ed. sec. 5.5
    reference = exact.fourier_at("slab", h * length / k, theta) * length**2 / (k / (rho * c))
    assert result.target.time == pytest.approx(reference, rel=0.005)


def test_mesh_file_errors_name_part_mesh(tmp_path):
    _two_block_mesh(tmp_path / "two.msh")
    for model, text in (("planar", "is a solid mesh"), ("solid", None)):
        data = solid_case({"mesh": str(tmp_path / ("two.msh" if text else "none.msh"))})
        data["part"]["model"] = model
        with pytest.raises(CaseError) as info:
            build_problem(parse_case(data))
        assert info.value.where == "part.mesh"
        assert (text or "no such file") in info.value.problem
    (tmp_path / "junk.vtu").write_text("junk\n", encoding="utf-8")
    with pytest.raises(CaseError) as info:
        build_problem(parse_case(solid_case({"mesh": str(tmp_path / "junk.vtu")})))
    assert info.value.where == "part.mesh" and "could not be read" in info.value.problem
