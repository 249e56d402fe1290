"""Drive one run: march the problem and let the observers collect the results.

The loop stops when the part is through (plus any hold), at the end time, or when the field
has settled without reaching the target (reported plainly, never as a time).
"""

from __future__ import annotations

import logging
import time
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from .checks import Check, self_checks
from .problem import Problem, probe_matrix
from .stepping import Marcher, SolverStats
from .watch import EnergyWatch, HistoryWatch, ProbeWatch, SettleWatch, TargetWatch

__all__ = ["RunResult", "RunState", "run_problem"]

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class RunResult:
    """What a run produced. Temperatures in C, times in s, energies in J (planar: per m)."""

    problem: Problem
    status: str  # "reached", "not reached", "finished" (no target)
    reason: str
    end_time: float
    final: np.ndarray
    target: TargetWatch | None
    probes: ProbeWatch
    history: HistoryWatch
    energy: EnergyWatch
    stats: SolverStats
    wall_s: float
    settled: bool
    warnings: tuple[str, ...]
    checks: tuple[Check, ...] = ()


@dataclass
class RunState:
    """The live state of a run, for observers that keep it (checkpoints, history flushes).

    An observer with an ``attach(state)`` method is handed this before the first step; it may
    read it at any step, never change it.

    Attributes:
        watchers: "target" (when there is one), "probes", "history", "energy", "settle".
        wall_before: s of wall time spent in earlier legs of a resumed run.
        started: `time.perf_counter()` at the start of this leg.
    """

    problem: Problem
    marcher: Marcher
    watchers: dict
    wall_before: float = 0.0
    started: float = 0.0

    @property
    def wall_s(self) -> float:
        """Wall time of the run so far, s (all legs)."""
        return self.wall_before + time.perf_counter() - self.started


def _range_warnings(problem: Problem, lo: float, hi: float) -> list[str]:
    out = []
    material = problem.model.material
    ranges = material.ranges()
    if "data" in ranges:  # a published set: its stated range (tables end there too)
        a, b = ranges.pop("data")
        if lo < a - 0.01 or hi > b + 0.01:
            out.append(
                f"material data are stated for {a:g}..{b:g} C ({material.source}) but the "
                f"part went {lo:.4g}..{hi:.4g} C; outside that range the properties are "
                "extrapolated or held at the table ends"
            )
        ranges = {p: r for p, r in ranges.items() if not (r[0] >= a - 0.01 and r[1] <= b + 0.01)}
    for prop, (a, b) in ranges.items():
        if lo < a - 0.01 or hi > b + 0.01:
            out.append(
                f"material {prop} table covers {a:g}..{b:g} C but the part went "
                f"{lo:.4g}..{hi:.4g} C; values outside were held at the table ends"
            )
    return out


def run_problem(problem: Problem, observers=()) -> RunResult:
    """March `problem` to its end and return the collected results.

    Args:
        observers: extra callables taking each accepted `Step` (writers, progress).
    """
    start = time.perf_counter()
    model = problem.model
    target = problem.target
    heating = target.heating if target else True
    tw = TargetWatch(target.temperature, heating, problem.mesh.points) if target else None
    matrix = probe_matrix(problem.mesh, problem.probe_points)
    probes = ProbeWatch(
        problem.probe_names, matrix, target.temperature if target else None, heating
    )
    history = HistoryWatch(model, probes, problem.initial)
    energy = EnergyWatch(model, problem.initial)
    last_change = max(problem.settings.breakpoints, default=0.0)
    settle = SettleWatch(last_change, problem.settings.span)
    watchers = [w for w in (tw, probes, history, energy, settle) if w is not None]

    marcher = Marcher(model, problem.initial, problem.settings)
    status, reason = "finished", "end time reached"
    lo, hi = float(problem.initial.min()), float(problem.initial.max())
    last: Step | None = None
    holding = False
    for step in marcher:
        last = step
        for w in watchers:
            w.observe(step)
        for obs in observers:
            obs(step)
        lo, hi = min(lo, float(step.end.min())), max(hi, float(step.end.max()))
        if tw is not None and tw.reached and not holding:
            if target.hold <= 0:
                break
            holding = True
            stop = tw.time + target.hold
            marcher.end_time = stop if marcher.end_time is None else min(marcher.end_time, stop)
        if settle.settled or (
            tw is not None
            and not tw.reached
            and settle.remaining_K < 0.1 * abs(tw.closest_c - tw.target)
        ):
            reason = "the field has settled"
            if tw is not None and not tw.reached:
                reason = (
                    f"the part settles with its lagging point near {tw.closest_c:.1f} C, "
                    f"short of the {tw.target:g} C target"
                )
            break
    if tw is not None:
        if tw.reached:
            status, reason = "reached", "every point reached the target"
        else:
            status = "not reached"
            if reason == "end time reached":
                reason = (
                    f"end time reached with the lagging point at {tw.closest_c:.1f} C, "
                    f"short of the {tw.target:g} C target"
                )
    final = last.end if last is not None else problem.initial
    warnings = list(problem.warnings) + _range_warnings(problem, lo, hi)
    if abs(energy.relative_error) > 1e-3:
        warnings.append(
            f"energy balance off by {100 * energy.relative_error:.3f} %; tighten solver.tolerance"
        )
    for w in warnings:
        log.warning(w)
    return RunResult(
        problem=problem,
        status=status,
        reason=reason,
        end_time=last.t1 if last is not None else 0.0,
        final=final,
        target=tw,
        probes=probes,
        history=history,
        energy=energy,
        stats=marcher.stats,
        wall_s=time.perf_counter() - start,
        settled=settle.settled,
        warnings=tuple(warnings),
    )
