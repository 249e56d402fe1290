"""Second-order (P2) elements: node mesh, lumped and consistent operators, accuracy.

Sources named beside each check: closed-form areas and volumes; the diagonal-scaling lumping
of Hinton, Rock & Zienkiewicz, Earthquake Eng. Struct. Dyn. 4 (1976) 245-249; the exact slab
and sphere series (Carslaw & Jaeger, Conduction of Heat in Solids, 2nd ed. 1959, sec. 3.11
and 9.4; Incropera et al., Fundamentals of Heat and Mass Transfer, 6th ed., sec. 5.5-5.6).
"""

from __future__ import annotations

import copy
import json
import math

import numpy as np
import pytest

from femheat import exact
from femheat.case import parse_case
from femheat.mesh import mesh_part
from femheat.problem import build_problem
from femheat.quadratic import quadratic_space
from femheat.run import run_problem

from .helpers import BASE, make_case, structured_rectangle


def _measure(mesh):
    p = mesh.points[mesh.cells]
    if mesh.dim == 2:
        a, b = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]
        return 0.5 * (a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0])
    a, b, c = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0], p[:, 3] - p[:, 0]
    return np.einsum("ij,ij->i", a, np.cross(b, c)) / 6.0


@pytest.fixture(scope="module")
def box():
    return mesh_part("box", {"size": (0.03, 0.02, 0.01)}, "solid", 0.005)


def test_node_mesh_2d_splits_each_triangle_into_four():
    """The node mesh covers the same area (closed form 0.06 x 0.04) with positive triangles,
    one node per corner and per edge (Euler: edges = corners + cells - 1 for a disc)."""
    mesh = structured_rectangle(0.06, 0.04, 6, 4)
    space = quadratic_space(mesh)
    nodes = space.nodes
    edges = mesh.nodes + mesh.cells.shape[0] - 1
    assert nodes.nodes == mesh.nodes + edges
    assert nodes.cells.shape[0] == 4 * mesh.cells.shape[0]
    area = _measure(nodes)
    assert area.min() > 0
    assert area.sum() == pytest.approx(0.06 * 0.04, rel=1e-12)
    np.testing.assert_allclose(nodes.points[: mesh.nodes], mesh.points)
    # split faces keep their length
    for name, facets in mesh.faces.items():
        seg = nodes.points[nodes.faces[name]]
        length = np.linalg.norm(seg[:, 1] - seg[:, 0], axis=1).sum()
        whole = mesh.points[facets]
        assert length == pytest.approx(np.linalg.norm(whole[:, 1] - whole[:, 0], axis=1).sum())


def test_node_mesh_3d_splits_each_tetrahedron_into_eight(box):
    """Volume of the box (closed form 0.03 x 0.02 x 0.01 m3) kept by positive sub-tetrahedra."""
    space = quadratic_space(box)
    nodes = space.nodes
    vol = _measure(nodes)
    assert nodes.cells.shape[0] == 8 * box.cells.shape[0]
    assert vol.min() > 0
    assert vol.sum() == pytest.approx(0.03 * 0.02 * 0.01, rel=1e-10)
    assert space.volumes.sum() == pytest.approx(0.03 * 0.02 * 0.01, rel=1e-10)
    assert space.capacity.sum() == pytest.approx(0.03 * 0.02 * 0.01, rel=1e-10)
    assert space.volumes.min() > 0
    # face weights add up to the face areas (closed form)
    areas = {"xmin": 0.02 * 0.01, "ymax": 0.03 * 0.01, "zmin": 0.03 * 0.02}
    for name, area in areas.items():
        _, w = space.face_weights(name)
        assert w.sum() == pytest.approx(area, rel=1e-10)
        assert w.min() > 0


def test_lumped_weights_of_one_triangle():
    """Diagonal scaling of the P2 triangle mass (Hinton, Rock & Zienkiewicz 1976): corners
    A/19, midpoints 16 A/57 (from the consistent diagonal 6A/180 and 32A/180)."""
    from femheat.mesh import PartMesh

    points = np.array([[0.0, 0.0], [0.02, 0.0], [0.005, 0.03]])
    mesh = PartMesh(points, np.array([[0, 1, 2]]), {"all": np.array([[0, 1], [1, 2], [2, 0]])})
    space = quadratic_space(mesh)
    area = 0.5 * 0.02 * 0.03
    v = space.volumes
    np.testing.assert_allclose(v[:3], area / 19.0, rtol=1e-12)
    np.testing.assert_allclose(v[3:], 16.0 * area / 57.0, rtol=1e-12)
    # edges: Simpson weights L/6, 2L/3, L/6 (the P2 line's diagonal scaling)
    nodes, w = space.face_weights("all")
    perimeter = 0.02 + math.hypot(0.015, 0.03) + math.hypot(0.005, 0.03)
    assert w.sum() == pytest.approx(perimeter, rel=1e-12)


def test_axisymmetric_ring_volume():
    """Ring section 0.02 <= r <= 0.05, height 0.03: volume pi (ro^2 - ri^2) h (closed form),
    from the lumped weights and from the consistent matrix; outer face area 2 pi ro h."""
    mesh = structured_rectangle(0.03, 0.03, 5, 4, axisymmetric=True)
    shifted = type(mesh)(mesh.points + [0.02, 0.0], mesh.cells, mesh.faces, True, mesh.size)
    space = quadratic_space(shifted)
    volume = math.pi * (0.05**2 - 0.02**2) * 0.03
    assert space.volumes.sum() == pytest.approx(volume, rel=1e-12)
    assert space.capacity.sum() == pytest.approx(volume, rel=1e-12)
    _, w = space.face_weights("xmax")
    assert w.sum() == pytest.approx(2 * math.pi * 0.05 * 0.03, rel=1e-12)


def _slab_error(element: str, size: float) -> float:
    """Relative error of the time to target at the mid-plane of a slab with Bi = 10 against
    the exact series (Carslaw & Jaeger 1959 sec. 3.11; Incropera 6th ed. eq. 5.39)."""
    half, k, rho, c, h = 0.05, 40.0, 7800.0, 460.0, 8000.0
    target = 600.0
    case = make_case(
        part={"size": [half, half / 2]},
        furnace={"htc": h},
        target={"temperature": target},
        mesh={"size": size, "element": element},
        solver={"tolerance": 1e-7},
    )
    result = run_problem(build_problem(case))
    alpha = k / (rho * c)
    ref = exact.fourier_at("slab", h * half / k, (target - 900.0) / (20.0 - 900.0))
    return (result.target.time - ref * half**2 / alpha) / (ref * half**2 / alpha)


def test_p2_is_far_more_accurate_than_p1_on_a_coarse_mesh():
    """Four elements across the half-thickness: P1 (lumped) is off by about 0.4 %, P2 (consistent
    capacity) by about 0.002 % (measured). Reference: exact slab series, Carslaw & Jaeger
    1959 sec. 3.11."""
    p1 = _slab_error("P1", 0.0125)
    p2 = _slab_error("P2", 0.0125)
    assert abs(p1) > 2e-3
    assert abs(p2) < 1e-4
    assert abs(p2) < abs(p1) / 50


@pytest.mark.parametrize("model", ["axisymmetric", "solid"])
def test_p2_sphere_at_default_settings(model):
    """Sphere R = 0.05 m, Bi = 1, P2 (curved) at default settings: centre time within 0.1 % of
    the exact series (Carslaw & Jaeger 1959 sec. 9.4; Incropera 6th ed. eq. 5.50); measured
    -0.035 % (half-profile) and +0.019 % (ball; P1 on as many nodes: -0.29 %)."""
    radius, k, rho, c, h = 0.05, 40.0, 7800.0, 460.0, 800.0
    data = copy.deepcopy(BASE)
    data.update(
        part={"model": model, "shape": "sphere", "radius": radius},
        faces={},
        target={"temperature": 800.0},
        mesh={"element": "P2"},
    )
    data["furnace"]["htc"] = h
    case = parse_case(data)
    result = run_problem(build_problem(case))
    alpha = k / (rho * c)
    fo = exact.fourier_at("sphere", h * radius / k, (800.0 - 900.0) / (20.0 - 900.0))
    ref = fo * radius**2 / alpha
    assert result.target.time == pytest.approx(ref, rel=1e-3)


def test_p2_energy_balance_across_the_steel_capacity_peak():
    """Heat in through the faces equals the enthalpy stored (conservation of energy) with the
    EN 1993-1-2:2005 3.4.1 carbon steel c(T) and its 735 C peak, P2 elements."""
    data = copy.deepcopy(BASE)
    data.update(
        material={"name": "carbon-steel-en1993"},
        target={"temperature": 850.0},
        mesh={"element": "P2", "size": 0.005},
    )
    result = run_problem(build_problem(parse_case(data)))
    assert abs(result.energy.relative_error) < 1e-3


def test_p2_solid_box_against_the_product_solution(box):
    """Box 0.06 x 0.04 x 0.02 m as an eighth (three symmetry planes), P2 on a coarse mesh:
    centre time within 0.5 % of the product of three slab series (Incropera 6th ed. sec. 5.8)."""
    k, rho, c, h = 40.0, 7800.0, 460.0, 300.0
    data = copy.deepcopy(BASE)
    data.update(
        part={"model": "solid", "shape": "box", "size": [0.03, 0.02, 0.01]},
        faces={n: {"condition": "symmetry"} for n in ("xmin", "ymin", "zmin")},
        target={"temperature": 870.0},
        mesh={"element": "P2", "size": 0.005},
    )
    data["furnace"]["htc"] = h
    case = parse_case(data)
    problem = build_problem(case)
    result = run_problem(problem)
    alpha = k / (rho * c)
    factors = [("slab", h * s / k, alpha / s**2, 0.0) for s in (0.03, 0.02, 0.01)]
    ref = exact.product_time(factors, (870.0 - 900.0) / (20.0 - 900.0))
    assert result.target.time == pytest.approx(ref, rel=5e-3)
    assert problem.model.element == "P2"
    assert problem.mesh.nodes > box.nodes  # the node mesh carries the edge nodes


def test_p2_case_runs_from_the_command_line(tmp_path):
    """`element = "P2"` end to end: summary names the element, fields are written."""
    from femheat.cli import main

    text = (
        'title = "P2 slab"\n[part]\nmodel = "planar"\nshape = "rectangle"\n'
        "size = [0.05, 0.01]\n[material]\ndensity = 7800\nconductivity = 40\n"
        "specific_heat = 460\n[furnace]\ntemperature = 900\nhtc = 250\nemissivity = 0\n"
        '[faces.xmin]\ncondition = "symmetry"\n[initial]\ntemperature = 20\n'
        '[target]\ntemperature = 880\n[mesh]\nelement = "P2"\n'
    )
    path = tmp_path / "p2.toml"
    path.write_text(text)
    out = tmp_path / "out"
    assert main(["run", str(path), "--out", str(out), "--quiet"]) == 0
    summary = json.loads((out / "summary.json").read_text())
    assert summary["mesh"]["element"] == "P2"
    assert summary["target"]["reached"]
    assert (out / "fields.pvd").exists()


@pytest.mark.parametrize(("model", "size"), [("axisymmetric", 0.01), ("solid", 0.0125)])
def test_curved_p2_elements_follow_the_sphere(model, size):
    """Edge nodes on the curved geometry: a ball of radius 0.05 m meshed with only 5 and 4
    elements across the radius keeps its volume 4/3 pi R^3 and surface 4 pi R^2 (closed form)
    to 1e-4, where straight-sided elements lose about 1 % and 2 %."""
    import dataclasses

    radius = 0.05
    mesh = mesh_part("sphere", {"radius": radius}, model, size, order=2)
    assert mesh.curved_edges is not None
    volume, area = 4 / 3 * math.pi * radius**3, 4 * math.pi * radius**2
    curved = quadratic_space(mesh)
    straight = quadratic_space(dataclasses.replace(mesh, curved_edges=None, _cache={}))
    assert curved.volumes.sum() == pytest.approx(volume, rel=1e-4)
    assert curved.capacity.sum() == pytest.approx(volume, rel=1e-4)
    assert curved.face_weights("surface")[1].sum() == pytest.approx(area, rel=1e-4)
    assert abs(straight.volumes.sum() / volume - 1) > 5e-3


def test_p2_checkpoint_resumes_on_the_same_curved_mesh(tmp_path):
    """A P2 run stopped and resumed from its checkpoint reaches the uninterrupted time to
    target (1e-6): the checkpoint keeps the linear mesh with its curved edge nodes. The
    uninterrupted time itself is checked against the exact sphere series (Carslaw & Jaeger
    1959 sec. 9.4) to 0.1 %."""
    from femheat.api import recorder_for
    from femheat.case import load_case
    from femheat.checkpoint import CaseIdentity, CheckpointWriter, read_checkpoint

    text = (
        'title = "P2 ball"\n[part]\nmodel = "axisymmetric"\nshape = "sphere"\nradius = 0.05\n'
        "[material]\ndensity = 7800\nconductivity = 40\nspecific_heat = 460\n"
        "[furnace]\ntemperature = 900\nhtc = 800\nemissivity = 0\n"
        '[initial]\ntemperature = 20\n[target]\ntemperature = 800\n[mesh]\nelement = "P2"\n'
    )
    path = tmp_path / "ball.toml"
    path.write_text(text)
    case = load_case(path)
    problem = build_problem(case)
    reference = run_problem(problem)
    alpha = 40.0 / (7800.0 * 460.0)
    fo = exact.fourier_at("sphere", 800.0 * 0.05 / 40.0, (800.0 - 900.0) / (20.0 - 900.0))
    assert reference.target.time == pytest.approx(fo * 0.05**2 / alpha, rel=1e-3)

    stops = iter(range(10**6))
    identity = CaseIdentity.of(case, text, str(path))
    out = tmp_path / "run"
    recorder = recorder_for(problem, case.output, out)
    writer = CheckpointWriter(out, identity, every_s=None, keep={"recorder": recorder})
    first = run_problem(
        problem, [recorder, writer], stop=lambda: "test stop" if next(stops) >= 15 else None
    )
    assert first.status == "interrupted"
    writer.write()

    ckpt = read_checkpoint(out)
    mesh = ckpt.load_mesh()
    assert mesh.curved_edges is not None
    problem2 = build_problem(load_case(path), mesh=mesh)
    np.testing.assert_array_equal(problem2.mesh.points, problem.mesh.points)
    second = run_problem(problem2, resume=ckpt.run)
    assert second.target.time == pytest.approx(reference.target.time, rel=1e-6)


def test_mesh_command_reports_the_elements_and_all_p2_nodes(tmp_path, capsys):
    """`femheat mesh` on a P2 case counts the elements and names the node total; the counts
    satisfy Euler's relation for a triangulated disc (nodes = corners + edges)."""
    from femheat.cli import main

    text = (
        'title = "P2 plate"\n[part]\nmodel = "planar"\nshape = "rectangle"\n'
        "size = [0.05, 0.01]\n[material]\ndensity = 7800\nconductivity = 40\n"
        "specific_heat = 460\n[furnace]\ntemperature = 900\nhtc = 250\nemissivity = 0\n"
        '[initial]\ntemperature = 20\n[target]\ntemperature = 880\n[mesh]\nelement = "P2"\n'
    )
    path = tmp_path / "p2.toml"
    path.write_text(text)
    assert main(["mesh", str(path), "--out", str(tmp_path / "m")]) == 0
    out = capsys.readouterr().out
    corners = int(out.split("mesh: ")[1].split(" nodes")[0].replace(",", ""))
    cells = int(out.split(" nodes, ")[1].split(" triangles")[0].replace(",", ""))
    total = int(out.split("on the geometry: ")[1].split(" nodes")[0].replace(",", ""))
    assert total == corners + (corners + cells - 1)
    assert (tmp_path / "m" / "mesh.png").exists()
