"""Tests of what the analyst looks at: VTK series, pictures, plots, report, progress, API.

The VTK files are read back with two independent readers: meshio (its own pure-Python VTK
XML parser) and VTK's reader through pyvista. Field values are compared with the solver's
own steps, and the time-to-target field with the exact series solution of a slab with
surface convection (Carslaw & Jaeger, Conduction of Heat in Solids, 2nd ed., 1959, sec. 3.11;
Incropera et al., Fundamentals of Heat and Mass Transfer, 6th ed., eq. 5.39a [memory]),
computed here from scratch with scipy.

Runs are small (a 50 mm slab on a 2.5 mm mesh, about 70 nodes) so the file takes seconds.
"""

from __future__ import annotations

import base64
import copy
import io
import json
import math
import re
import xml.etree.ElementTree as ET
from pathlib import Path

import meshio
import numpy as np
import pytest
from scipy import optimize

import femheat
from femheat.api import recorder_for
from femheat.case import parse_case
from femheat.cli import main
from femheat.output import plots as plots_mod
from femheat.output.frames import FrameRecorder, rate_at
from femheat.output.meshinfo import angle_range
from femheat.output.progress import RunProgress
from femheat.output.render import WINDOW, pyvista_can_render
from femheat.problem import build_problem
from femheat.run import run_problem
from femheat.stepping import Step, interpolate_states

from .helpers import BASE, structured_rectangle

# the slab of tests/helpers.py: 50 mm half-thickness (x), mid-plane xmin, convection on xmax,
# top and bottom insulated -> one-dimensional
L, K, RHO, CP, HTC = 0.05, 40.0, 7800.0, 460.0, 250.0  # m, W/(m K), kg/m3, J/(kg K), W/(m2 K)
T0, TGAS, TARGET = 20.0, 900.0, 880.0  # C
INTERVAL = 600.0  # s between saved frames


def slab_case(**extra) -> dict:
    data = copy.deepcopy(BASE)
    data["mesh"] = {"size": 0.0025}
    data["probes"] = [{"name": "core", "point": [0.0, 0.0025]}]
    data["output"] = {"interval": INTERVAL}
    data.update(extra)
    return data


def toml_of(data: dict) -> str:
    return femheat.api.toml_text(data)


def png_size_and_spread(path: Path) -> tuple[tuple[int, int], float, int]:
    """(width, height), pixel standard deviation and number of distinct colours."""
    from PIL import Image

    with Image.open(path) as im:
        rgb = np.asarray(im.convert("RGB"), dtype=float)
        size = im.size
    colours = np.unique(rgb.reshape(-1, 3)[::7], axis=0).shape[0]
    return size, float(rgb.std()), colours


def pvd_entries(path: Path) -> list[tuple[float, str]]:
    root = ET.parse(path).getroot()
    return [(float(d.get("timestep")), d.get("file")) for d in root.iter("DataSet")]


# --- one slab run through the library, with the solver's steps kept for comparison -------------


@pytest.fixture(scope="module")
def slab_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("slab")
    case = parse_case(slab_case())
    problem = build_problem(case)
    steps: list[Step] = []
    recorder = recorder_for(problem, case.output, out, keep=True)
    result = run_problem(problem, observers=[recorder, steps.append])
    recorder.finish()
    return out, problem, result, recorder, steps


def solver_field_at(steps: list[Step], initial: np.ndarray, t: float) -> np.ndarray:
    """The solver's temperatures at time t: on the quadratic through the stage values of the
    step that holds t (the same interpolant the march uses for its crossings)."""
    if t == 0.0:
        return initial
    for s in steps:
        if s.t0 < t <= s.t1 * (1 + 1e-12):
            return interpolate_states(s.times, s.states, t)
    raise AssertionError(f"no step holds t = {t}")


def test_collection_times_are_interval_target_and_end(slab_run):
    out, _problem, result, _rec, _steps = slab_run
    entries = pvd_entries(out / "fields.pvd")
    times = [t for t, _ in entries]
    tw = result.target
    # expected: 0, every INTERVAL s up to the end, the target crossing and the end, in order
    expected = sorted(
        {0.0, tw.time, result.end_time}
        | {INTERVAL * k for k in range(1, int(result.end_time // INTERVAL) + 1)}
    )
    assert times == pytest.approx(expected, rel=1e-12, abs=1e-9)
    assert times == sorted(times)
    assert all((out / f).exists() for _, f in entries)


def test_frames_read_back_with_meshio_and_pyvista(slab_run):
    """Independent readers: meshio's own VTK XML parser and VTK's reader (through pyvista)."""
    import pyvista as pv

    out, problem, result, _rec, steps = slab_run
    entries = pvd_entries(out / "fields.pvd")
    for t, name in entries:
        m = meshio.read(out / name)
        assert m.points.shape[0] == problem.mesh.nodes
        np.testing.assert_allclose(m.points[:, :2], problem.mesh.points, rtol=0, atol=0)
        solver = solver_field_at(steps, problem.initial, t)
        np.testing.assert_allclose(m.point_data["temperature_C"], solver, rtol=1e-12, atol=1e-9)
        assert float(m.field_data["TimeValue"][0]) == pytest.approx(t, rel=1e-15)
        g = pv.read(out / name)
        assert g.n_points == problem.mesh.nodes
        np.testing.assert_allclose(g.point_data["temperature_C"], solver, rtol=1e-12, atol=1e-9)
    # the end frame is the final field, and its rate the solver's own (K/s -> C/h)
    last = meshio.read(out / entries[-1][1])
    np.testing.assert_array_equal(last.point_data["temperature_C"], result.final)
    np.testing.assert_allclose(
        last.point_data["heating_rate_C_per_h"], 3600.0 * steps[-1].rate, rtol=1e-12
    )
    # pyvista's collection reader sees the same times
    reader = pv.PVDReader(str(out / "fields.pvd"))
    assert reader.time_values == pytest.approx([t for t, _ in entries], rel=1e-12)


def test_time_to_target_field_agrees_with_the_summary(slab_run):
    """Largest value at the reported last point, equal to target.time_s; NaN before."""
    out, problem, result, _rec, _steps = slab_run
    entries = pvd_entries(out / "fields.pvd")
    end = meshio.read(out / entries[-1][1]).point_data["time_to_target_s"]
    tw = result.target
    k = int(np.nanargmax(end))
    assert list(problem.mesh.points[k]) == tw.last_point
    assert end[k] == tw.time
    # in a frame before the crossing no node can have a time later than the frame
    for t, name in entries:
        ttt = meshio.read(out / name).point_data["time_to_target_s"]
        assert np.all(np.isnan(ttt) | (ttt <= t * (1 + 1e-12)))
    first = meshio.read(out / entries[0][1]).point_data["time_to_target_s"]
    assert np.all(np.isnan(first))  # nothing is at 880 C at the start (20 C)


def _exact_slab_time(xi: float) -> float:
    """Time (s) for the point x = xi L of the slab to reach TARGET: the exact series
    theta* = sum C_n exp(-z_n^2 Fo) cos(z_n xi), z tan z = Bi, C_n = 4 sin z/(2z + sin 2z)
    (Carslaw & Jaeger 2nd ed. sec. 3.11; Incropera 6th ed. eq. 5.39a [memory]), 200 terms."""
    bi = HTC * L / K
    z = np.array(
        [
            optimize.brentq(
                lambda z: z * math.tan(z) - bi, n * math.pi + 1e-12, (n + 0.5) * math.pi - 1e-12
            )
            for n in range(200)
        ]
    )
    c = 4.0 * np.sin(z) / (2.0 * z + np.sin(2.0 * z))
    goal = (TARGET - TGAS) / (T0 - TGAS)
    fo = optimize.brentq(
        lambda f: float(np.sum(c * np.exp(-z * z * f) * np.cos(z * xi))) - goal, 1e-6, 50.0
    )
    return fo * L * L * RHO * CP / K


def test_time_to_target_field_matches_the_exact_slab_series(slab_run):
    # 20 linear elements across, lumped capacity: the validation cases show about 0.1 % on
    # the mid-plane time; allow 0.5 % of the mid-plane time at every node.
    _out, problem, result, _rec, _steps = slab_run
    node_time = result.target.node_time
    scale = _exact_slab_time(0.0)
    for i in np.flatnonzero(problem.mesh.points[:, 1] == 0.0)[::3]:
        xi = problem.mesh.points[i, 0] / L
        assert abs(node_time[i] - _exact_slab_time(xi)) < 5e-3 * scale


def test_faces_file_names_every_face(slab_run):
    import pyvista as pv

    out, problem, _result, _rec, _steps = slab_run
    m = meshio.read(out / "faces.vtu")
    ids = m.cell_data["face_id"][0]
    names = {k: int(v[0]) for k, v in m.field_data.items() if k in problem.mesh.faces}
    assert set(names) == set(problem.mesh.faces)
    for name, facets in problem.mesh.faces.items():
        assert int(np.sum(ids == names[name])) == facets.shape[0]
    g = pv.read(out / "faces.vtu")
    assert set(problem.mesh.faces) <= set(g.field_data.keys())


def test_rate_history_and_frames_are_consistent(slab_run):
    _out, _problem, result, rec, steps = slab_run
    r = rec.rates.arrays()
    assert r["time_s"].size == len(steps)
    # heating: the fastest point is never slower than the volume mean
    assert np.all(r["fastest_C_per_h"] >= r["mean_C_per_h"] - 1e-9)
    assert rec.target_time == result.target.time


def test_rate_inside_a_step_is_the_derivative_of_the_interpolant():
    """Lagrange interpolation through 3 points is exact for a quadratic (Burden & Faires,
    Numerical Analysis, 9th ed., Thm. 3.2 [memory]); so is its derivative."""
    a, b, c = np.array([1.0, 2.0]), np.array([3.0, -1.0]), np.array([0.5, 2.0])
    times = (10.0, 10.0 + 0.6, 12.0)
    states = tuple(a + b * t + c * t * t for t in times)
    step = Step(1, times, states, b + 2 * c * times[-1], {}, "trbdf2")
    for t in (10.3, 11.1, 11.9):
        np.testing.assert_allclose(rate_at(step, t), b + 2 * c * t, rtol=1e-10)


# --- the command line ------------------------------------------------------------------------


@pytest.fixture(scope="module")
def cli_run(tmp_path_factory):
    folder = tmp_path_factory.mktemp("cli")
    case = folder / "slab.toml"
    case.write_text(toml_of(slab_case()), encoding="utf-8")
    out = folder / "results"
    assert main(["run", str(case), "--out", str(out), "--quiet"]) == 0
    return case, out


def test_run_writes_every_output(cli_run):
    _case, out = cli_run
    for name in (
        "summary.json",
        "history.csv",
        "fields.pvd",
        "faces.vtu",
        "report.html",
        "temperatures.png",
        "temperatures.svg",
        "difference_rate.png",
        "difference_rate.svg",
        "temperature.png",
        "time_to_target.png",
        "faces.png",
    ):
        assert (out / name).is_file(), name
    assert not list(out.glob(".*.tmp")) and not list(out.glob(".*.png"))  # no temp files left


def test_pictures_have_their_size_and_are_not_blank(cli_run):
    _case, out = cli_run
    expected = {"temperature.png": WINDOW, "time_to_target.png": WINDOW, "faces.png": WINDOW}
    for stem, (w, h) in plots_mod.SIZES.items():
        expected[f"{stem}.png"] = (round(w * plots_mod.DPI), round(h * plots_mod.DPI))
    for name, size in expected.items():
        got, spread, colours = png_size_and_spread(out / name)
        assert got == size, name
        assert spread > 10.0 and colours > 20, name  # a drawing, not an empty canvas


def test_report_holds_the_answer_and_embeds_every_figure(cli_run):
    case, out = cli_run
    html = (out / "report.html").read_text(encoding="utf-8")
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    assert summary["target"]["time_h_min"] in html
    assert f"{summary['target']['time_s']:.0f} s" in html
    pngs = sorted(out.glob("*.png"))
    assert len(pngs) == 5
    assert html.count("data:image/png;base64,") == len(pngs)
    for png in pngs:
        assert base64.b64encode(png.read_bytes()).decode("ascii") in html, png.name
    assert 'src="http' not in html and "<script" not in html  # self-contained, nothing fetched
    assert "thermocouples" in html and "qualified procedures" in html
    assert "[[probes]]" in html  # the case file is echoed
    assert case.read_text(encoding="utf-8").splitlines()[0].replace('"', "&quot;") in html


def test_output_switches_turn_files_off(tmp_path):
    case = tmp_path / "quiet.toml"
    case.write_text(
        toml_of(slab_case(output={"fields": False, "pictures": False, "report": False})),
        encoding="utf-8",
    )
    out = tmp_path / "r"
    assert main(["run", str(case), "--out", str(out), "--quiet"]) == 0
    assert sorted(p.name for p in out.iterdir()) == ["history.csv", "summary.json"]


def test_mesh_command_prints_counts_and_draws_the_faces(tmp_path, capsys):
    case = tmp_path / "slab.toml"
    case.write_text(toml_of(slab_case()), encoding="utf-8")
    assert main(["mesh", str(case), "--out", str(tmp_path / "m")]) == 0
    text = capsys.readouterr().out
    problem = build_problem(parse_case(slab_case()))
    assert f"{problem.mesh.nodes:,} nodes" in text
    assert f"{problem.mesh.cells.shape[0]:,} triangles" in text
    assert "element angles (interior)" in text
    size, spread, _ = png_size_and_spread(tmp_path / "m" / "mesh.png")
    assert size == WINDOW and spread > 10.0


def test_mesh_command_bad_case_exits_2(tmp_path, capsys):
    case = tmp_path / "bad.toml"
    case.write_text(toml_of(slab_case(furnace={"temperature": 900, "htcc": 1})), encoding="utf-8")
    assert main(["mesh", str(case)]) == 2
    assert "; fix: " in capsys.readouterr().err


# --- progress --------------------------------------------------------------------------------


def _progress_output(is_terminal: bool, enabled: bool = True) -> str:
    from rich.console import Console

    buf = io.StringIO()
    console = Console(file=buf, force_terminal=is_terminal, width=120)
    problem = build_problem(parse_case(slab_case()))
    with RunProgress.for_problem(console, problem, delay=0.0, enabled=enabled) as bar:
        run_problem(problem, observers=[bar])
    return buf.getvalue()


def test_progress_bar_shows_time_step_and_coldest_on_a_terminal():
    text = _progress_output(is_terminal=True)
    assert "coldest" in text and "h:min" in text and "step" in text


def test_progress_is_silent_in_logs_and_when_quiet():
    assert _progress_output(is_terminal=False) == ""
    assert _progress_output(is_terminal=True, enabled=False) == ""


def test_progress_fraction_follows_the_lagging_point():
    bar = RunProgress(None, initial_c=20.0, target_c=880.0, heating=True, enabled=False)
    assert bar.fraction(100.0, 450.0) == pytest.approx(0.5)
    cool = RunProgress(None, initial_c=900.0, target_c=100.0, heating=False, enabled=False)
    assert cool.fraction(100.0, 500.0) == pytest.approx(0.5)
    timed = RunProgress(None, initial_c=20.0, end_time=1000.0, enabled=False)
    assert timed.fraction(250.0, 20.0) == pytest.approx(0.25)


# --- Python API ------------------------------------------------------------------------------


def test_api_run_returns_arrays_field_and_writes_vtk(tmp_path):
    res = femheat.run(slab_case(), estimates=[("slab estimate", 3000.0)])
    h = res.history
    assert h["time_s"].shape == h["min_C"].shape == (len(res.result.history.rows),)
    assert res.final.shape == (res.problem.mesh.nodes,)
    np.testing.assert_array_equal(h["min_C"][-1], res.final.min())
    assert res.summary["target"]["reached"] is True
    assert res.at_target.time_s == res.result.target.time
    pvd = res.write_vtk(tmp_path)
    assert [t for t, _ in pvd_entries(pvd)] == [f.time_s for f in res.frames]
    figs = res.plot()
    assert len(figs) == 2 and figs[0].axes[0].get_xlabel() == "time (h)"
    # the estimate is marked on the temperature plot
    texts = [t.get_text() for t in figs[0].axes[0].texts]
    assert any(t.startswith("slab estimate: ") for t in texts)


def test_api_accepts_a_path_and_rejects_bad_input(tmp_path):
    path = tmp_path / "c.toml"
    path.write_text(toml_of(slab_case()), encoding="utf-8")
    res = femheat.run(path)
    assert res.case_text == path.read_text(encoding="utf-8")
    with pytest.raises(femheat.errors.CaseError, match="fix: "):
        femheat.run(slab_case(initial={"temperature": "hot"}))


def test_plot_limits_drawn_only_when_given(slab_run):
    _out, _problem, result, rec, _steps = slab_run
    data = plots_mod.PlotData.from_result(result, rec.rates)
    bare = plots_mod.difference_rate_figure(data)
    limited = plots_mod.difference_rate_figure(
        data, plots_mod.Limits(spread_C=83.0, heating_rate_C_per_h=222.0)
    )

    def labels(fig):
        return [ln.get_label() for ax in fig.axes for ln in ax.get_lines()]

    assert "limit" not in labels(bare)
    assert labels(limited).count("limit") == 2


# --- mesh figures ----------------------------------------------------------------------------


def test_angles_of_known_elements():
    # right isosceles triangles: 45, 45 and 90 degrees (elementary geometry)
    mesh = structured_rectangle(1.0, 1.0, 2, 2)
    assert angle_range(mesh) == pytest.approx((45.0, 90.0))
    # regular tetrahedron: every dihedral angle is arccos(1/3) = 70.5288 degrees
    # (H. S. M. Coxeter, Regular Polytopes, 3rd ed., 1973, Table I [memory])
    from femheat.mesh import PartMesh

    pts = np.array([[1, 1, 1], [1, -1, -1], [-1, 1, -1], [-1, -1, 1]], dtype=float)
    tet = PartMesh(pts, np.array([[0, 1, 2, 3]]), {})
    lo, hi = angle_range(tet)
    assert lo == pytest.approx(math.degrees(math.acos(1.0 / 3.0)))
    assert hi == pytest.approx(lo)


# --- a solid: isometric view and cut through the last point -----------------------------------


@pytest.mark.skipif(not pyvista_can_render(), reason="no off-screen OpenGL context here")
def test_solid_pictures_iso_and_cut(tmp_path):
    data = copy.deepcopy(BASE)
    data["part"] = {"model": "solid", "shape": "box", "size": [0.06, 0.04, 0.03]}
    data["faces"] = {"zmin": {"condition": "insulated"}}
    data["mesh"] = {"size": 0.01}
    res = femheat.run(data)
    paths, rlog = res.render(tmp_path)
    names = sorted(p.name for p in paths)
    assert names == ["faces.png", "temperature.png", "temperature_cut.png", "time_to_target.png"]
    assert rlog.backend == "pyvista"
    for p in paths:
        size, spread, colours = png_size_and_spread(p)
        assert size == WINDOW and spread > 10.0 and colours > 20, p.name
    # the mesh itself is left as it was (VTK shares buffers; the pictures draw in mm)
    assert res.problem.mesh.points.max() == pytest.approx(0.06)


def test_frame_recorder_without_target_keeps_start_and_end():
    mesh = structured_rectangle(0.02, 0.01, 4, 2)
    rec = FrameRecorder(np.full(mesh.nodes, 20.0), mesh.points, np.ones(mesh.nodes))
    rec.finish()
    assert [f.tags for f in rec.frames] == [("start", "end")]
    assert np.all(np.isnan(rec.frames[0].time_to_target))


def test_summary_of_a_cli_run_is_unchanged_by_outputs(cli_run, slab_run):
    """The outputs observe the run: the answer is the same with and without them (to the
    round-off of the iterative solves, which may differ between processes)."""
    _case, out = cli_run
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    assert summary["target"]["time_s"] == pytest.approx(slab_run[2].target.time, rel=1e-7)
    assert re.fullmatch(r"\d+:\d\d", summary["target"]["time_h_min"])
