"""Field frames picked from the run: at an interval, at the target crossing and at the end.

`FrameRecorder` is an observer of the march (pass it to `run_problem(observers=...)`). For each
accepted `Step` it emits the frames whose times fall inside the step, each interpolated to its
exact time on the quadratic through the stage values (`Step.interpolate`), in time order:

* time 0 (the initial field);
* every `interval` seconds of simulated time, if an interval is given;
* the moment the whole part reaches the target (the crossing is located inside the step by
  its own `TargetWatch`, fed the same steps, so the time equals the run's `target.time_s`);
* the end of the run (`finish()`, called after the march, adds the last state).

Each frame carries the temperature (C), the time to target per node (s; NaN where the node
had not reached the target by the frame time, or everywhere without a target) and the rate
dT/dt per node (C/h; negative when cooling). Frames go to the sinks as they are made (a VTK
series writer, for instance), so a run that stops early keeps what it had; with `keep=True`
they are also kept in memory.

The recorder also keeps a per-step rate history (C/h): the fastest, the slowest and the
volume-mean rate over the part.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from ..stepping import Step
from ..watch import TargetWatch

__all__ = ["Frame", "FrameRecorder", "RateHistory", "rate_at"]

_SAME = 1e-9  # relative time tolerance for merging frames at the same instant


@dataclass(frozen=True)
class Frame:
    """The field at one saved time.

    Attributes:
        index: position in the series, from 0.
        time_s: simulated time, s.
        tags: why it was saved: any of "start", "interval", "target", "end".
        temperature: nodal temperatures, C.
        time_to_target: first time each node reached the target, s; NaN where it had not
            by `time_s` (and everywhere when the run has no target).
        heating_rate: dT/dt per node, C/h (negative when cooling; NaN in the start frame).
    """

    index: int
    time_s: float
    tags: tuple[str, ...]
    temperature: np.ndarray
    time_to_target: np.ndarray
    heating_rate: np.ndarray


@dataclass
class RateHistory:
    """Per-step heating rates over the part, C/h: fastest node, slowest node, volume mean."""

    time_s: list[float]
    fastest: list[float]
    slowest: list[float]
    mean: list[float]

    def arrays(self) -> dict[str, np.ndarray]:
        """The columns as arrays: time_s, fastest_C_per_h, slowest_C_per_h, mean_C_per_h."""
        return {
            "time_s": np.asarray(self.time_s, dtype=float),
            "fastest_C_per_h": np.asarray(self.fastest, dtype=float),
            "slowest_C_per_h": np.asarray(self.slowest, dtype=float),
            "mean_C_per_h": np.asarray(self.mean, dtype=float),
        }


def rate_at(step: Step, t: float) -> np.ndarray:
    """dT/dt (K/s) per node at time t inside `step`: the solver's rate at the step end, else
    the derivative of the interpolant through the stage values."""
    if abs(t - step.t1) <= _SAME * max(abs(step.t1), 1.0):
        return np.asarray(step.rate, dtype=float)
    times, states = step.times, step.states
    out = np.zeros_like(states[0], dtype=float)
    n = len(times)
    for i in range(n):
        # d/dt of the Lagrange basis polynomial l_i at t
        denom = 1.0
        for j in range(n):
            if j != i:
                denom *= times[i] - times[j]
        deriv = 0.0
        for k in range(n):
            if k == i:
                continue
            prod = 1.0
            for j in range(n):
                if j not in (i, k):
                    prod *= t - times[j]
            deriv += prod
        out = out + (deriv / denom) * states[i]
    return out


class FrameRecorder:
    """Observer that saves field frames and the rate history of a run.

    Args:
        initial: initial nodal temperatures, C.
        points: node coordinates, m (for the recorder's own target watch).
        volumes: lumped nodal volumes (any consistent unit) for the mean rate.
        target_c: target temperature, C, or None.
        heating: True when the part heats to the target, False when it cools.
        interval: s of simulated time between regular frames, or None for none.
        sinks: callables taking each `Frame` as it is made (e.g. a VTK series writer).
        keep: keep every frame in `frames` (memory: 3 floats per node per frame).
    """

    def __init__(
        self,
        initial: np.ndarray,
        points: np.ndarray,
        volumes: np.ndarray,
        target_c: float | None = None,
        heating: bool = True,
        interval: float | None = None,
        sinks: Sequence[Callable[[Frame], None]] = (),
        keep: bool = True,
    ):
        self.interval = float(interval) if interval else None
        self.sinks = list(sinks)
        self.keep = keep
        self.frames: list[Frame] = []
        self.at_target: Frame | None = None
        self.last: Frame | None = None
        self.count = 0
        self._volumes = np.asarray(volumes, dtype=float)
        self._watch = TargetWatch(target_c, heating, points) if target_c is not None else None
        self._next_interval = self.interval if self.interval else np.inf
        self._last_step: Step | None = None
        self._resumed_end: tuple | None = None  # (t, temperature, rate) of a checkpoint
        self._finished = False
        self.rates = RateHistory([], [], [], [])
        n = np.asarray(initial).shape[0]
        initial = np.asarray(initial, dtype=float)
        ttt = np.full(n, np.nan)
        if self._watch is not None:
            sense = self._watch.sense
            ttt[sense * (initial - self._watch.target) >= 0] = 0.0
        self._emit(0.0, ("start",), initial, ttt, np.full(n, np.nan))  # no rate before step 1

    @classmethod
    def for_problem(cls, problem, interval=None, sinks=(), keep=True) -> FrameRecorder:
        """A recorder set up from a `femheat.problem.Problem`."""
        target = problem.target
        return cls(
            problem.initial,
            problem.mesh.points,
            problem.model.volumes,
            target.temperature if target else None,
            target.heating if target else True,
            interval,
            sinks,
            keep,
        )

    @property
    def target_time(self) -> float | None:
        """When the whole part reached the target, s (None if not, or no target)."""
        return self._watch.time if self._watch is not None else None

    def _emit(self, t, tags, temperature, ttt, rate_k_per_s) -> None:
        if self.last is not None and abs(t - self.last.time_s) <= _SAME * max(abs(t), 1.0):
            # same instant as the previous frame: merge the reasons, keep one frame
            merged = Frame(
                self.last.index,
                self.last.time_s,
                tuple(dict.fromkeys(self.last.tags + tags)),
                self.last.temperature,
                self.last.time_to_target,
                self.last.heating_rate,
            )
            self._replace_last(merged)
            return
        frame = Frame(
            self.count,
            float(t),
            tuple(tags),
            np.array(temperature, dtype=float),
            np.array(ttt, dtype=float),
            3600.0 * np.asarray(rate_k_per_s, dtype=float),
        )
        self.count += 1
        self._store(frame)

    def _store(self, frame: Frame) -> None:
        self.last = frame
        if "target" in frame.tags:
            self.at_target = frame
        if self.keep:
            self.frames.append(frame)
        for sink in self.sinks:
            sink(frame)

    def _replace_last(self, frame: Frame) -> None:
        self.last = frame
        if "target" in frame.tags:
            self.at_target = frame
        if self.keep and self.frames:
            self.frames[-1] = frame
        for sink in self.sinks:
            sink(frame)

    def _ttt(self, t: float) -> np.ndarray:
        if self._watch is None:
            return np.full(self._volumes.shape[0], np.nan)
        nt = self._watch.node_time
        return np.where(nt <= t * (1.0 + _SAME) + _SAME, nt, np.nan)

    def __call__(self, step: Step) -> None:
        """Observe one accepted step: emit the frames that fall inside it."""
        self._last_step = step
        was_through = self._watch is not None and self._watch.reached
        if self._watch is not None:
            self._watch.observe(step)
        r = 3600.0 * np.asarray(step.rate, dtype=float)
        self.rates.time_s.append(step.t1)
        self.rates.fastest.append(float(r.max()))
        self.rates.slowest.append(float(r.min()))
        self.rates.mean.append(float(self._volumes @ r / self._volumes.sum()))

        due: list[tuple[float, str]] = []
        tol = _SAME * max(abs(step.t1), 1.0)
        while self._next_interval <= step.t1 + tol:
            due.append((min(self._next_interval, step.t1), "interval"))
            self._next_interval += self.interval
        if self._watch is not None and self._watch.reached and not was_through:
            due.append((self._watch.time, "target"))
        for t, tag in sorted(due):
            if abs(t - step.t1) <= tol:
                temp = step.end
            else:
                temp = step.interpolate(t)
            self._emit(t, (tag,), temp, self._ttt(t), rate_at(step, t))

    def finish(self) -> Frame | None:
        """Add the frame at the end of the run (call once, after the march). Returns it."""
        if self._finished:
            return self.last
        self._finished = True
        step = self._last_step
        if step is None and self._resumed_end is not None:  # resumed; no step after it
            t, temp, rate = self._resumed_end
            self._emit(t, ("end",), temp, self._ttt(t), rate)
            return self.last
        if step is None:
            tags = tuple(dict.fromkeys(self.last.tags + ("end",)))
            self._replace_last(Frame(0, 0.0, tags, *self._arrays(self.last)))
            return self.last
        self._emit(step.t1, ("end",), step.end, self._ttt(step.t1), step.rate)
        return self.last

    @staticmethod
    def _arrays(frame: Frame):
        return frame.temperature, frame.time_to_target, frame.heating_rate

    # -- checkpoints ------------------------------------------------------------------------------
    def state(self) -> dict:
        """What a checkpoint keeps to continue this recorder: plain values and arrays."""
        from ..checkpoint import plain_state

        def frame(f: Frame | None):
            return None if f is None else {**vars(f), "tags": list(f.tags)}

        step = self._last_step
        end = None if step is None else (step.t1, step.end.copy(), np.array(step.rate))
        return {
            "count": self.count,
            "next_interval": self._next_interval,
            "rates": np.array(
                [self.rates.time_s, self.rates.fastest, self.rates.slowest, self.rates.mean],
                dtype=float,
            ).reshape(4, -1),
            "watch": plain_state(self._watch) if self._watch is not None else None,
            "last": frame(self.last),
            "at_target": frame(self.at_target),
            "frames": [frame(f) for f in self.frames],
            "end": end if end is not None else self._resumed_end,
        }

    def restore(self, state: dict) -> None:
        """Continue from `state()` of a recorder of the same run; the sinks are not replayed
        (frames already written stay where they are)."""
        from ..checkpoint import restore_plain

        def frame(d):
            return None if d is None else Frame(**{**d, "tags": tuple(d["tags"])})

        self.count = int(state["count"])
        self._next_interval = float(state["next_interval"])
        self.rates = RateHistory(*[list(map(float, col)) for col in state["rates"]])
        if self._watch is not None and state["watch"] is not None:
            restore_plain(self._watch, state["watch"])
        self.last = frame(state["last"])
        self.at_target = frame(state["at_target"])
        self.frames = [frame(d) for d in state["frames"]] if self.keep else []
        self._resumed_end = tuple(state["end"]) if state["end"] is not None else None
        self._last_step = None
