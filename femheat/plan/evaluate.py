"""One furnace program run on the plan's part, reduced to the values the limits are about.

Each evaluation is an ordinary run (`femheat.problem.build_problem` and
`femheat.run.run_problem`) of the base case with its furnace temperature replaced by the
program (walls at the gas temperature), the soak as its target (``temperature`` = the soak
minimum, ``hold`` = the soak time) and no time step longer than ``plan.search.max_step``. All
runs share one mesh, built once.

`LimitWatch`, an observer of the steps, reads at the end of every step:

* the difference: hottest minus coldest node of the part (K), with both points;
* the heating rate above the limit's temperature: the largest dT/dt (C/h) of any node hotter
  than ``heating_limit.above`` (every node when there is no ``above``), with the point. This
  is the rate at any point of the part, the strictest reading of a rule written for
  thermocouples on the part;
* the hottest temperature, for the top of the soak band.
"""

from __future__ import annotations

import copy
import logging
import math
import time
from dataclasses import dataclass, field

import numpy as np

from ..errors import CaseError, FemheatError
from .design import Design, FurnaceProgram

__all__ = ["Evaluation", "Evaluator", "LimitWatch", "Worst", "HISTORY_COLUMNS", "case_table"]

log = logging.getLogger(__name__)

_HOUR = 3600.0

#: Columns of an evaluation's history (one row per step; time 0 first).
HISTORY_COLUMNS = (
    "time_s",
    "setpoint_C",
    "min_C",
    "max_C",
    "difference_C",
    "rate_above_C_per_h",
    "fastest_rate_C_per_h",
)


@dataclass(frozen=True)
class Worst:
    """The worst value of one limited quantity in a run.

    Attributes:
        value: the worst value (K for the difference, C/h for the rate, C for temperatures;
            NaN when it never occurred, e.g. no point went above the limit's temperature).
        time_s: when, s.
        point: where (m; (x, y), (r, z) or (x, y, z)), or () when it never occurred.
        other: a second point (the coldest one, for the difference), or ().
        temperature_C: the temperature at `point` then (NaN if not kept).
    """

    value: float
    time_s: float = math.nan
    point: tuple[float, ...] = ()
    other: tuple[float, ...] = ()
    temperature_C: float = math.nan


@dataclass(frozen=True)
class Evaluation:
    """One program's run.

    Attributes:
        index: order of the run in the plan, from 1.
        label: what it was for ("slowest ramp", "limit rate", "search", "rounded", "check").
        program: the program run.
        design: the design values it came from (None for reference programs).
        status: the run's status ("reached", "not reached", "failed", ...).
        through_s: when every point had reached the soak minimum, s (NaN if never).
        end_s: when the run ended, s.
        difference, rate, hottest: the worst values (`Worst`).
        last_point: the last point to reach the soak minimum, m (() if never).
        steps, wall_s: time steps taken and wall time, s.
        warnings: the run's warnings.
        error: the message of a failed run ("" otherwise).
        history: per step, the `HISTORY_COLUMNS` as arrays (kept for the final check only).
    """

    index: int
    label: str
    program: FurnaceProgram
    design: Design | None
    status: str
    through_s: float
    end_s: float
    difference: Worst
    rate: Worst
    hottest: Worst
    last_point: tuple[float, ...] = ()
    steps: int = 0
    wall_s: float = 0.0
    warnings: tuple[str, ...] = ()
    error: str = ""
    history: dict[str, np.ndarray] | None = field(default=None, repr=False)

    @property
    def reached(self) -> bool:
        return self.status == "reached" and math.isfinite(self.through_s)

    def row(self) -> dict:
        """A flat dict for the evaluations table (times s, rates C/h, temperatures C)."""
        d = self.design
        return {
            "run": self.index,
            "label": self.label,
            "fast_rate_C_per_h": d.fast_rate * _HOUR if d else math.nan,
            "hold_at_C": d.hold_at if d else math.nan,
            "hold_time_s": d.hold_time if d else math.nan,
            "slow_rate_C_per_h": d.slow_rate * _HOUR if d else math.nan,
            "status": self.status,
            "through_s": self.through_s,
            "end_s": self.end_s,
            "largest_difference_C": self.difference.value,
            "largest_difference_time_s": self.difference.time_s,
            "largest_rate_above_C_per_h": self.rate.value,
            "largest_rate_above_time_s": self.rate.time_s,
            "hottest_C": self.hottest.value,
            "steps": self.steps,
            "wall_s": self.wall_s,
            "error": self.error,
            "program": self.program.case_value(units=True),
        }


class LimitWatch:
    """Observer of a run: difference, heating rate above a temperature, hottest point.

    Args:
        above: C; rates are read at nodes hotter than this (None: every node).
        points: node coordinates, m.
        setpoint: the furnace schedule (callable of time, C), for the history.
    """

    def __init__(self, above: float | None, points: np.ndarray, setpoint):
        self.above = above
        self.points = np.asarray(points, dtype=float)
        self.setpoint = setpoint
        self.rows: list[tuple[float, ...]] = []
        self.difference = Worst(-math.inf)
        self.rate = Worst(math.nan)
        self.hottest = Worst(-math.inf)

    def attach(self, state) -> None:
        """Record the starting field (time 0)."""
        self._record(0.0, np.asarray(state.problem.initial, dtype=float), None)

    def _point(self, i: int) -> tuple[float, ...]:
        return tuple(float(x) for x in self.points[i])

    def _record(self, t: float, temp: np.ndarray, rate: np.ndarray | None) -> None:
        i_lo, i_hi = int(np.argmin(temp)), int(np.argmax(temp))
        lo, hi = float(temp[i_lo]), float(temp[i_hi])
        if hi - lo > self.difference.value:
            self.difference = Worst(hi - lo, t, self._point(i_hi), self._point(i_lo))
        if hi > self.hottest.value:
            self.hottest = Worst(hi, t, self._point(i_hi), (), hi)
        above, fastest = math.nan, math.nan
        if rate is not None:
            per_h = _HOUR * rate
            fastest = float(per_h.max())
            hot = np.ones(temp.shape, bool) if self.above is None else temp > self.above
            if hot.any():
                j = int(np.flatnonzero(hot)[np.argmax(per_h[hot])])
                above = float(per_h[j])
                if not above <= self.rate.value:  # also replaces the first NaN
                    self.rate = Worst(above, t, self._point(j), (), float(temp[j]))
        self.rows.append((t, float(self.setpoint(t)), lo, hi, hi - lo, above, fastest))

    def __call__(self, step) -> None:
        """Observe one accepted step (its end state and rates)."""
        self._record(step.t1, np.asarray(step.end, dtype=float), np.asarray(step.rate))

    def history(self) -> dict[str, np.ndarray]:
        """The rows as arrays by `HISTORY_COLUMNS`."""
        a = np.asarray(self.rows, dtype=float).reshape(-1, len(HISTORY_COLUMNS))
        return {name: a[:, k] for k, name in enumerate(HISTORY_COLUMNS)}


def case_table(plan, program: FurnaceProgram, end_time: float | None = None) -> dict:
    """The plan's base case table with this program, the soak as target and the step limit.

    Args:
        plan: the `femheat.plan.spec.Plan`.
        program: the furnace program (an open final hold is held to the end).
        end_time: s, end of the run (None: when the soak is done, or the part settles).
    """
    data = copy.deepcopy(plan.table)
    furnace = data.setdefault("furnace", {})
    furnace["temperature"] = program.case_value()
    furnace.pop("wall_temperature", None)
    data["target"] = {"temperature": plan.soak.minimum, "hold": plan.soak.hold}
    solver = data.setdefault("solver", {})
    given = plan.case.solver.max_step
    step = plan.spec.search.max_step
    solver["max_step"] = min(step, given) if given else step
    solver.pop("end_time", None)
    if end_time is not None:
        solver["end_time"] = float(end_time)
    return data


class Evaluator:
    """Runs programs on the plan's part, on one mesh.

    Args:
        plan: the `femheat.plan.spec.Plan`.
        mesh: a `PartMesh` of the part (None: meshed here, once).

    Raises:
        CaseError: the base case does not build (bad faces, probes ...).
    """

    def __init__(self, plan, mesh=None):
        from ..study.outcome import mesh_for_table

        self.plan = plan
        self.count = 0
        if mesh is None:
            from .design import constant_rate

            probe = constant_rate(plan.fastest, plan.start_c, plan.setpoint_c)
            mesh = mesh_for_table(self.case_table(probe), plan.base_dir)
        self.mesh = mesh

    def case_table(self, program: FurnaceProgram, end_time: float | None = None) -> dict:
        """The base case table for `program` (see `case_table`)."""
        return case_table(self.plan, program, end_time)

    def __call__(
        self,
        program: FurnaceProgram,
        label: str,
        design: Design | None = None,
        end_time: float | None = None,
        keep: bool = False,
    ) -> Evaluation:
        """Run one program.

        A run that fails (the march does not converge) gives an evaluation with status
        "failed" and its message, so a search can go on; bad input raises.

        Args:
            program: the program.
            label: what the run is for.
            design: the design values it came from.
            end_time: s, end of the run (None: the soak's end or settling).
            keep: keep the per-step history.

        Raises:
            CaseError: the program makes a bad case (e.g. a rate the case rejects).
        """
        from ..problem import build_problem
        from ..run import run_problem
        from ..study.outcome import case_from_table

        self.count += 1
        start = time.perf_counter()
        table = self.case_table(program, end_time)
        problem = build_problem(case_from_table(table, self.plan.base_dir), mesh=self.mesh)
        watch = LimitWatch(self.plan.above_c, problem.mesh.points, problem.furnace_gas)
        try:
            result = run_problem(problem, observers=[watch])
        except CaseError:
            raise
        except FemheatError as exc:
            log.warning("plan run %d failed: %s", self.count, exc)
            nan = Worst(math.nan)
            return Evaluation(
                self.count,
                label,
                program,
                design,
                "failed",
                math.nan,
                math.nan,
                nan,
                nan,
                nan,
                wall_s=time.perf_counter() - start,
                error=str(exc),
            )
        tw = result.target
        through = float(tw.time) if tw is not None and tw.reached else math.nan
        return Evaluation(
            index=self.count,
            label=label,
            program=program,
            design=design,
            status=result.status,
            through_s=through,
            end_s=float(result.end_time),
            difference=watch.difference,
            rate=watch.rate,
            hottest=watch.hottest,
            last_point=tuple(float(x) for x in tw.last_point) if math.isfinite(through) else (),
            steps=int(result.stats.steps),
            wall_s=time.perf_counter() - start,
            warnings=tuple(result.warnings),
            history=watch.history() if keep else None,
        )
