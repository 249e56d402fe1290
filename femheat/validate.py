"""Verification cases against published solutions: ``python -m femheat.validate``.

Each check runs a case file from ``validation/cases`` with default settings and compares one
result with a reference: an exact solution evaluated by `femheat.exact` from the case's own
inputs, or a value printed in a published benchmark. Results go to ``validation/RESULTS.md``.
"""

from __future__ import annotations

import argparse
import math
import sys
import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from . import exact
from .case import load_case
from .output.files import atomic_write_text

__all__ = ["Check", "CHECKS", "run_check", "main", "VALIDATION_DIR"]

VALIDATION_DIR = Path(__file__).resolve().parents[1] / "validation"


@dataclass(frozen=True)
class Check:
    """One verification: a case, what to compare, the reference and its source."""

    name: str
    case: str  # file name in validation/cases
    quantity: str
    unit: str
    source: str
    reference: Callable  # case -> reference value
    measure: Callable  # RunResult -> value
    tolerance: float  # relative
    slow: bool = False


def _props(case):
    m = case.material
    k, c, rho = float(m.conductivity), float(m.specific_heat), float(m.density)
    return k, rho, c, k / (rho * c)


def _theta_target(case) -> float:
    t_inf = float(case.furnace.temperature)
    return (float(case.target.temperature) - t_inf) / (float(case.initial.temperature) - t_inf)


def _series_time(body: str):
    def ref(case):
        k, _, _, alpha = _props(case)
        length = float(case.part.size[0])
        bi = float(case.furnace.htc) * length / k
        return exact.fourier_at(body, bi, _theta_target(case)) * length**2 / alpha

    return ref


def _product_time(bodies: tuple[str, ...]):
    def ref(case):
        k, _, _, alpha = _props(case)
        h = float(case.furnace.htc)
        factors = [
            (body, h * float(size) / k, alpha / float(size) ** 2, 0.0)
            for body, size in zip(bodies, case.part.size, strict=True)
        ]
        return exact.product_time(factors, _theta_target(case))

    return ref


def _lumped_radiation(case):
    _, rho, c, _ = _props(case)
    half, height = (float(v) for v in case.part.size)
    return exact.lumped_radiation_time(
        rho,
        c,
        half * height,
        height,
        float(case.furnace.emissivity),
        float(case.furnace.temperature),
        float(case.initial.temperature),
        float(case.target.temperature),
    )


def _target_time(result):
    return result.target.time if result.target and result.target.reached else math.nan


def _probe_final(result):
    return float(result.probes.values(result.final)[0])


def _energy_error(result):
    return abs(result.energy.relative_error)


KELVIN = 273.15

CHECKS: tuple[Check, ...] = (
    Check(
        "slab series",
        "slab_series.toml",
        "time to target at the mid-plane",
        "s",
        "exact series, Carslaw & Jaeger 2nd ed. 1959; Incropera 6th ed. sec. 5.5",
        _series_time("slab"),
        _target_time,
        0.005,
    ),
    Check(
        "cylinder series",
        "cylinder_series.toml",
        "time to target on the axis",
        "s",
        "exact series, Carslaw & Jaeger 2nd ed. 1959; Incropera 6th ed. sec. 5.6",
        _series_time("cylinder"),
        _target_time,
        0.005,
    ),
    Check(
        "rectangular bar product",
        "bar_product.toml",
        "time to target at the centre",
        "s",
        "product of slab series, Incropera 6th ed. sec. 5.8",
        _product_time(("slab", "slab")),
        _target_time,
        0.005,
    ),
    Check(
        "short cylinder product",
        "short_cylinder_product.toml",
        "time to target at the centre",
        "s",
        "cylinder series x slab series, Incropera 6th ed. sec. 5.8",
        _product_time(("cylinder", "slab")),
        _target_time,
        0.005,
    ),
    Check(
        "box product",
        "box_product.toml",
        "time to target at the centre",
        "s",
        "product of three slab series, Incropera 6th ed. sec. 5.8",
        _product_time(("slab", "slab", "slab")),
        _target_time,
        0.005,
    ),
    Check(
        "lumped radiation",
        "lumped_radiation.toml",
        "time to target",
        "s",
        "lumped body, radiation only, Incropera 6th ed. eq. 5.18",
        _lumped_radiation,
        _target_time,
        0.005,
    ),
    Check(
        "NAFEMS T3",
        "nafems_t3.toml",
        "T(0.08 m, 32 s)",
        "C",
        "NAFEMS, The Standard NAFEMS Benchmarks, TNSB Rev. 3, 1990, test T3",
        lambda case: 36.60,
        _probe_final,
        0.005,
    ),
    Check(
        "NAFEMS T2",
        "nafems_t2.toml",
        "steady T at end B",
        "K",
        "NAFEMS, The Standard NAFEMS Benchmarks, TNSB Rev. 3, 1990, test T2",
        lambda case: 927.0,
        lambda result: _probe_final(result) + KELVIN,
        0.002,
    ),
    Check(
        "NAFEMS T4",
        "nafems_t4.toml",
        "steady T(0.6 m, 0.2 m)",
        "C",
        "NAFEMS, The Standard NAFEMS Benchmarks, TNSB Rev. 3, 1990, test T4",
        lambda case: 18.25,
        _probe_final,
        0.01,
        slow=True,
    ),
    Check(
        "energy across the steel c(T) peak",
        "steel_peak_energy.toml",
        "|heat in - stored| / heat in",
        "-",
        "conservation of energy; c(T) of EN 1993-1-2:2005 3.4.1",
        lambda case: 0.0,
        _energy_error,
        0.001,  # absolute, see `passed`
    ),
)


@dataclass(frozen=True)
class Outcome:
    check: Check
    reference: float
    value: float
    wall_s: float
    nodes: int
    steps: int

    @property
    def error(self) -> float:
        if self.reference == 0.0:
            return self.value
        return (self.value - self.reference) / abs(self.reference)

    @property
    def passed(self) -> bool:
        return math.isfinite(self.value) and abs(self.error) <= self.check.tolerance


def run_check(check: Check, folder: Path = VALIDATION_DIR) -> Outcome:
    """Run one verification case with default settings and compare."""
    from .problem import build_problem
    from .run import run_problem

    case = load_case(folder / "cases" / check.case)
    start = time.perf_counter()
    result = run_problem(build_problem(case))
    wall = time.perf_counter() - start
    return Outcome(
        check,
        float(check.reference(case)),
        float(check.measure(result)),
        wall,
        result.problem.mesh.nodes,
        result.stats.steps,
    )


def _table(outcomes: list[Outcome]) -> str:
    lines = [
        "| case | quantity | source | reference | femheat | error | tolerance | result "
        "| nodes | steps | wall s |",
        "| --- | --- | --- | --- | --- | --- | --- | --- | --- | --- | --- |",
    ]
    for o in outcomes:
        c = o.check
        lines.append(
            f"| {c.name} | {c.quantity} ({c.unit}) | {c.source} | {o.reference:.6g} | "
            f"{o.value:.6g} | {100 * o.error:+.3f} % | {100 * c.tolerance:g} % | "
            f"{'pass' if o.passed else 'FAIL'} | {o.nodes} | {o.steps} | {o.wall_s:.2f} |"
        )
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(
        prog="python -m femheat.validate", description="run the verification cases"
    )
    parser.add_argument("--only", help="run only checks whose name contains this text")
    parser.add_argument("--no-write", action="store_true", help="do not write RESULTS.md")
    args = parser.parse_args(argv)
    checks = [c for c in CHECKS if not args.only or args.only.lower() in c.name.lower()]
    outcomes = []
    for c in checks:
        o = run_check(c)
        outcomes.append(o)
        print(
            f"{c.name:38s} ref {o.reference:12.6g}  femheat {o.value:12.6g}  "
            f"error {100 * o.error:+8.3f} %  {'pass' if o.passed else 'FAIL'}  ({o.wall_s:.1f} s)"
        )
    if not args.no_write and not args.only:
        from . import __version__

        text = (
            "# Verification results\n\n"
            f"Generated by `python -m femheat.validate` (femheat {__version__}) with default "
            "solver settings. Error = (femheat - reference) / reference; the energy row shows "
            "the relative imbalance itself.\n\n" + _table(outcomes) + "\n"
        )
        atomic_write_text(VALIDATION_DIR / "RESULTS.md", text)
    return 0 if all(o.passed for o in outcomes) else 1


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
