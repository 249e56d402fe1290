"""Command-line tests: ``femheat.cli.main(argv)`` end to end on small planar cases.

Every case is a 50 mm x 20 mm steel-like rectangle (planar section, constant properties) on a
2 mm mesh, so each run takes well under a second. The case files are written into ``tmp_path``
from the template below; results go to a ``tmp_path`` folder.
"""

from __future__ import annotations

import csv
import json
import math
import re
import subprocess
import sys
from pathlib import Path

import pytest

import femheat
from femheat.cli import main

WIDTH, HEIGHT = 0.05, 0.02  # m, the rectangle [0, WIDTH] x [0, HEIGHT]
MESH = 0.002  # m, element size
RHO, K, CP = 7850.0, 40.0, 500.0  # kg/m3, W/(m K), J/(kg K)
ALPHA = K / (RHO * CP)  # m2/s, thermal diffusivity
FACES = ("xmin", "xmax", "ymin", "ymax")


@pytest.fixture(autouse=True)
def _plain_console(monkeypatch):
    """Keep rich from adding colour codes when the test runner's environment forces them."""
    monkeypatch.delenv("FORCE_COLOR", raising=False)
    monkeypatch.delenv("TTY_COMPATIBLE", raising=False)


def case_text(
    *,
    furnace: float = 800.0,
    htc: float = 100.0,
    initial: float = 20.0,
    target: float | None = 700.0,
    hold: float | None = None,
    faces: dict[str, str] | None = None,
    probes: tuple[tuple[str, tuple[float, float]], ...] = (),
    end_time: float | None = None,
    mesh: float = MESH,
) -> str:
    """A planar rectangle case; ``faces`` maps a face name to the body of its table."""
    lines = [
        'title = "cli test rectangle"',
        "[part]",
        'model = "planar"',
        'shape = "rectangle"',
        f"size = [{WIDTH!r}, {HEIGHT!r}]",
        "[material]",
        f"density = {RHO!r}",
        f"conductivity = {K!r}",
        f"specific_heat = {CP!r}",
        "[furnace]",
        f"temperature = {furnace!r}",
        f"htc = {htc!r}",
        "emissivity = 0.0",
        "[initial]",
        f"temperature = {initial!r}",
        "[mesh]",
        f"size = {mesh!r}",
    ]
    for name, body in (faces or {}).items():
        lines += [f"[faces.{name}]", body]
    if target is not None:
        lines += ["[target]", f"temperature = {target!r}"]
        if hold is not None:
            lines.append(f"hold = {hold!r}")
    if end_time is not None:
        lines += ["[solver]", f"end_time = {end_time!r}"]
    for name, (x, y) in probes:
        lines += ["[[probes]]", f'name = "{name}"', f"point = [{x!r}, {y!r}]"]
    return "\n".join(lines) + "\n"


INSULATED = 'condition = "insulated"'


def write_case(tmp_path: Path, text: str, name: str = "case") -> Path:
    path = tmp_path / f"{name}.toml"
    path.write_text(text, encoding="utf-8")
    return path


def read_history(path: Path) -> tuple[list[str], list[list[float]]]:
    with path.open(newline="", encoding="utf-8") as f:
        reader = csv.reader(f)
        header = next(reader)
        rows = [[float(v) for v in row] for row in reader]
    return header, rows


def run_ok(tmp_path: Path, text: str, name: str = "case", quiet: bool = True):
    """Run a case through the CLI; return (summary dict, history header, history rows)."""
    case = write_case(tmp_path, text, name)
    out = tmp_path / f"{name}_out"
    argv = ["run", str(case), "--out", str(out)] + (["--quiet"] if quiet else [])
    assert main(argv) == 0
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    header, rows = read_history(out / "history.csv")
    return summary, header, rows


def one_line_error(capsys, argv: list[str]) -> str:
    """Run the CLI expecting bad input: exit 2, exactly one line on stderr, no traceback."""
    capsys.readouterr()  # drop anything printed before
    assert main(argv) == 2
    out, err = capsys.readouterr()
    assert "Traceback" not in err and "Traceback" not in out
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert "fix:" in lines[0]
    return lines[0]


def inside_part(point, tol: float = 1e-12) -> bool:
    x, y = point
    return -tol <= x <= WIDTH + tol and -tol <= y <= HEIGHT + tol


# --- 1. run: files and their contents -----------------------------------------------------------


def test_run_writes_summary_and_history(tmp_path, capsys):
    probes = (("centre", (WIDTH / 2, HEIGHT / 2)), ("edge", (WIDTH, HEIGHT / 2)))
    summary, header, rows = run_ok(tmp_path, case_text(probes=probes), quiet=False)
    assert (tmp_path / "case_out" / "summary.json").is_file()
    assert (tmp_path / "case_out" / "history.csv").is_file()
    printed = capsys.readouterr().out
    assert "time to target" in printed

    target = summary["target"]
    assert isinstance(target["reached"], bool) and target["reached"] is True
    assert isinstance(target["time_s"], float) and target["time_s"] > 0
    last = target["last_point"]
    assert isinstance(last, list) and len(last) == 2
    assert all(isinstance(v, float) for v in last)
    assert inside_part(last)  # metres: a point of the 50 mm x 20 mm part
    assert isinstance(summary["mesh"]["nodes"], int) and summary["mesh"]["nodes"] > 0
    assert isinstance(summary["solver"]["steps"], int) and summary["solver"]["steps"] > 0
    assert isinstance(summary["solver"]["wall_s"], float) and summary["solver"]["wall_s"] >= 0

    energy = summary["energy"]
    for key in ("heat_in", "stored", "relative_error"):
        assert isinstance(energy[key], float)
    # first law: the heat in through the faces is what the part stores (no sources inside)
    assert abs(energy["relative_error"]) < 1e-3
    assert energy["heat_in"] > 0  # heating: heat flows into the part

    assert header[:4] == ["time_s", "min_C", "max_C", "mean_C"]
    # one column per probe, named after it
    assert [h for h in header if h.startswith(("centre", "edge"))] == ["centre_C", "edge_C"]
    assert all(len(row) == len(header) for row in rows)
    times = [row[0] for row in rows]
    assert times[0] == 0.0
    assert all(b > a for a, b in zip(times, times[1:], strict=False))  # one row per step
    for _, lo, hi, mean, *_ in rows:
        # a volume average lies between the smallest and the largest value
        slack = 1e-9 * max(abs(lo), abs(hi), 1.0)
        assert lo - slack <= mean <= hi + slack
        assert lo <= hi
    # the run stops once every point is through, so the last row is at or above the target
    assert rows[-1][0] >= target["time_s"]
    assert rows[-1][1] >= 700.0 - 1e-9


# --- 2. demo --------------------------------------------------------------------------------------


def test_demo(tmp_path, capsys):
    out = tmp_path / "d"
    assert main(["demo", "--out", str(out)]) == 0
    printed = capsys.readouterr().out
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    assert (out / "history.csv").is_file()
    target = summary["target"]
    assert target["reached"] is True

    assert re.search(r"\b\d+:\d{2} h:min", printed)
    assert f"{target['time_h_min']} h:min" in printed
    assert "last point" in printed
    mm = ", ".join(f"{1000 * v:.1f}" for v in target["last_point"])
    assert f"({mm}) mm" in printed
    assert "thermocouples" in printed

    # the billet is heated on its side and top but stands on an insulated hearth end: the
    # point farthest from every heated face is on the axis (r = 0) at the hearth end (z = 0)
    r, z = target["last_point"]
    size = summary["mesh"]["size_m"]
    assert r <= size and z <= size


# --- 3. physics sanity ----------------------------------------------------------------------------


def test_symmetric_heating_last_point_is_the_centre(tmp_path):
    # Biot number h L / k = 1000 * 0.01 / 40 = 0.25: a clear core lag, not just rounding noise
    summary, _, _ = run_ok(tmp_path, case_text(htc=1000.0))
    assert summary["target"]["reached"] is True
    x, y = summary["target"]["last_point"]
    # symmetry: the same furnace on all four faces; the centre is farthest from every
    # exposed face, so it lags (within one element: the last point is a mesh node)
    assert math.hypot(x - WIDTH / 2, y - HEIGHT / 2) <= MESH


def test_one_exposed_face_last_point_on_opposite_face(tmp_path):
    faces = {"xmin": INSULATED, "ymin": INSULATED, "ymax": INSULATED}
    summary, _, _ = run_ok(tmp_path, case_text(faces=faces))
    assert summary["target"]["reached"] is True
    x, y = summary["target"]["last_point"]
    # heat enters only through xmax and no heat leaves through the insulated faces: the
    # temperature falls monotonically with distance from xmax, so xmin (x = 0) lags
    assert abs(x) < 1e-9
    assert -1e-12 <= y <= HEIGHT + 1e-12


def test_cooling_mode(tmp_path):
    summary, _, rows = run_ok(tmp_path, case_text(furnace=20.0, initial=800.0, target=100.0))
    target = summary["target"]
    # initial above the target and surroundings below it: the part cools through the target
    assert target["mode"] == "cooling"
    assert target["reached"] is True
    assert summary["status"] == "reached"
    # reached when cooling means every point is at or below the target
    assert rows[-1][2] <= 100.0 + 1e-9
    # the part gives heat to the furnace
    assert summary["energy"]["heat_in"] < 0
    assert abs(summary["energy"]["relative_error"]) < 1e-3
    # symmetry again: the centre keeps its heat longest
    x, y = target["last_point"]
    assert math.hypot(x - WIDTH / 2, y - HEIGHT / 2) <= MESH


# --- 4. probe crossing time -----------------------------------------------------------------------


def test_probe_at_last_point_crosses_at_target_time(tmp_path):
    first, _, _ = run_ok(tmp_path, case_text(), name="first")
    last = first["target"]["last_point"]
    second, header, _ = run_ok(
        tmp_path, case_text(probes=(("last", (last[0], last[1])),)), name="second"
    )
    assert "last_C" in header
    t_part = second["target"]["time_s"]
    # a probe does not change the mesh or the march
    assert t_part == pytest.approx(first["target"]["time_s"], rel=1e-7)
    (probe,) = second["probes"]
    # the probe sits on the last node to reach the target, which defines target.time_s
    assert probe["time_to_target_s"] == pytest.approx(t_part, rel=5e-3)


# --- 5. bad input: one line, exit 2 ---------------------------------------------------------------


def test_target_above_every_surrounding(tmp_path, capsys):
    case = write_case(tmp_path, case_text(furnace=800.0, target=900.0))
    out = tmp_path / "out"
    # a part only approaches its surroundings, so 900 C in an 800 C furnace is never reached
    line = one_line_error(capsys, ["run", str(case), "--out", str(out)])
    assert "target.temperature" in line
    assert not (out / "summary.json").exists()


def test_unknown_face_name(tmp_path, capsys):
    case = write_case(tmp_path, case_text(faces={"xmn": INSULATED}))
    line = one_line_error(capsys, ["run", str(case), "--out", str(tmp_path / "out")])
    assert "faces.xmn" in line
    for name in FACES:
        assert name in line


def test_probe_outside_the_part(tmp_path, capsys):
    case = write_case(tmp_path, case_text(probes=(("out", (WIDTH + 0.01, HEIGHT / 2)),)))
    line = one_line_error(capsys, ["run", str(case), "--out", str(tmp_path / "out")])
    assert "probes[0].point" in line


def test_missing_case_file(tmp_path, capsys):
    missing = tmp_path / "no_such_case.toml"
    line = one_line_error(capsys, ["run", str(missing), "--out", str(tmp_path / "out")])
    assert "no_such_case.toml" in line
    assert not (tmp_path / "out").exists()


def test_toml_syntax_error(tmp_path, capsys):
    text = case_text().replace("[initial]", "[initial")
    case = write_case(tmp_path, text)
    line = one_line_error(capsys, ["run", str(case), "--out", str(tmp_path / "out")])
    assert "case.toml" in line and "line" in line


def test_mesh_size_larger_than_part(tmp_path, capsys):
    case = write_case(tmp_path, case_text(mesh=0.03))
    line = one_line_error(capsys, ["run", str(case), "--out", str(tmp_path / "out")])
    assert "mesh.size" in line


def test_check_reports_bad_input_the_same_way(tmp_path, capsys):
    case = write_case(tmp_path, case_text(faces={"xmn": INSULATED}))
    line = one_line_error(capsys, ["check", str(case)])
    assert "faces.xmn" in line


def test_results_folder_that_is_a_file(tmp_path, capsys):
    case = write_case(tmp_path, case_text())
    blocker = tmp_path / "taken"
    blocker.write_text("not a folder", encoding="utf-8")
    capsys.readouterr()
    rc = main(["run", str(case), "--out", str(blocker)])
    err = capsys.readouterr().err
    assert rc in (1, 2)
    assert len(err.splitlines()) == 1 and "Traceback" not in err


# --- 6. no target: run to the end time ------------------------------------------------------------


def test_no_target_stops_at_end_time(tmp_path):
    summary, _, rows = run_ok(tmp_path, case_text(target=None, end_time=300.0))
    assert summary["status"] == "finished"
    assert summary["target"]["reached"] is False and summary["target"]["time_s"] is None
    assert rows[-1][0] == pytest.approx(300.0, rel=1e-12)
    assert summary["solver"]["end_time_s"] == pytest.approx(300.0, rel=1e-12)
    # at 300 s (about 1.2 L^2/alpha, L = 50 mm) the part is still far below the 800 C furnace,
    # so the run stopped at the end time and not because the field had settled
    assert rows[-1][2] < 700.0
    assert summary["solver"]["settled"] is False


def test_hold_after_target_is_kept_with_an_end_time(tmp_path):
    summary, _, rows = run_ok(tmp_path, case_text(hold=100.0, end_time=3000.0))
    t_through = summary["target"]["time_s"]
    assert t_through < 3000.0
    # the run stops after the hold (run.py: "stops when the part is through (plus any hold)")
    assert rows[-1][0] == pytest.approx(t_through + 100.0, rel=1e-9)


# --- 7. fixed temperature face --------------------------------------------------------------------


def test_fixed_face_drives_the_field_to_its_temperature(tmp_path):
    faces = {
        "xmax": 'condition = "fixed"\ntemperature = 200.0',
        "xmin": INSULATED,
        "ymin": INSULATED,
        "ymax": INSULATED,
    }
    diffusion_time = WIDTH**2 / ALPHA  # about 245 s
    end = 10 * diffusion_time
    summary, _, rows = run_ok(tmp_path, case_text(target=None, faces=faces, end_time=end))
    assert summary["status"] == "finished"
    assert rows[-1][0] <= end * (1 + 1e-12)
    temps = summary["temperatures"]
    # steady state with one fixed face and no other heat path is uniform at that temperature
    # (slowest mode decays as exp(-(pi/2)^2 alpha t / L^2), < 1e-9 of the span after 10 L^2/alpha)
    assert temps["final_min_C"] == pytest.approx(200.0, abs=0.01)
    assert temps["final_max_C"] == pytest.approx(200.0, abs=0.01)
    energy = summary["energy"]
    # first law: the heat through the fixed face equals the heat stored
    assert abs(energy["relative_error"]) < 1e-3
    # and, with constant properties, the stored heat is rho c V (200 - 20) per metre depth
    stored = RHO * CP * WIDTH * HEIGHT * (200.0 - 20.0)
    assert energy["stored"] == pytest.approx(stored, rel=1e-3)
    assert energy["heat_in"] == pytest.approx(stored, rel=1e-3)


# --- 8. version -----------------------------------------------------------------------------------


def test_version_via_python_m():
    proc = subprocess.run(
        [sys.executable, "-m", "femheat", "--version"],
        capture_output=True,
        text=True,
        timeout=60,
        check=False,
    )
    assert proc.returncode == 0
    assert proc.stdout.strip() == f"femheat {femheat.__version__}"


# --- 9. check ------------------------------------------------------------------------------------


def test_check_prints_face_names(tmp_path, capsys):
    case = write_case(tmp_path, case_text(faces={"xmin": INSULATED}))
    assert main(["check", str(case)]) == 0
    printed = capsys.readouterr().out
    for name in FACES:
        assert f"face {name}" in printed
    assert "valid" in printed
    # check writes no results
    assert [p.name for p in tmp_path.iterdir()] == ["case.toml"]
