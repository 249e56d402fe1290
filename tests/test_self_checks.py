"""Self-checks in every summary, the accuracy check, and the resource guards.

Sources beside each check. The energy balance is the first law for the part as a closed body:
the enthalpy stored equals the heat that crossed its faces (Incropera, DeWitt, Bergman, Lavine,
*Fundamentals of Heat and Mass Transfer*, 6th ed., eq. 1.11 [memory for the number]). The
accuracy check is compared with the exact slab series (Carslaw & Jaeger, *Conduction of Heat in
Solids*, 2nd ed., 1959; Incropera 6th ed. sec. 5.5). The memory estimate is compared with the
peak resident memory the operating system reports for a run.
"""

from __future__ import annotations

import copy
import json
import subprocess
import sys
import tomllib
from pathlib import Path

import numpy as np
import pytest

from femheat import exact
from femheat.accuracy import check_accuracy
from femheat.case import load_case, parse_case
from femheat.checks import QUALITY_LIMIT, self_checks
from femheat.cli import demo_case_text, main
from femheat.errors import CaseError
from femheat.output.summary import summary_dict
from femheat.problem import build_problem
from femheat.resources import check_memory, estimate_run, memory_needed
from femheat.run import run_problem
from femheat.stepping import SolverStats

from .helpers import BASE, make_case, structured_rectangle

ROOT = Path(__file__).parents[1]
SLAB = ROOT / "validation" / "cases" / "slab_series.toml"


@pytest.fixture(autouse=True)
def _plain_console(monkeypatch):
    monkeypatch.delenv("FORCE_COLOR", raising=False)
    monkeypatch.delenv("TTY_COMPATIBLE", raising=False)


# --- energy balance under 0.1 % -------------------------------------------------------------


def test_energy_balance_of_the_demo_within_a_tenth_of_a_percent():
    # first law: stored enthalpy = heat in through the faces (Incropera 6th ed., eq. 1.11
    # [memory]); the demo crosses the 5000 J/(kg K) peak of EN 1993-1-2 carbon steel at 735 C
    case = parse_case(tomllib.loads(demo_case_text()))
    result = run_problem(build_problem(case))
    assert result.target.reached
    assert abs(result.energy.relative_error) < 1e-3
    checks = summary_dict(result)["checks"]
    assert checks["energy_balance"]["verdict"] == "ok"
    assert checks["energy_balance"]["threshold"] == 1e-3
    assert abs(checks["energy_balance"]["value"]) == pytest.approx(
        abs(result.energy.relative_error)
    )


def test_energy_balance_of_a_radiating_temperature_dependent_part():
    # radiation only (no convection) to 950 C walls, EN 1993-1-2 carbon steel from the
    # library (k and c depend on temperature, c peaks at 735 C); first law as above
    data = copy.deepcopy(BASE)
    data.update(
        part={"model": "planar", "shape": "rectangle", "size": [0.03, 0.06]},
        material={"name": "carbon-steel-en1993"},
        furnace={"temperature": 950, "htc": 0, "emissivity": 0.9},
        faces={"xmin": {"condition": "symmetry"}},
        target={"temperature": 900},
        mesh={"size": 0.003},
    )
    problem = build_problem(parse_case(data))
    material = problem.model.material
    assert material.capacity(np.array([735.0]))[0] > 4 * material.capacity(np.array([20.0]))[0]
    assert material.conductivity(np.array([20.0]))[0] > material.conductivity(np.array([800.0]))[0]
    result = run_problem(problem)
    assert result.target.reached
    assert result.energy.stored > 0
    assert abs(result.energy.relative_error) < 1e-3
    assert all(c.ok for c in result.checks), [c.warning for c in result.checks if not c.ok]


# --- the checks section and its warnings ---------------------------------------------------------


def test_every_summary_has_the_four_checks_with_thresholds():
    result = run_problem(build_problem(load_case(SLAB)))
    checks = summary_dict(result)["checks"]
    assert set(checks) == {
        "energy_balance",
        "newton_correction_K",
        "rejected_steps",
        "mesh_quality",
    }
    for c in checks.values():
        assert set(c) >= {"value", "threshold", "verdict"} and c["verdict"] in ("ok", "poor")
    p = result.problem
    # the Newton limit is the local error allowed per step: tolerance x span (K)
    assert checks["newton_correction_K"]["threshold"] == pytest.approx(
        p.settings.tolerance * p.settings.span
    )
    assert checks["mesh_quality"]["value"] == pytest.approx(float(p.mesh.quality().min()))


def test_a_flat_element_makes_the_quality_check_poor_and_warns():
    # right triangles with legs 0.05 m and 0.0005 m: quality 4 sqrt(3) A / sum(l^2)
    # = 4 sqrt(3) (0.5 * 0.05 * 0.0005) / (0.05^2 + 0.0005^2 + 0.05^2 + 0.0005^2) [derived]
    mesh = structured_rectangle(0.05, 0.005, 1, 10)
    legs = (0.05, 0.0005)
    expected = 4 * np.sqrt(3) * 0.5 * legs[0] * legs[1] / (2 * (legs[0] ** 2 + legs[1] ** 2))
    assert float(mesh.quality().min()) == pytest.approx(expected, rel=1e-12)
    assert expected < QUALITY_LIMIT
    result = run_problem(build_problem(make_case(), mesh=mesh))
    checks = summary_dict(result)["checks"]
    assert checks["mesh_quality"]["verdict"] == "poor"
    assert any("nearly flat" in w for w in result.warnings)


def test_many_rejected_steps_and_large_newton_corrections_are_poor():
    problem = build_problem(load_case(SLAB))

    class Energy:
        relative_error = 0.002

    allowed = problem.settings.tolerance * problem.settings.span
    stats = SolverStats(steps=20, rejected=12, largest_final_newton_correction_K=2 * allowed)
    verdict = {c.name: c for c in self_checks(problem, Energy(), stats)}
    assert not verdict["energy_balance"].ok and "0.200 %" in verdict["energy_balance"].warning
    assert not verdict["rejected_steps"].ok
    assert verdict["rejected_steps"].value == pytest.approx(12 / 32)
    assert not verdict["newton_correction_K"].ok
    assert verdict["mesh_quality"].ok


# --- the accuracy check against the exact series -----------------------------------------------


def slab_exact_time() -> float:
    """Mid-plane of the slab case at 880 C: exact series (Carslaw & Jaeger; Incropera 5.5)."""
    k, rho, c, h, half = 40.0, 7800.0, 460.0, 250.0, 0.05
    alpha = k / (rho * c)
    theta = (880.0 - 900.0) / (20.0 - 900.0)
    return exact.fourier_at("slab", h * half / k, theta) * half**2 / alpha


def coarse_slab():
    case = load_case(SLAB)
    return case.model_copy(
        update={
            "mesh": case.mesh.model_copy(update={"size": 0.005}),
            "solver": case.solver.model_copy(update={"tolerance": 1e-3}),
        }
    )


def test_error_band_brackets_the_true_error_of_a_coarse_run():
    case = coarse_slab()
    result = run_problem(build_problem(case))
    acc = check_accuracy(case, result)
    assert acc.status == "done"
    assert acc.refined_mesh_size_m == pytest.approx(0.0025)
    assert acc.refined_tolerance == pytest.approx(1e-3 / 8)
    true_error = abs(result.target.time - slab_exact_time())
    print(f"true error {true_error:.3f} s, estimated band {acc.error_band_s:.3f} s")
    # Richardson's estimate of the error is of the size of the true error ...
    assert 0.5 * true_error < acc.error_band_s < 2.0 * true_error
    # ... and the extrapolated time is much closer to the exact one than the run's
    assert abs(acc.extrapolated_time_s - slab_exact_time()) < 0.2 * true_error


def test_check_accuracy_option_adds_the_band_to_summary_and_output(tmp_path, capsys):
    text = SLAB.read_text(encoding="utf-8")
    text = text.replace("[initial]", "[mesh]\nsize = 0.005\n[solver]\ntolerance = 1e-3\n[initial]")
    text += "\n[output]\npictures = false\nreport = false\nfields = false\n"
    case = tmp_path / "slab.toml"
    case.write_text(text, encoding="utf-8")
    rc = main(["run", str(case), "--out", str(tmp_path / "out"), "--check-accuracy"])
    out = capsys.readouterr().out
    assert rc == 0
    summary = json.loads((tmp_path / "out" / "summary.json").read_text(encoding="utf-8"))
    acc = summary["accuracy"]
    assert acc["status"] == "done" and acc["error_band_s"] > 0
    assert "Richardson" in acc["method"]
    assert "accuracy check:" in out and "estimated error" in out
    exact_time = slab_exact_time()
    assert abs(acc["time_s"] - exact_time) < 2.0 * acc["error_band_s"]


# --- resource guards -----------------------------------------------------------------------------


def test_memory_guard_refuses_with_the_estimate_and_a_size_that_fits():
    nodes, size, available = 2_000_000, 0.001, 4e9
    with pytest.raises(CaseError) as info:
        check_memory(nodes, 3, size, given=True, available=available)
    err = info.value
    assert err.where == "mesh.size"
    need = f"{memory_needed(nodes, 3) / 1e9:.0f} GB"  # the estimate the message must show
    assert "2000000 nodes" in str(err) and need in str(err) and "4 GB available" in str(err)
    suggested = float(str(err).split("mesh.size = ")[1].split()[0])
    # nodes scale as 1/size^3 in 3D [derived]: the suggested size must fit in the memory
    assert memory_needed(nodes * (size / suggested) ** 3, 3) <= available
    check_memory(1000, 3, size, given=False, available=available)  # a small mesh passes


MEASURE = """
import json, sys
from femheat.case import parse_case
from femheat.problem import build_problem
from femheat.stepping import Marcher
data = json.loads(sys.argv[1])
p = build_problem(parse_case(data))
m = Marcher(p.model, p.initial, p.settings)
for i, _ in enumerate(m):
    if i >= 4:
        break
# VmHWM: the peak resident set of this process image (getrusage's maxrss would include the
# parent's memory at the fork)
hwm = [line for line in open("/proc/self/status") if line.startswith("VmHWM:")][0]
print(json.dumps({"nodes": p.mesh.nodes, "peak": int(hwm.split()[1]) * 1024}))
"""


@pytest.mark.skipif(not Path("/proc/self/status").exists(), reason="needs Linux /proc")
def test_memory_estimate_covers_the_measured_peak_of_a_3d_run():
    # a solid box on the 3D direct solver (its costliest range, up to 8000 unknowns);
    # the peak resident set size is what the operating system reports (Linux VmHWM, kB)
    data = {
        "part": {"model": "solid", "shape": "box", "size": [0.2, 0.1, 0.1]},
        "material": {"density": 7850, "conductivity": 40, "specific_heat": 460},
        "furnace": {"temperature": 900, "htc": 25, "emissivity": 0.8},
        "initial": {"temperature": 20},
        "target": {"temperature": 880},
        "mesh": {"size": 0.007},
    }
    run = subprocess.run(
        [sys.executable, "-c", MEASURE, json.dumps(data)],
        capture_output=True,
        text=True,
        timeout=300,
        check=True,
    )
    got = json.loads(run.stdout.strip().splitlines()[-1])
    print(got, memory_needed(got["nodes"], 3))
    assert 3000 < got["nodes"] < 8000
    assert memory_needed(got["nodes"], 3) >= got["peak"]


def test_long_run_warning_says_what_to_coarsen(tmp_path, capsys):
    case = make_case(solver={"max_step": 0.01, "end_time": 1e5})
    problem = build_problem(case)
    est = estimate_run(problem.mesh.nodes, problem.mesh.dim, problem.settings)
    assert est.limited_by == "max_step" and est.steps == pytest.approx(1e7)
    warning = next(w for w in problem.warnings if "this run may take" in w)
    assert "mesh.size" in warning and "solver.max_step" in warning
    path = tmp_path / "long.toml"
    path.write_text(
        SLAB.read_text(encoding="utf-8").replace(
            "[initial]", "[solver]\nmax_step = 0.01\nend_time = 100000\n[initial]"
        ),
        encoding="utf-8",
    )
    assert main(["check", str(path)]) == 0
    out = capsys.readouterr().out
    assert "estimated: about" in out and "this run may take" in out
