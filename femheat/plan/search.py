"""The search for the shortest program that keeps the plan's limits.

Problem. Choose the design values of `femheat.plan.design` (fast ramp r1, equalising setpoint
Te and hold th, slow ramp r2; only r2 when the limit applies from the start) to make the
program length (the time the whole part has reached the soak minimum, plus the soak time)
as short as possible, subject to, in every run:

    difference   max over time of (hottest - coldest point)      <= (1 - m) * max_difference
    heating rate max dT/dt of any point hotter than `above`       <= (1 - m) * limit rate
    soak         every point reaches the soak minimum; no point above the soak maximum

with m = ``plan.search.margin``. The limit rate is ``program.allowed_rate`` of
``plan.heating_limit`` (rate * reference thickness / thickness, between min_rate and max_rate).
The soak setpoint is not searched: a higher one shortens the soak and changes nothing on the
ramps, so it is ``plan.soak.setpoint`` (default: the band's top).

Search. The values are scaled to [0, 1] (rates on a log scale between
``plan.furnace.slowest`` and ``fastest``, Te between the start and `above`, th between 0 and
``longest_hold``) and handed to ``scipy.optimize.minimize(method="COBYQA")`` (derivative-free,
model-based, bounds kept, deterministic), with the constraints above as nonlinear
inequalities, starting from the reference program. Each function value is one run (cached,
so the objective and the constraints share it), at most ``plan.search.runs`` of them.

Runs outside the search:

1. the slowest program (one ramp at ``slowest``): if it breaks a limit, no program within the
   furnace bounds keeps it, and the plan is refused (`CaseError` naming the limit);
2. the limit rate as one constant ramp from loading to the soak (the limit applied as a
   constant worst-case rate); the search starts from it. If it breaks a limit, six more runs
   bisect the log of the rate between the slowest ramp and it for the fastest single ramp
   that keeps the limits: the reference the designed program is compared with;
3. the rounded program (`design.rounded`) with an open soak, giving the soak's end;
4. the check: the emitted program, soak hold included, run as an ordinary case; its worst
   values are the reported margins.

The best run that keeps the limits with the margin is rounded; if the rounded program breaks
a limit itself, the next best is tried (at most three).
"""

from __future__ import annotations

import logging
import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..errors import CaseError, FemheatError
from ..units import hours_minutes
from .design import Design, FurnaceProgram, constant_rate, program_of, rounded
from .evaluate import Evaluation, Evaluator

__all__ = ["Margin", "PlanResult", "design_program", "margins_of", "keeps_limits"]

log = logging.getLogger(__name__)

_HOUR = 3600.0


def _hm(seconds: float) -> str:
    return hours_minutes(seconds, "-")


@dataclass(frozen=True)
class Margin:
    """One limit against the check run.

    Attributes:
        name: what is limited.
        unit: of limit, worst and margin.
        limit: the limit.
        worst: the worst value in the run (NaN when it never occurred).
        margin: how far inside the limit (negative: broken).
        time_s: when the worst value occurred, s.
        where: the point(s), m (text).
        ok: the limit is kept.
    """

    name: str
    unit: str
    limit: float
    worst: float
    margin: float
    time_s: float
    where: str
    ok: bool


@dataclass(frozen=True)
class PlanResult:
    """What the plan found.

    Attributes:
        plan: the plan.
        program: the designed program, rounded, soak hold included.
        check: its run as an ordinary case (history kept).
        margins: the limits against the check run.
        ok: every limit kept in the check run.
        slowest: the slowest program's run (one ramp at ``plan.furnace.slowest``).
        limit_run: one ramp at the limit rate from loading to the soak.
        reference: the fastest single constant ramp found to keep the limits (`limit_run`
            itself when it keeps them).
        best: the search's best run (before rounding).
        evaluations: every run, in order.
        message: the optimiser's message.
    """

    plan: object
    program: FurnaceProgram
    check: Evaluation
    margins: tuple[Margin, ...]
    ok: bool
    slowest: Evaluation
    limit_run: Evaluation
    reference: Evaluation
    best: Evaluation
    evaluations: tuple[Evaluation, ...]
    message: str

    @property
    def length_s(self) -> float:
        """Length of the designed program, s."""
        return self.program.length


def _length(plan, e: Evaluation) -> float:
    """Program length of a run: through + soak time (inf when the soak was not reached)."""
    return e.through_s + plan.soak.hold if e.reached else math.inf


def _where(point) -> str:
    return "(" + ", ".join(f"{1000 * x:.1f}" for x in point) + ") mm" if point else "-"


def _constraints(plan, e: Evaluation, margin: float) -> np.ndarray:
    """The constraint values (>= 0 kept) of a run, scaled by their limits."""
    if e.status == "failed":
        return np.full(3, -1.0)
    diff = 1.0 - margin - e.difference.value / plan.max_difference
    rate = e.rate.value * 1.0 / _HOUR  # C/h -> K/s
    rate_c = 1.0 - margin - (rate / plan.limit_rate if math.isfinite(rate) else 0.0)
    band = plan.soak.maximum - plan.soak.minimum
    top = (plan.soak.maximum - e.hottest.value) / band
    soak = min(top, 1.0) if e.reached else -1.0
    return np.array([diff, rate_c, soak])


def keeps_limits(plan, e: Evaluation, margin: float = 0.0) -> bool:
    """Whether a run keeps the difference, rate and soak limits (with `margin` in reserve)."""
    return bool(np.all(_constraints(plan, e, margin) >= 0.0))


def margins_of(plan, e: Evaluation) -> tuple[Margin, ...]:
    """The limits against a run of a closed program (soak hold included)."""
    d, r = e.difference, e.rate
    soak = plan.soak
    above = f"above {plan.above_c:g} C" if plan.above_c is not None else "at any temperature"
    rate_limit = plan.limit_rate * _HOUR
    rate_worst = r.value
    out = [
        Margin(
            "largest difference (hottest - coldest point)",
            "K",
            plan.max_difference,
            d.value,
            plan.max_difference - d.value,
            d.time_s,
            f"hottest {_where(d.point)}, coldest {_where(d.other)}",
            d.value <= plan.max_difference,
        ),
        Margin(
            f"heating rate of the part {above}",
            "C/h",
            rate_limit,
            rate_worst,
            rate_limit - rate_worst if math.isfinite(rate_worst) else rate_limit,
            r.time_s,
            _where(r.point) + (f" at {r.temperature_C:.0f} C" if r.point else " (no point above)"),
            not rate_worst > rate_limit,
        ),
    ]
    held = e.program.length - e.through_s if e.reached else math.nan
    out.append(
        Margin(
            f"soak: every point at least {soak.minimum:g} C",
            "s",
            soak.hold,
            held,
            held - soak.hold if e.reached else -soak.hold,
            e.through_s,
            f"last point {_where(e.last_point)}",
            bool(e.reached and held >= soak.hold * (1 - 1e-9)),
        )
    )
    h = e.hottest
    out.append(
        Margin(
            f"soak: no point above {soak.maximum:g} C",
            "C",
            soak.maximum,
            h.value,
            soak.maximum - h.value,
            h.time_s,
            _where(h.point),
            h.value <= soak.maximum,
        )
    )
    return tuple(out)


def _reachable(plan, slow: Evaluation) -> None:
    """Refuse limits that even the slowest program breaks (one line naming the limit)."""
    if slow.status == "failed":
        raise FemheatError(f"the run of the slowest program failed: {slow.error}")
    per_h = plan.slowest * _HOUR
    how = f"even one ramp at the slowest {per_h:.3g} C/h from {plan.start_c:g} C"
    d = slow.difference
    if d.value > plan.max_difference:
        raise CaseError(
            "plan.max_difference",
            f"{plan.max_difference:g} K cannot be kept: {how} gives {d.value:.1f} K at "
            f"{_hm(d.time_s)} h:min (hottest {_where(d.point)}, coldest {_where(d.other)})",
            "raise the limit, load at a temperature nearer the part's (plan.start), or lower "
            "plan.furnace.slowest",
        )
    r = slow.rate
    limit = plan.limit_rate * _HOUR
    if r.value > limit:
        where = (
            "plan.start"
            if plan.above_c is not None and plan.start_c >= plan.above_c
            else ("plan.heating_limit")
        )
        raise CaseError(
            where,
            f"the limit {limit:.3g} C/h cannot be kept: {how} heats the part at "
            f"{r.value:.3g} C/h at {_hm(r.time_s)} h:min ({_where(r.point)}, "
            f"{r.temperature_C:.0f} C)",
            "load at a lower furnace temperature (plan.start) or lower plan.furnace.slowest",
        )
    if not slow.reached:
        raise CaseError(
            "plan.soak.minimum",
            f"{plan.soak.minimum:g} C is not reached with the furnace at "
            f"{plan.setpoint_c:g} C ({slow.status}, run ended at {_hm(slow.end_s)} h:min)",
            "check the faces of the base case, or lower the soak minimum",
        )
    if slow.hottest.value > plan.soak.maximum:
        raise CaseError(
            "plan.soak.maximum",
            f"the part reaches {slow.hottest.value:.1f} C, above {plan.soak.maximum:g} C, "
            "even with the slowest program",
            "raise the soak maximum or check faces with their own temperatures",
        )


class _Space:
    """The design values scaled to [0, 1]."""

    def __init__(self, plan):
        self.plan = plan
        self.below = plan.below_phase
        self.lo, self.hi = math.log(plan.slowest), math.log(plan.fastest)

    @property
    def size(self) -> int:
        return 4 if self.below else 1

    def _rate(self, u: float) -> float:
        return math.exp(self.lo + float(np.clip(u, 0, 1)) * (self.hi - self.lo))

    def _unit(self, rate: float) -> float:
        return float(np.clip((math.log(rate) - self.lo) / (self.hi - self.lo), 0, 1))

    def design(self, u) -> Design:
        p = self.plan
        if not self.below:
            r = self._rate(u[0])
            return Design(r, p.start_c, 0.0, r)
        te = p.start_c + float(np.clip(u[1], 0, 1)) * (p.above_c - p.start_c)
        th = float(np.clip(u[2], 0, 1)) * p.longest_hold
        return Design(self._rate(u[0]), te, th, self._rate(u[3]))

    def unit(self, d: Design) -> np.ndarray:
        p = self.plan
        if not self.below:
            return np.array([self._unit(d.slow_rate)])
        te = (d.hold_at - p.start_c) / (p.above_c - p.start_c)
        th = d.hold_time / p.longest_hold
        return np.array([self._unit(d.fast_rate), te, th, self._unit(d.slow_rate)])

    def program(self, d: Design) -> FurnaceProgram:
        p = self.plan
        return program_of(d, p.start_c, p.setpoint_c, self.below)


class _Spent(Exception):
    """The search's runs are used up."""


def _constant_reference(plan, run, slow: Evaluation, above0: float, guard: float):
    """The limit rate as one constant ramp, and the fastest constant ramp keeping the limits
    (the limit-rate run itself, or bisection on the log of the rate between the slowest
    ramp, which keeps them, and the limit rate: six halvings, within 4 % of the rate)."""
    rate0 = float(np.clip(plan.limit_rate, plan.slowest, plan.fastest))
    limit_run = run(
        constant_rate(rate0, plan.start_c, plan.setpoint_c),
        "limit rate",
        Design(rate0, above0, 0.0, rate0),
        end_time=guard,
    )
    if keeps_limits(plan, limit_run, plan.spec.search.margin):
        return limit_run, limit_run
    lo, hi, best = math.log(plan.slowest), math.log(rate0), slow
    for _ in range(6):
        rate = math.exp(0.5 * (lo + hi))
        e = run(
            constant_rate(rate, plan.start_c, plan.setpoint_c),
            "constant rate",
            Design(rate, above0, 0.0, rate),
            end_time=guard,
        )
        if keeps_limits(plan, e, plan.spec.search.margin):
            lo, best = math.log(rate), e
        else:
            hi = math.log(rate)
    return limit_run, best


def design_program(
    plan,
    on_evaluation: Callable[[Evaluation], None] | None = None,
    mesh=None,
    runs: int | None = None,
) -> PlanResult:
    """Find the shortest program keeping the plan's limits, and check it.

    Args:
        plan: a `femheat.plan.spec.Plan`.
        on_evaluation: called with every run as it finishes (to store or show it).
        mesh: a `PartMesh` of the part (None: meshed once here).
        runs: the search's runs (None: ``plan.search.runs``).

    Raises:
        CaseError: limits no program within the furnace bounds keeps, or a bad base case.
        FemheatError: a reference run failed, or no program found keeps the limits.
    """
    from scipy.optimize import Bounds, NonlinearConstraint, minimize

    evaluate = Evaluator(plan, mesh)
    done: list[Evaluation] = []

    def run(program, label, design=None, end_time=None, keep=False) -> Evaluation:
        e = evaluate(program, label, design, end_time, keep)
        done.append(e)
        if on_evaluation is not None:
            on_evaluation(e)
        return e

    space = _Space(plan)
    above0 = plan.above_c if space.below else plan.start_c
    slow = run(
        constant_rate(plan.slowest, plan.start_c, plan.setpoint_c),
        "slowest ramp",
        Design(plan.slowest, above0, 0.0, plan.slowest),
    )
    _reachable(plan, slow)
    guard = 1.2 * slow.end_s  # a run not through by then is longer than the slowest program
    limit_run, reference = _constant_reference(plan, run, slow, above0, guard)
    scale = _length(plan, reference)
    margin = plan.spec.search.margin
    u0 = space.unit(limit_run.design)
    cache: dict[tuple, Evaluation] = {tuple(u0): limit_run}
    budget = runs if runs is not None else plan.spec.search.runs

    def at(u) -> Evaluation:
        key = tuple(float(x) for x in np.clip(u, 0.0, 1.0))
        if key not in cache:
            if len(cache) > budget:  # the start point is cached without a search run
                raise _Spent
            d = space.design(key)
            cache[key] = run(space.program(d), "search", d, end_time=guard)
        return cache[key]

    def objective(u) -> float:
        e = at(u)
        length = _length(plan, e)
        return (length if math.isfinite(length) else 2.0 * guard) / scale

    def constraints(u) -> np.ndarray:
        return _constraints(plan, at(u), margin)

    message = ""
    try:
        res = minimize(
            objective,
            u0,
            method="COBYQA",
            bounds=Bounds(np.zeros(space.size), np.ones(space.size)),
            constraints=NonlinearConstraint(constraints, 0.0, np.inf),
            options={"maxfev": budget + 1, "initial_tr_radius": 0.25, "final_tr_radius": 2e-3},
        )
        message = str(res.message)
    except _Spent:
        message = f"the {budget} search runs are spent"
    except (ValueError, ArithmeticError, np.linalg.LinAlgError) as exc:
        message = f"the search stopped: {exc}"
        log.warning(message)

    designed = [e for e in done if e.design is not None]
    order = sorted(designed, key=lambda e: (_length(plan, e), e.index))
    good = [e for e in order if keeps_limits(plan, e, margin)]
    good += [e for e in order if keeps_limits(plan, e) and e not in good]
    if not good:
        raise FemheatError("no program kept the limits; fix: raise plan.search.runs")
    for best in good[:3]:
        program = rounded(best.program)
        opened = run(program, "rounded", best.design, end_time=guard)
        if not keeps_limits(plan, opened):
            continue
        ramps_end = program.length  # the open soak hold counts 0
        minutes = math.ceil((opened.through_s + plan.soak.hold - ramps_end) / 60.0 - 1e-9)
        program = program.with_soak(60.0 * max(minutes, 1))
        check = run(program, "check", best.design, end_time=program.length, keep=True)
        margins = margins_of(plan, check)
        ok = all(m.ok for m in margins)
        if ok:
            return PlanResult(
                plan,
                program,
                check,
                margins,
                ok,
                slow,
                limit_run,
                reference,
                best,
                tuple(done),
                message,
            )
    raise FemheatError(
        "the rounded programs of the best runs break a limit; fix: raise plan.search.margin"
    )
