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
    # a fraction of a degree past a table end (P2 elements dip so far after a sudden change)
    # changes no property value that matters; only larger excursions are reported
    slack = 0.5
    if "data" in ranges:  # a published set: its stated range (tables end there too)
        a, b = ranges.pop("data")
        if lo < a - slack or hi > b + slack:
            out.append(
                f"material data are stated for {a:g}..{b:g} C ({material.source}) but the "
                f"part went {lo:.4g}..{hi:.4g} C; outside that range the properties are "
                "extrapolated or held at the table ends"
            )
        ranges = {p: r for p, r in ranges.items() if not (r[0] >= a - 0.01 and r[1] <= b + 0.01)}
    for prop, (a, b) in ranges.items():
        if lo < a - slack or hi > b + slack:
            out.append(
                f"material {prop} table covers {a:g}..{b:g} C but the part went "
                f"{lo:.4g}..{hi:.4g} C; values outside were held at the table ends"
            )
    return out


def run_problem(
    problem: Problem,
    observers=(),
    *,
    stop: Callable[[], str | None] | None = None,
    resume: dict | None = None,
) -> RunResult:
    """March `problem` to its end and return the collected results.

    Args:
        observers: extra callables taking each accepted `Step` (writers, progress). Those with
            an ``attach(state)`` method get the `RunState` first.
        stop: asked after each step (unless the run ends there anyway); a reason (text)
            stops the run, whose status is then "interrupted".
        resume: continue a run from its checkpoint: ``{"marcher": Marcher.snapshot(),
            "watchers": {name: {attribute: value}}, "wall_s": s}`` (`femheat.checkpoint`).
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
    named = {"target": tw, "probes": probes, "history": history, "energy": energy}
    named = {k: w for k, w in {**named, "settle": settle}.items() if w is not None}
    watchers = list(named.values())

    snapshot, wall_before = None, 0.0
    if resume is not None:
        snapshot, wall_before = resume["marcher"], float(resume.get("wall_s", 0.0))
        for name, attributes in resume["watchers"].items():
            for key, value in attributes.items():
                setattr(named[name], key, value)
    marcher = Marcher(model, problem.initial, problem.settings, resume=snapshot)
    state = RunState(problem, marcher, named, wall_before, start)
    for obs in observers:
        if hasattr(obs, "attach"):
            obs.attach(state)
    status, reason = "finished", "end time reached"
    rows = np.asarray(history.rows, dtype=float)  # the start, or every step before a resume
    lo, hi = float(rows[:, 1].min()), float(rows[:, 2].max())
    end_time, final = 0.0, problem.initial
    if snapshot is not None:
        end_time, final = float(snapshot["t"]), np.asarray(snapshot["temperature"])
    holding = False

    def over() -> bool:
        """After a step: the part is through (and held), or the field has settled."""
        nonlocal holding, reason
        if tw is not None and tw.reached and not holding:
            if target.hold <= 0:
                return True
            holding = True
            until = tw.time + target.hold
            marcher.end_time = until if marcher.end_time is None else min(marcher.end_time, until)
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
            return True
        return False

    # a resumed run first takes the decisions of the step its checkpoint was written at
    done = snapshot is not None and over()
    for step in () if done else marcher:
        end_time, final = step.t1, step.end
        for w in watchers:
            w.observe(step)
        for obs in observers:
            obs(step)
        lo, hi = min(lo, float(step.end.min())), max(hi, float(step.end.max()))
        if over():
            break
        at_end = marcher.end_time is not None and step.t1 >= marcher.end_time * (1 - 1e-12)
        why = stop() if stop is not None and not at_end else None
        if why:
            status, reason = "interrupted", f"{why} at t = {step.t1:.6g} s, before the end"
            break
    if tw is not None and status != "interrupted":
        if tw.reached:
            status, reason = "reached", "every point reached the target"
        else:
            status = "not reached"
            if reason == "end time reached":
                reason = (
                    f"end time reached with the lagging point at {tw.closest_c:.1f} C, "
                    f"short of the {tw.target:g} C target"
                )
    checks = self_checks(problem, energy, marcher.stats)
    warnings = list(problem.warnings) + _range_warnings(problem, lo, hi)
    warnings += [c.warning for c in checks if not c.ok]
    for w in warnings:
        log.warning(w)
    return RunResult(
        problem=problem,
        status=status,
        reason=reason,
        end_time=end_time,
        final=final,
        target=tw,
        probes=probes,
        history=history,
        energy=energy,
        stats=marcher.stats,
        wall_s=state.wall_s,
        settled=settle.settled,
        warnings=tuple(warnings),
        checks=checks,
    )
