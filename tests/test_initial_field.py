"""Starting from a field: the final field of an earlier run (its VTK series) or a VTK file,
moved onto this run's mesh; a run continued from a saved field matches one unbroken run."""

from __future__ import annotations

import math

import meshio
import numpy as np
import pytest

from femheat import exact
from femheat.case import load_case
from femheat.errors import CaseError
from femheat.initial_field import map_to_nodes
from femheat.output.frames import Frame
from femheat.output.vtk import write_series
from femheat.problem import build_problem
from femheat.run import run_problem

from .helpers import slab_toml, structured_rectangle

K, RHO, C, H = 40.0, 7800.0, 460.0, 250.0  # W/(m K), kg/m3, J/(kg K), W/(m2 K)
L = 0.05

def case_text(initial: str, end: float) -> str:
    """The base slab with a starting field and an end time instead of a target."""
    return slab_toml(initial=initial, tail=f"[solver]\nend_time = {end}\ntolerance = 1e-6\n")


def _save_final(folder, mesh, result):
    """Save a run's start and end fields as the VTK series femheat writes (fields.pvd)."""
    nan = np.full(mesh.nodes, np.nan)
    frames = [
        Frame(0, 0.0, ("start",), result.problem.initial, nan, nan),
        Frame(1, result.end_time, ("end",), result.final, nan, nan),
    ]
    write_series(folder, mesh, frames)


def test_linear_field_moves_exactly_between_meshes():
    """P1 interpolation reproduces a linear field exactly [derived]; points just outside the
    source mesh take the nearest node."""
    src = structured_rectangle(1.0, 0.5, 7, 3)
    dst = structured_rectangle(1.0, 0.5, 23, 11)
    values = 100.0 + 30.0 * src.points[:, 0] - 12.0 * src.points[:, 1]
    out, gap = map_to_nodes(src.points, src.cells, values, dst.points)
    assert np.allclose(out, 100.0 + 30.0 * dst.points[:, 0] - 12.0 * dst.points[:, 1], atol=1e-9)
    assert np.all(gap == 0.0)
    outside = np.array([[1.001, 0.25]])
    value, gap = map_to_nodes(src.points, src.cells, values, outside)
    assert gap[0] == pytest.approx(np.min(np.linalg.norm(src.points - outside, axis=1)))


def test_continued_run_matches_the_exact_series(tmp_path):
    """A slab heated 1500 s, saved, then continued 1500 s from the saved field, ends where the
    exact series puts it at 3000 s (Carslaw & Jaeger 2nd ed. 1959; Incropera 6th ed. sec. 5.5;
    Bi = hL/k = 0.3125), and the second run balances its own energy from the loaded field."""
    mesh = structured_rectangle(L, L / 10, 25, 1)
    first_dir = tmp_path / "first"
    (tmp_path / "first.toml").write_text(case_text(initial="temperature = 20", end=1500))
    first = run_problem(build_problem(load_case(tmp_path / "first.toml"), mesh=mesh))
    _save_final(first_dir, mesh, first)

    (tmp_path / "second.toml").write_text(case_text(initial='from_run = "first"', end=1500))
    problem = build_problem(load_case(tmp_path / "second.toml"), mesh=mesh)
    assert np.array_equal(problem.initial, first.final)
    assert problem.initial_c == pytest.approx(problem.model.mean_temperature(first.final))
    second = run_problem(problem)
    alpha = K / (RHO * C)
    theta = exact.theta("slab", H * L / K, alpha * 3000.0 / L**2, mesh.points[:, 0] / L)
    expected = 900.0 + (20.0 - 900.0) * theta
    assert np.max(np.abs(second.final - expected)) < 0.05  # K, as a single run at this mesh
    assert abs(second.energy.relative_error) < 1e-5
    assert second.history.rows[0][1] == pytest.approx(first.final.min())


def test_field_from_a_vtk_file_on_another_mesh(tmp_path):
    """A .vtu with a linear field on a coarse mesh starts a finer mesh exactly [derived]; a hot
    field with a lower target makes a cooling run."""
    coarse = structured_rectangle(L, L / 10, 5, 1)
    field = 800.0 + 1000.0 * coarse.points[:, 0]  # 800..850 C
    points = np.column_stack([coarse.points, np.zeros(coarse.nodes)])
    meshio.write(
        tmp_path / "start.vtu",
        meshio.Mesh(points, [("triangle", coarse.cells)], point_data={"T_C": field}),
    )
    text = case_text(initial='from_file = "start.vtu"\nfield = "T_C"', end=600)
    text = text.replace("temperature = 900", "temperature = 20") + "[target]\ntemperature = 700\n"
    (tmp_path / "cool.toml").write_text(text)
    fine = structured_rectangle(L, L / 10, 25, 1)
    problem = build_problem(load_case(tmp_path / "cool.toml"), mesh=fine)
    assert np.allclose(problem.initial, 800.0 + 1000.0 * fine.points[:, 0], atol=1e-9)
    assert problem.target.heating is False
    assert math.isclose(problem.initial_c, 825.0, rel_tol=1e-12)  # mean of a linear field


@pytest.mark.parametrize(
    "initial, where, says",
    [
        ('from_run = "nowhere"', "initial.from_run", "no results folder"),
        ('from_run = "."', "initial.from_run", "holds no fields.pvd"),
        ('from_file = "missing.vtu"', "initial.from_file", "no such file"),
        ('from_file = "start.vtu"\nfield = "temp"', "initial.from_file", "no point data 'temp'"),
    ],
)
def test_bad_sources_name_the_place(tmp_path, initial, where, says):
    mesh = structured_rectangle(L, L / 10, 5, 1)
    points = np.column_stack([mesh.points, np.zeros(mesh.nodes)])
    meshio.write(
        tmp_path / "start.vtu",
        meshio.Mesh(points, [("triangle", mesh.cells)], point_data={"T_C": np.ones(mesh.nodes)}),
    )
    (tmp_path / "case.toml").write_text(case_text(initial=initial, end=60))
    with pytest.raises(CaseError) as info:
        build_problem(load_case(tmp_path / "case.toml"), mesh=mesh)
    assert info.value.where == where and says in str(info.value)
