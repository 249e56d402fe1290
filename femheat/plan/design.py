"""Ramp-and-hold furnace programs made from a few design values, and their case-file forms.

The designed program has at most four steps after loading at the start temperature S:

1. ramp at ``fast_rate`` to the equalising setpoint ``hold_at`` (at most the temperature A
   above which the heating limit applies);
2. hold ``hold_at`` for ``hold_time`` (the part catches up with the furnace, so its lagging
   points do not cross A while still racing to close the gap);
3. ramp at ``slow_rate`` to the soak setpoint;
4. hold the soak setpoint until every point has been in the soak band for the soak time.

When the limit applies everywhere (no ``above``) or the start is within 5 K of A, steps 1 and
2 are left out. Rates are in K/s, temperatures in C, times in s inside; the case-file text
uses C/h, C and minutes.

`rounded` gives the values a furnace controller is set to: rates down to three significant
figures in C/h (never faster than designed), the equalising setpoint down to a whole C, holds
up to whole minutes; the start and the soak setpoint stay as given. Holds under a minute and
ramps under 1 K are dropped.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

__all__ = ["Design", "ProgramStep", "FurnaceProgram", "program_of", "rounded", "constant_rate"]

_HOUR = 3600.0


@dataclass(frozen=True)
class Design:
    """The design values of a program.

    Attributes:
        fast_rate: furnace ramp below the equalising setpoint, K/s.
        hold_at: equalising setpoint, C.
        hold_time: equalising hold, s (0: none).
        slow_rate: furnace ramp from the equalising setpoint to the soak setpoint, K/s.
        soak_hold: hold at the soak setpoint, s (None: open, the run decides).
    """

    fast_rate: float
    hold_at: float
    hold_time: float
    slow_rate: float
    soak_hold: float | None = None


@dataclass(frozen=True)
class ProgramStep:
    """One step: a ramp to `setpoint` at `rate` (K/s), or a hold of `duration` s at it."""

    kind: str  # "ramp" or "hold"
    setpoint: float
    rate: float | None = None
    duration: float | None = None


@dataclass(frozen=True)
class FurnaceProgram:
    """A ramp-and-hold program from `start` (C) at t = 0; the last setpoint is held after the
    last step (a final hold of None is open-ended)."""

    start: float
    steps: tuple[ProgramStep, ...]

    def corners(self) -> list[tuple[float, float]]:
        """(time s, setpoint C) at the start and the end of each step (an open hold ends at
        its start)."""
        t, temp = 0.0, self.start
        out = [(t, temp)]
        for s in self.steps:
            if s.kind == "ramp":
                t += abs(s.setpoint - temp) / s.rate
                temp = s.setpoint
            elif s.duration is not None:
                t += s.duration
            out.append((t, temp))
        return out

    @property
    def length(self) -> float:
        """Time to the end of the last step, s (an open final hold counts 0)."""
        return self.corners()[-1][0]

    def case_value(self, units: bool = False) -> dict:
        """The program as a case-file value for ``furnace.temperature``: SI numbers, or with
        `units` text such as "425 C", "250 degC/h" and "30 min"."""
        steps = []
        for s in self._closed_steps():
            if s.kind == "ramp":
                to, rate = s.setpoint, s.rate
                if units:
                    to, rate = f"{_c(to)} C", f"{_g(rate * _HOUR)} degC/h"
                steps.append({"ramp_to": to, "rate": rate})
            else:
                steps.append({"hold": f"{_g(s.duration / 60.0)} min" if units else s.duration})
        return {"start": f"{_c(self.start)} C" if units else self.start, "steps": steps}

    def _closed_steps(self) -> list[ProgramStep]:
        return [s for s in self.steps if s.kind == "ramp" or s.duration is not None]

    def case_text(self) -> str:
        """The ``[furnace.temperature]`` table to paste into a case file (C, C/h, minutes)."""
        value = self.case_value(units=True)
        lines = ["[furnace.temperature]", f'start = "{value["start"]}"', "steps = ["]
        for step in value["steps"]:
            inner = ", ".join(f'{k} = "{v}"' for k, v in step.items())
            lines.append(f"  {{ {inner} }},")
        lines.append("]")
        return "\n".join(lines) + "\n"

    def rows(self) -> list[dict]:
        """One dict per step: step, kind, from_C, to_C, rate_C_per_h, duration_s, start_s,
        end_s."""
        out = []
        corners = self.corners()
        for i, s in enumerate(self.steps):
            (t0, v0), (t1, v1) = corners[i], corners[i + 1]
            out.append(
                {
                    "step": i + 1,
                    "kind": s.kind,
                    "from_C": v0,
                    "to_C": v1,
                    "rate_C_per_h": s.rate * _HOUR if s.rate is not None else 0.0,
                    "duration_s": (t1 - t0) if s.duration is not None or s.kind == "ramp" else None,
                    "start_s": t0,
                    "end_s": t1 if s.duration is not None or s.kind == "ramp" else None,
                }
            )
        return out

    def with_soak(self, seconds: float) -> FurnaceProgram:
        """The same program with its final hold set to `seconds`."""
        last = self.steps[-1]
        return replace(self, steps=(*self.steps[:-1], replace(last, duration=float(seconds))))


def _c(x: float) -> str:
    return f"{x:.0f}" if abs(x - round(x)) < 1e-9 else f"{x:.4g}"


def _g(x: float) -> str:
    return f"{x:.0f}" if abs(x - round(x)) < 1e-9 else f"{x:.6g}"


def program_of(design: Design, start: float, setpoint: float, below: bool) -> FurnaceProgram:
    """The program of a design: start (C), soak setpoint (C); `below`: whether it has the
    fast ramp and the equalising hold below the limit's temperature."""
    steps: list[ProgramStep] = []
    temp = start
    if below:
        if design.hold_at - temp >= 1.0:
            steps.append(ProgramStep("ramp", design.hold_at, rate=design.fast_rate))
            temp = design.hold_at
        if design.hold_time >= 60.0:
            steps.append(ProgramStep("hold", temp, duration=design.hold_time))
    steps.append(ProgramStep("ramp", setpoint, rate=design.slow_rate))
    steps.append(ProgramStep("hold", setpoint, duration=design.soak_hold))
    return FurnaceProgram(start, tuple(steps))


def constant_rate(rate: float, start: float, setpoint: float) -> FurnaceProgram:
    """One ramp at `rate` (K/s) from `start` to `setpoint` (C), then an open hold."""
    return FurnaceProgram(
        start, (ProgramStep("ramp", setpoint, rate=rate), ProgramStep("hold", setpoint))
    )


def _down(rate: float) -> float:
    """A rate (K/s) rounded down to three significant figures in C/h."""
    per_h = rate * _HOUR
    step = 10.0 ** (math.floor(math.log10(per_h)) - 2)
    return max(math.floor(per_h / step + 1e-9) * step, 0.001) / _HOUR


def rounded(program: FurnaceProgram) -> FurnaceProgram:
    """The program as a controller is set: see the module docstring."""
    steps: list[ProgramStep] = []
    temp = program.start
    n = len(program.steps)
    for i, s in enumerate(program.steps):
        last = i == n - 1
        if s.kind == "ramp":
            # the soak setpoint as given, an equalising setpoint down to a whole C
            to = s.setpoint if i >= n - 2 else float(math.floor(s.setpoint + 1e-9))
            if abs(to - temp) < 1.0:
                continue
            steps.append(ProgramStep("ramp", to, rate=_down(s.rate)))
            temp = to
        else:
            if s.duration is None:
                steps.append(ProgramStep("hold", float(temp)))
                continue
            minutes = math.ceil(s.duration / 60.0 - 1e-9)
            if minutes < 1 and not last:
                continue
            steps.append(ProgramStep("hold", float(temp), duration=60.0 * max(minutes, 1)))
    return FurnaceProgram(program.start, tuple(steps))
