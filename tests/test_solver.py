"""Numerical behaviour of the march: order of accuracy, monotonicity, stopping rules.

Every check against an exact solution names its source. Observed orders are printed on failure.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from femheat import exact
from femheat.problem import build_problem
from femheat.run import run_problem

from .helpers import make_case, structured_rectangle


def _rates(sizes, errors):
    return [
        math.log(errors[i] / errors[i + 1]) / math.log(sizes[i] / sizes[i + 1])
        for i in range(len(errors) - 1)
    ]


def test_space_order_p1_is_two():
    """L2 error of P1 against the exact slab series is O(h^2).

    Reference: exact series for a slab with fixed surface temperature (Bi = inf), Carslaw &
    Jaeger 2nd ed. 1959; Incropera 6th ed. sec. 5.5. Expected order 2 for linear elements
    (Toptan et al., SAND2020-3887 R, 2020).
    """
    length, t_end = 0.05, 600.0
    k, rho, c = 40.0, 7800.0, 460.0
    alpha = k / (rho * c)
    errors, sizes = [], []
    for n in (5, 10, 20):
        mesh = structured_rectangle(length, length / n, n, 1)
        case = make_case(
            faces={
                "xmin": {"condition": "symmetry"},
                "xmax": {"condition": "fixed", "temperature": 900},
                "ymin": {"condition": "insulated"},
                "ymax": {"condition": "insulated"},
            },
            target=None,
            solver={"end_time": t_end, "tolerance": 1e-8},
        )
        result = run_problem(build_problem(case, mesh=mesh))
        x = mesh.points[:, 0] / length
        theta = exact.theta("slab", math.inf, alpha * t_end / length**2, x)
        ref = 900.0 + (20.0 - 900.0) * theta
        w = result.problem.model.volumes
        errors.append(math.sqrt(float(w @ (result.final - ref) ** 2) / w.sum()))
        sizes.append(length / n)
    rates = _rates(sizes, errors)
    print("space orders", rates, errors)
    assert all(1.8 < r < 2.3 for r in rates), f"observed space orders {rates}, errors {errors}"


def test_time_order_is_two():
    """Error against a very fine step on the same mesh falls as dt^2 (TR-BDF2 is second order).

    The furnace ramps from the initial temperature so the solution is smooth in time.
    """
    mesh = structured_rectangle(0.05, 0.005, 20, 1)

    def final(dt):
        case = make_case(
            furnace={"temperature": [[0, 20], [2000, 900]], "htc": 250, "emissivity": 0.8},
            target=None,
            solver={"end_time": 1600.0, "fixed_step": dt},
        )
        return run_problem(build_problem(case, mesh=mesh)).final

    ref = final(1600.0 / 1024)
    steps = [1600.0 / 8, 1600.0 / 16, 1600.0 / 32]
    errors = [float(np.max(np.abs(final(dt) - ref))) for dt in steps]
    rates = _rates(steps, errors)
    print("time orders", rates, errors)
    assert all(1.8 < r < 2.3 for r in rates), f"observed time orders {rates}, errors {errors}"


def test_no_oscillation_after_a_step_change():
    """A face jumping from 20 C to 900 C at t = 0: no node leaves [20, 900] and none cools.

    Maximum principle of the heat equation (common practice, no source); the first step is
    backward Euler and TR-BDF2 is L-stable, so the jump must not ring.
    """
    case = make_case(
        faces={
            "xmin": {"condition": "symmetry"},
            "xmax": {"condition": "fixed", "temperature": 900},
            "ymin": {"condition": "insulated"},
            "ymax": {"condition": "insulated"},
        },
        mesh={"size": 0.0025},
        target={"temperature": 880},
    )
    problem = build_problem(case)
    lowest, drop, highest = [], [], []

    def watch(step):
        for s in step.states:
            lowest.append(float(s.min()))
            highest.append(float(s.max()))
        drop.append(float(np.min(step.end - step.start)))

    result = run_problem(problem, observers=[watch])
    assert result.target.reached
    span = 880.0
    assert min(lowest) >= 20.0 - 1e-6 * span, min(lowest)
    assert max(highest) <= 900.0 + 1e-6 * span, max(highest)
    assert min(drop) >= -1e-6 * span, min(drop)


def test_default_settings_resolve_the_target_time():
    """Target time at default settings agrees with a 100x tighter tolerance within 0.2 %."""
    base = make_case(
        material={"density": 7800, "conductivity": 30, "specific_heat": 500},
        furnace={"temperature": 900, "htc": 60, "emissivity": 0.85},
    )
    tight = make_case(
        material={"density": 7800, "conductivity": 30, "specific_heat": 500},
        furnace={"temperature": 900, "htc": 60, "emissivity": 0.85},
        solver={"tolerance": 2e-7},
    )
    t1 = run_problem(build_problem(base)).target.time
    t2 = run_problem(build_problem(tight)).target.time
    assert abs(t1 - t2) / t2 < 2e-3


def test_hold_extends_the_run_by_exactly_the_hold():
    case = make_case(target={"temperature": 880, "hold": 900})
    result = run_problem(build_problem(case))
    assert result.target.reached
    assert result.end_time == pytest.approx(result.target.time + 900, rel=1e-9)


def test_a_part_that_settles_short_of_target_is_reported_not_reached():
    """A face held cold keeps the nearby material below target: the run must notice and stop."""
    case = make_case(
        faces={
            "xmin": {"condition": "fixed", "temperature": 100},
            "ymin": {"condition": "insulated"},
            "ymax": {"condition": "insulated"},
        },
        target={"temperature": 850},
    )
    result = run_problem(build_problem(case))
    assert result.status == "not reached"
    assert "settles" in result.reason
    assert result.stats.steps < 2000


def test_cooling_reaches_target_from_above():
    """Cooling: every point must fall to the target; mirror image of heating (linear problem)."""
    hot = make_case(
        furnace={"temperature": 20, "htc": 250, "emissivity": 0},
        initial={"temperature": 900},
        target={"temperature": 40},
    )
    cold = make_case()
    r_hot = run_problem(build_problem(hot))
    r_cold = run_problem(build_problem(cold))
    assert r_hot.target.sense < 0 and r_hot.target.reached
    # theta* = 20/880 in both: the same time (linear problem, same Bi and Fo)
    assert r_hot.target.time == pytest.approx(r_cold.target.time, rel=2e-3)


@pytest.mark.parametrize(
    "model, shape, size, volume",
    [
        ("planar", "rectangle", [0.05, 0.02], 0.05 * 0.02),
        ("axisymmetric", "rectangle", [0.05, 0.02], math.pi * 0.05**2 * 0.02),
        ("solid", "box", [0.05, 0.02, 0.03], 0.05 * 0.02 * 0.03),
    ],
)
def test_volumes_and_areas(model, shape, size, volume):
    """Lumped volumes sum to the exact volume (planar: per metre depth; axisymmetric: 2 pi r)."""
    case = make_case(part={"model": model, "shape": shape, "size": size}, faces={})
    problem = build_problem(case)
    assert problem.model.volume == pytest.approx(volume, rel=1e-9)
    areas = {g.name: g.area for g in problem.model.faces}
    if model == "axisymmetric":
        assert areas["xmax"] == pytest.approx(2 * math.pi * 0.05 * 0.02, rel=1e-9)
        assert areas["ymax"] == pytest.approx(math.pi * 0.05**2, rel=1e-9)
    else:
        assert areas["xmax"] == pytest.approx(0.02 * (size[2] if len(size) == 3 else 1.0))
