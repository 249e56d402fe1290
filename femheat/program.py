"""Furnace programs: ramps, holds and cooling as segments, turned into piecewise-linear schedules.

A program starts at a temperature at t = 0 and runs its steps in order:

* ``ramp_to`` (or ``cool_to``) a setpoint at a ``rate`` (K/s; e.g. "100 degC/h" in the case
  file) or over a ``duration`` (s);
* ``hold`` the setpoint for a time (s).

After the last step the setpoint is held. The result is a :class:`femheat.furnace.Schedule`
(linear between the corners), so the solver does not know programs exist.

**Thickness-dependent rate limit.** Rules for post-weld heat treatment of pressure vessels
limit the heating and cooling rate above a temperature to a rate divided by the thickness in
inches, with a floor ("need not be below") and a ceiling. A program's ``limit`` states it::

    limit = rate * reference_thickness / thickness, clipped to [min_rate, max_rate]

with ``max_rate`` defaulting to the rate itself. Ramps (or their parts above ``above``) that
ask for more are slowed to the limit; a ramp with no rate runs at the limit. Each change is
reported as a note. The limit acts on the furnace setpoint: the part's own rate is lower while
it lags the furnace, and the code in force decides what must be measured.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .errors import CaseError
from .furnace import Schedule
from .units import hours_minutes

__all__ = [
    "ScheduleReader",
    "Segment",
    "allowed_rate",
    "program_schedule",
    "schedule_lines",
    "schedule_segments",
    "to_schedule",
]

_FAST = 0.5  # K/s: a bare-number rate above this (1800 K/h) was probably meant per hour


def _hm(seconds: float) -> str:
    return hours_minutes(seconds)


def allowed_rate(rate: float, limit, thickness: float) -> float:
    """The rate limit (K/s) for a part of `thickness` (m) under a `case.RateLimit`."""
    value = rate * limit.reference_thickness / thickness
    ceiling = limit.max_rate if limit.max_rate is not None else rate
    value = min(value, ceiling)
    if limit.min_rate is not None:
        value = max(value, limit.min_rate)
    return value


def _per_hour(rate_k_s: float) -> str:
    return f"{3600.0 * rate_k_s:.4g} C/h"


def program_schedule(
    program, where: str, thickness: float | None = None, notes: list[str] | None = None
) -> Schedule:
    """The piecewise-linear schedule of a `case.Program`.

    Args:
        program: the validated program.
        where: its dotted place in the case file, for messages.
        thickness: the part thickness in m for a rate limit without its own thickness.
        notes: list that receives one line per adjustment made by the rate limit.

    Raises:
        CaseError: a ramp without rate or duration where no limit sets it, or a limit with
            no thickness to work from.
    """
    notes = notes if notes is not None else []
    limit = program.limit
    if limit is not None:
        if limit.thickness is not None:
            thickness = limit.thickness
        elif thickness is None:
            raise CaseError(
                f"{where}.limit.thickness",
                "missing; the part has no thickness to take the rate limit from",
                'add thickness = "50 mm" (the governing thickness) to the limit',
            )
    t, temp = 0.0, float(program.start)
    points = [(t, temp)]
    for i, step in enumerate(program.steps):
        place = f"{where}.steps[{i}]"
        if step.hold is not None:
            t += step.hold
            points.append((t, temp))
            continue
        target = float(step.setpoint)
        heating = target > temp
        rate = step.rate
        if step.duration is not None:
            rate = abs(target - temp) / step.duration
        if rate is not None and step.rate is not None and rate > _FAST:
            notes.append(
                f"{place}.rate: {rate:g} K/s ({_per_hour(rate)}) is very fast; "
                'write e.g. "100 degC/h" for a rate per hour'
            )
        base = None if limit is None else (limit.heating if heating else limit.cooling)
        cap = None if base is None else allowed_rate(base, limit, thickness)
        # split the ramp where it crosses the temperature above which the limit applies
        cuts = [temp, target]
        if cap is not None and limit.above is not None:
            if min(temp, target) < limit.above < max(temp, target):
                cuts = [temp, limit.above, target]
        for a, b in zip(cuts[:-1], cuts[1:], strict=True):
            limited = cap is not None and (limit.above is None or max(a, b) > limit.above)
            use = rate
            if limited:
                if use is None:
                    use = cap
                elif use > cap * (1 + 1e-9):
                    notes.append(
                        f"{place}: ramp {a:.4g} -> {b:.4g} C slowed from {_per_hour(use)} to "
                        f"{_per_hour(cap)} by the rate limit (thickness {1000 * thickness:.4g} mm)"
                    )
                    use = cap
            if use is None:
                key = "ramp_to" if step.ramp_to is not None else "cool_to"
                why = (
                    f"the rate limit applies only above {limit.above:.4g} C"
                    if cap is not None
                    else "no rate limit sets it"
                )
                raise CaseError(
                    f"{place}.rate",
                    f"missing; the {key} step from {a:.4g} to {b:.4g} C needs a rate ({why})",
                    'add rate = "100 degC/h" or duration = "2 h" to the step',
                )
            t += abs(b - a) / use
            points.append((t, b))
        temp = target
    return Schedule(tuple(p[0] for p in points), tuple(p[1] for p in points))


def to_schedule(
    value, where: str = "", thickness: float | None = None, notes: list[str] | None = None
) -> Schedule | None:
    """A case schedule value (number, rows, or program) as a Schedule; None stays None."""
    if value is None:
        return None
    if isinstance(value, int | float):
        return Schedule.constant(float(value))
    if isinstance(value, tuple | list):
        return Schedule.from_rows(value)
    return program_schedule(value, where, thickness, notes)


@dataclass
class ScheduleReader:
    """Turns case schedules into Schedules for one problem, collecting the notes once each.

    Args:
        thickness: the part thickness in m for rate limits that do not give their own.
        thickness_note: how that thickness was found, added to the notes when it is used.
    """

    thickness: float | None = None
    thickness_note: str = ""
    notes: list[str] = field(default_factory=list)
    _done: dict = field(default_factory=dict)

    def __call__(self, value, where: str) -> Schedule | None:
        key = (where, id(value))
        if key not in self._done:
            found: list[str] = []
            self._done[key] = to_schedule(value, where, self.thickness, found)
            limit = getattr(value, "limit", None)
            if limit is not None and limit.thickness is None and self.thickness_note:
                found.insert(0, f"{where}.limit: {self.thickness_note}")
            self.notes.extend(found)
        return self._done[key]


@dataclass(frozen=True)
class Segment:
    """A straight piece of a schedule: from (t0, v0) to (t1, v1); rate in K/s."""

    t0: float
    t1: float
    v0: float
    v1: float

    @property
    def rate(self) -> float:
        return (self.v1 - self.v0) / (self.t1 - self.t0)

    @property
    def kind(self) -> str:
        if abs(self.v1 - self.v0) <= 1e-9 * max(1.0, abs(self.v0)):
            return "hold"
        return "ramp" if self.v1 > self.v0 else "cool"


def schedule_segments(schedule: Schedule) -> list[Segment]:
    """The straight pieces of a schedule, merging neighbours with the same rate."""
    t = np.asarray(schedule.times, dtype=float)
    v = np.asarray(schedule.values, dtype=float)
    out: list[Segment] = []
    for i in range(t.size - 1):
        seg = Segment(float(t[i]), float(t[i + 1]), float(v[i]), float(v[i + 1]))
        if out and abs(out[-1].rate - seg.rate) <= 1e-9 * max(abs(seg.rate), 1e-12):
            seg = Segment(out[-1].t0, seg.t1, out[-1].v0, seg.v1)
            out[-1] = seg
        else:
            out.append(seg)
    return out


def schedule_lines(schedule: Schedule, system: str = "si") -> list[str]:
    """A short table of a temperature schedule: times in h:min, temperatures in C (and F).

    Args:
        system: "si", or "us" to add Fahrenheit.
    """

    def temp(c: float) -> str:
        return f"{c:.0f} C ({1.8 * c + 32:.0f} F)" if system == "us" else f"{c:.0f} C"

    def rate(r: float) -> str:
        per_h = 3600.0 * r
        text = f"{per_h:+.0f} C/h"
        return text + (f" ({1.8 * per_h:+.0f} F/h)" if system == "us" else "")

    segments = schedule_segments(schedule)
    if not segments:
        return [f"constant {temp(schedule.values[0])}"]
    lines = []
    if segments[0].t0 > 0:
        lines.append(f"before {_hm(segments[0].t0)}: held at {temp(segments[0].v0)}")
    for s in segments:
        span = f"{_hm(s.t0):>6} - {_hm(s.t1):<6}"
        if s.kind == "hold":
            lines.append(f"{span} hold  {temp(s.v0)}")
        else:
            lines.append(f"{span} {s.kind}  {temp(s.v0)} -> {temp(s.v1)} at {rate(s.rate)}")
    lines.append(f"after {_hm(segments[-1].t1)}: held at {temp(segments[-1].v1)}")
    return lines
