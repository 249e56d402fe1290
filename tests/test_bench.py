"""The benchmark harness (femheat.bench): one tiny case through a fresh process, the fit of
the scaling exponents and the targets table. No timing assertions: speed is measured by
``python -m femheat.bench``, never asserted here."""

from __future__ import annotations

import numpy as np
import pytest

from femheat import bench, exact
from femheat.bench import Row, Spec, fit_exponent, results_text, run_case

from .helpers import slab_toml

# The plane wall of validation/cases/slab_series.toml, outputs off: half-thickness 0.05 m,
# mid-plane xmin, convection only on xmax.
SLAB = slab_toml(
    "bench harness test: slab",
    tail="[target]\ntemperature = 880\n"
    "[output]\nfields = false\npictures = false\nreport = false\n",
)


def test_one_case_in_a_fresh_process(tmp_path):
    path = tmp_path / "slab.toml"
    path.write_text(SLAB, encoding="utf-8")
    row = run_case(Spec("slab", "slab", str(path)), timeout_s=300)
    assert row.status == "ok", row.note
    for name in (
        "nodes",
        "mesh_s",
        "assembly_s",
        "march_s",
        "output_s",
        "total_s",
        "peak_mb",
        "base_mb",
        "builds",
        "steps",
        "rejected",
        "newton",
        "solves",
        "cg_iterations",
        "target_s",
        "floor_factor_s",
        "floor_solve_s",
    ):
        assert getattr(row, name) is not None, name
    # the kept factorisation: MKL PARDISO where it loads, else SuperLU (femheat.linear)
    assert row.nodes > 0 and row.dim == 2 and row.method in ("pardiso", "superlu")
    assert row.floor_method.split(",")[0] in ("PARDISO", "CHOLMOD", "SuperLU")
    assert row.steps > 0 and row.builds >= 1
    # every Newton iteration is one linear solve, and the error estimate of each TR-BDF2
    # step one more
    assert row.solves >= row.newton >= row.steps
    assert row.peak_mb >= row.base_mb > 0
    assert row.total_s >= row.mesh_s + row.assembly_s + row.march_s
    assert row.floor_s is not None and row.floor_ratio is not None
    # The time itself against the exact series for the plane wall (Carslaw & Jaeger,
    # Conduction of Heat in Solids, 2nd ed., 1959; Incropera et al., Fundamentals of Heat and
    # Mass Transfer, 6th ed., sec. 5.5), evaluated by femheat.exact; tolerance 0.5 %, that of
    # the same check in femheat.validate.
    k, rho, c, half, h = 40.0, 7800.0, 460.0, 0.05, 250.0
    theta = (880.0 - 900.0) / (20.0 - 900.0)
    reference = exact.fourier_at("slab", h * half / k, theta) * half**2 / (k / (rho * c))
    assert row.target_s == pytest.approx(reference, rel=5e-3)
    text = results_text([row], ["- machine"], quick=False, scaling=None)
    assert "| slab | ok |" in text


def test_fit_exponent_recovers_a_power_law():
    # y = 3 n^1.5 exactly: the least-squares slope of log y on log n is 1.5 [derived]
    n = np.array([1e4, 3e4, 1e5, 3e5])
    assert fit_exponent(n, 3.0 * n**1.5) == pytest.approx(1.5, abs=1e-12)
    assert fit_exponent(n[:2], n[:2]) is None  # two points fit any line: no exponent


def test_targets_are_marked_met_or_not():
    rows = [
        Row("a_demo", "(a)", "ok", total_s=3.0, steps=150),
        Row("b_angle_2d", "(b)", "ok", total_s=12.0, steps=70),
        Row("d_angle_3d_large", "(d)", "timeout", note="stopped after 30 min in march"),
    ]
    text = results_text(rows, [], quick=False, scaling=None)
    lines = {ln.split(" | ")[0]: ln for ln in text.splitlines() if ln.startswith("| (")}
    assert lines["| (a) demo, end to end"].endswith("| met |")
    assert lines["| (b) 2D angle 100k nodes, end to end"].endswith("| not met |")
    assert lines["| (b) accepted steps (the 0.5 % accuracy part is not measured here)"].endswith(
        "| met |"
    )
    assert lines["| (c) 3D angle 200k nodes, end to end"].endswith("| not run |")
    assert lines["| (d) 3D angle 1M nodes completes within 12 GB"].endswith("| not met |")
    quick = results_text(rows, [], quick=True, scaling=None)
    assert "| not met |" not in quick and "n/a (quick sizes)" in quick


def test_cases_exist():
    for case in bench.CASES:
        if case.source != "demo":
            assert (bench.CASES_DIR / case.source).is_file(), case.source
