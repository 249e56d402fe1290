"""Pictures of a study: the tornado chart of sensitivities and the spread of the time to target.

Both are drawn with matplotlib's object interface (no pyplot) and written by
`femheat.output.plots.save_figure` (PNG and SVG).

Tornado (one-at-a-time studies): for each varied value, the bar runs from the shortest to the
longest time to target among its values, drawn against the base case's time; the widest bar
(the input the time depends on most) is on top. Spread (sampled and grid studies): a histogram
of the time to target with the 10th, 50th and 90th percentiles marked.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["Sensitivity", "sensitivities", "percentiles", "tornado_figure", "spread_figure"]

_HOUR = 3600.0


@dataclass(frozen=True)
class Sensitivity:
    """How the time to target moves with one input (one-at-a-time study).

    Attributes:
        path: the varied case value.
        low_value, high_value: the input values giving the shortest and longest time.
        shortest_s, longest_s: those times to target, s.
        base_s: the base case's time, s.
    """

    path: str
    low_value: float
    high_value: float
    shortest_s: float
    longest_s: float
    base_s: float

    @property
    def swing_s(self) -> float:
        """Longest minus shortest time, s."""
        return self.longest_s - self.shortest_s


def _time(row) -> float:
    t = row.get("time_to_target_s")
    return math.nan if t is None else float(t)


def sensitivities(rows, paths) -> list[Sensitivity]:
    """Per varied path, the range of the time to target (widest first). Variants that did not
    reach the target are left out."""
    base = [r for r in rows if not r.get("varied")]
    base_s = _time(base[0]) if base else math.nan
    out = []
    for path in paths:
        mine = [(r["inputs"][path], _time(r)) for r in rows if r.get("varied") == path]
        mine = [(x, t) for x, t in mine if math.isfinite(t)]
        if not mine:
            continue
        lo = min(mine, key=lambda p: p[1])
        hi = max(mine, key=lambda p: p[1])
        out.append(Sensitivity(path, lo[0], hi[0], lo[1], hi[1], base_s))
    return sorted(out, key=lambda s: s.swing_s, reverse=True)


def percentiles(times, qs=(10, 50, 90)) -> dict[int, float]:
    """Percentiles of the finite times (s); NaN when there are none."""
    t = np.asarray([x for x in times if x is not None and math.isfinite(x)], dtype=float)
    return {q: (float(np.percentile(t, q)) if t.size else math.nan) for q in qs}


def tornado_figure(sens: list[Sensitivity], title: str = ""):
    """Horizontal bars of the time to target (h) per input, the widest on top."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(7.5, 1.2 + 0.55 * max(len(sens), 1)), dpi=110)
    ax = fig.add_subplot()
    n = len(sens)
    for i, s in enumerate(sens):
        y = n - 1 - i
        ax.barh(
            y,
            (s.longest_s - s.shortest_s) / _HOUR,
            left=s.shortest_s / _HOUR,
            height=0.6,
            color="#4a7fb0",
        )
        ax.text(s.shortest_s / _HOUR, y, f"{s.low_value:g} ", ha="right", va="center", fontsize=8)
        ax.text(s.longest_s / _HOUR, y, f" {s.high_value:g}", ha="left", va="center", fontsize=8)
    if sens and math.isfinite(sens[0].base_s):
        ax.axvline(sens[0].base_s / _HOUR, color="black", lw=1, label="base case")
        ax.legend(loc="lower right", fontsize=8)
    ax.set_yticks(range(n), [s.path for s in reversed(sens)])
    ax.set_xlabel("time to target, h (input value at each bar end)")
    ax.set_title(title or "Sensitivity of the time to target")
    if sens:  # room for the value labels at the bar ends
        lo = min(s.shortest_s for s in sens) / _HOUR
        hi = max(s.longest_s for s in sens) / _HOUR
        pad = 0.18 * (hi - lo) if hi > lo else 0.05 * max(abs(hi), 1e-3)
        ax.set_xlim(lo - pad, hi + pad)
    fig.tight_layout()
    return fig


def spread_figure(times, title: str = ""):
    """Histogram of the time to target (h) with the 10th, 50th and 90th percentiles."""
    from matplotlib.figure import Figure

    t = np.asarray([x for x in times if x is not None and math.isfinite(x)], dtype=float)
    fig = Figure(figsize=(7.5, 4.2), dpi=110)
    ax = fig.add_subplot()
    if t.size:
        ax.hist(t / _HOUR, bins=max(5, min(40, int(np.sqrt(t.size)) + 1)), color="#4a7fb0")
        for q, v in percentiles(t).items():
            ax.axvline(v / _HOUR, color="black", ls="--", lw=1)
            ax.text(
                v / _HOUR, ax.get_ylim()[1] * 0.95, f" P{q} {v / _HOUR:.2f} h", fontsize=8, va="top"
            )
    ax.set_xlabel("time to target, h")
    ax.set_ylabel("variants")
    ax.set_title(title or f"Time to target over {t.size} variants that reached it")
    fig.tight_layout()
    return fig
