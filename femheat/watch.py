"""Observers of the march: each consumes accepted `Step`s and keeps one kind of result.

* `TargetWatch`: per-node time to target, the time the whole part is through, the last point.
* `ProbeWatch`: temperatures and target crossings at thermocouple positions.
* `HistoryWatch`: min / max / volume-mean temperature and spread per step.
* `EnergyWatch`: heat in through each face against the enthalpy stored.
* `SettleWatch`: whether the field has stopped moving after the last schedule change.

Crossings are located inside a step on the quadratic through the stage values, not at the
nearest step end.
"""

from __future__ import annotations

import math

import numpy as np

from .model import Model
from .stepping import Step

__all__ = [
    "first_crossing",
    "TargetWatch",
    "ProbeWatch",
    "HistoryWatch",
    "EnergyWatch",
    "SettleWatch",
]


def first_crossing(times, states, level: float, sense: float) -> np.ndarray:
    """Earliest time in the step where each value reaches `level` (nan where it does not).

    Args:
        times: 2 or 3 times of the step (s). states: values at those times (same shape each).
        level: the value to reach. sense: +1 to reach it from below, -1 from above.

    Returns:
        Crossing time per entry, s; entries already at the level at the start get t0.
    """
    t0, t1 = times[0], times[-1]
    u = [sense * (np.asarray(s, dtype=float) - level) for s in states]
    out = np.full(u[0].shape, np.nan)
    start_in = u[0] >= 0
    out[start_in] = t0
    hit = (~start_in) & (u[-1] >= 0)
    if not np.any(hit):
        return out
    y0, y1 = u[0][hit], u[-1][hit]
    # linear fallback
    lin = -y0 / (y1 - y0)
    s = lin
    if len(times) == 3:
        g = (times[1] - t0) / (t1 - t0)
        yg = u[1][hit]
        a = ((yg - y0) - g * (y1 - y0)) / (g * g - g)
        b = (y1 - y0) - a
        with np.errstate(invalid="ignore", divide="ignore"):
            disc = np.sqrt(np.maximum(b * b - 4.0 * a * y0, 0.0))
            r1 = (-b - disc) / (2.0 * a)
            r2 = (-b + disc) / (2.0 * a)
        r1 = np.where((r1 >= -1e-12) & (r1 <= 1 + 1e-12), r1, np.inf)
        r2 = np.where((r2 >= -1e-12) & (r2 <= 1 + 1e-12), r2, np.inf)
        root = np.minimum(r1, r2)
        quad = np.abs(a) > 1e-12 * (np.abs(b) + np.abs(y0))
        s = np.where(quad & np.isfinite(root), np.clip(root, 0.0, 1.0), lin)
    out[hit] = t0 + s * (t1 - t0)
    return out


class TargetWatch:
    """When every node has reached the target, and which node was last.

    Args:
        target_c: target temperature, C.
        heating: True when the part must rise to the target, False when it must fall to it.
        points: node coordinates, m.
    """

    def __init__(self, target_c: float, heating: bool, points: np.ndarray):
        self.target = float(target_c)
        self.sense = 1.0 if heating else -1.0
        self.points = points
        self.node_time = np.full(points.shape[0], np.nan)  # first time each node met target
        self.time: float | None = None  # whole part through
        self.last_node: int | None = None
        self.closest_c: float | None = None  # coldest (heating) value at the latest step

    @property
    def reached(self) -> bool:
        return self.time is not None

    @property
    def last_point(self) -> list[float] | None:
        if self.last_node is None:
            return None
        return [float(v) for v in self.points[self.last_node]]

    def lagging(self, temperature: np.ndarray) -> int:
        """Index of the node farthest from target on the wrong side (the cold or hot spot)."""
        return int(np.argmin(self.sense * temperature))

    def observe(self, step: Step) -> None:
        todo = np.isnan(self.node_time)
        if np.any(todo):
            cross = first_crossing(
                step.times, [s[todo] for s in step.states], self.target, self.sense
            )
            idx = np.flatnonzero(todo)
            self.node_time[idx] = cross
        end = step.end
        self.closest_c = float(end[self.lagging(end)])
        if self.time is None and np.all(self.sense * (end - self.target) >= 0):
            below = self.sense * (step.start - self.target) < 0
            cross = first_crossing(
                step.times, [s[below] for s in step.states], self.target, self.sense
            )
            cross = np.where(np.isnan(cross), step.t1, cross)
            k = int(np.argmax(cross))
            self.time = float(cross[k])
            self.last_node = int(np.flatnonzero(below)[k])


class ProbeWatch:
    """Temperatures at fixed points (thermocouples) and their own target crossings.

    Args:
        names: probe names. matrix: (P, N) interpolation matrix from nodal values.
        target_c: target temperature (C) or None. heating: direction.
    """

    def __init__(self, names, matrix, target_c: float | None, heating: bool):
        self.names = list(names)
        self.matrix = matrix
        self.target = target_c
        self.sense = 1.0 if heating else -1.0
        self.crossing = np.full(len(self.names), np.nan)

    def values(self, temperature: np.ndarray) -> np.ndarray:
        return self.matrix @ temperature if self.names else np.zeros(0)

    def observe(self, step: Step) -> None:
        if not self.names or self.target is None:
            return
        todo = np.isnan(self.crossing)
        if np.any(todo):
            vals = [self.values(s)[todo] for s in step.states]
            self.crossing[todo] = first_crossing(step.times, vals, self.target, self.sense)


class HistoryWatch:
    """Per-step rows: time, min, max, volume-mean, spread and probe temperatures (C)."""

    def __init__(self, model: Model, probes: ProbeWatch, initial: np.ndarray):
        self.model = model
        self.probes = probes
        self.rows: list[list[float]] = []
        self.largest_spread = 0.0
        self.largest_spread_time = 0.0
        self._record(0.0, initial)

    @property
    def columns(self) -> list[str]:
        return ["time_s", "min_C", "max_C", "mean_C", "spread_C"] + [
            f"{name}_C" for name in self.probes.names
        ]

    def _record(self, t: float, temp: np.ndarray) -> None:
        lo, hi = float(temp.min()), float(temp.max())
        row = [t, lo, hi, self.model.mean_temperature(temp), hi - lo]
        row += [float(v) for v in self.probes.values(temp)]
        self.rows.append(row)
        if hi - lo > self.largest_spread:
            self.largest_spread, self.largest_spread_time = hi - lo, t

    def observe(self, step: Step) -> None:
        self._record(step.t1, step.end)


class EnergyWatch:
    """Heat in through each face (scheme-consistent quadrature) against the enthalpy stored."""

    def __init__(self, model: Model, initial: np.ndarray):
        self.model = model
        self.initial_energy = model.stored_energy(initial)
        self.heat_in = {g.name: 0.0 for g in model.faces}
        self.stored = 0.0

    def observe(self, step: Step) -> None:
        for name, q in step.heat_in.items():
            self.heat_in[name] += q
        self.stored = self.model.stored_energy(step.end) - self.initial_energy

    @property
    def total_in(self) -> float:
        return float(sum(self.heat_in.values()))

    @property
    def gross(self) -> float:
        """Sum of the magnitudes of the face totals, J (scale of the energy moved)."""
        return float(sum(abs(v) for v in self.heat_in.values()))

    @property
    def relative_error(self) -> float:
        """(stored - heat in) relative to the larger of the stored and the gross face heat."""
        scale = max(self.gross, abs(self.stored), 1e-300)
        return (self.stored - self.total_in) / scale


class SettleWatch:
    """Detects that the field has settled once every schedule has reached its last point.

    The largest nodal rate must have decayed exponentially at a steady rate over the last
    four steps (the slowest mode dominates); the remaining change is then rate / decay.
    """

    def __init__(self, last_change_s: float, span: float):
        self.last_change = last_change_s
        self.span = span
        self._rates: list[tuple[float, float]] = []
        self.remaining_K = math.inf
        self.settled = False

    def observe(self, step: Step) -> None:
        if step.t0 < self.last_change:
            self._rates.clear()
            return
        r = float(np.max(np.abs(step.rate)))
        moved = float(np.max(np.abs(step.end - step.start)))
        long_step = step.t1 - step.t0 >= step.t0 - self.last_change
        if r == 0.0 or (long_step and moved <= 1e-9 * self.span):
            self.remaining_K, self.settled = 0.0, True
            return
        self._rates = (self._rates + [(step.t1, r)])[-4:]
        self.remaining_K = math.inf
        if len(self._rates) == 4:
            decays = []
            for (ta, ra), (tb, rb) in zip(self._rates[:-1], self._rates[1:], strict=True):
                if rb >= ra:
                    break
                decays.append(math.log(ra / rb) / (tb - ta))
            else:
                slow, fast = min(decays), max(decays)
                # the four rates must span a decay time: a short stretch of slowing (nodes
                # nearing a peak of c(T)) is no settling
                span_s = self._rates[-1][0] - self._rates[0][0]
                if (
                    fast < 1.5 * slow
                    and step.t1 - self.last_change > 3.0 / slow
                    and span_s >= 1.0 / slow
                ):
                    self.remaining_K = r / slow
        self.settled = self.remaining_K < 1e-6 * self.span
