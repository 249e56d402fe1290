"""Plots of a run against time (matplotlib, object-oriented API, no pyplot state).

* `temperature_figure`: coldest, hottest and volume-mean part temperature, the probes, the
  furnace gas and wall temperatures, the target line and the moment the whole part reached it;
  optional markers for hand estimates of the time to target (label, time in s).
* `difference_rate_figure`: the surface-to-core difference (hottest minus coldest point, K)
  and the heating rate (C/h: the fastest and the slowest node and the volume mean) against
  time, with limit lines only when limits are given.

Times are shown in hours. `save_figure` writes a figure as PNG and SVG.
"""

from __future__ import annotations

import math
import os
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..units import hours_minutes

__all__ = [
    "DPI",
    "SIZES",
    "PlotData",
    "Limits",
    "temperature_figure",
    "difference_rate_figure",
    "save_figure",
    "write_plots",
]

DPI = 110
SIZES = {"temperatures": (10.5, 5.2), "difference_rate": (9.0, 6.0)}
"""Figure sizes in inches; the PNG files are these times `DPI` pixels."""

_PROBE_STYLES = ("--", "-.", ":", (0, (5, 1, 1, 1)))
_PROBE_COLOURS = ("#542788", "#01665e", "#8c510a", "#c51b7d", "#2166ac", "#4d4d4d")


@dataclass(frozen=True)
class Limits:
    """Limits to draw, when the case gives them (None: draw none).

    Attributes:
        spread_C: largest allowed difference between the hottest and coldest point, K.
        heating_rate_C_per_h: largest allowed heating rate, C/h (drawn as +limit).
        cooling_rate_C_per_h: largest allowed cooling rate, C/h (drawn as -limit).
    """

    spread_C: float | None = None
    heating_rate_C_per_h: float | None = None
    cooling_rate_C_per_h: float | None = None


@dataclass(frozen=True)
class PlotData:
    """What the plots need, as plain arrays (temperatures in C, times in s).

    Attributes:
        history: columns of history.csv by name (time_s, min_C, max_C, mean_C, spread_C and
            <probe>_C).
        probe_names: probe names, in column order.
        rates: time_s, fastest_C_per_h, slowest_C_per_h, mean_C_per_h per step (or empty).
        gas: (times, values) of the furnace gas temperature over the run.
        wall: (times, values) of the furnace wall temperature, or None when it is the gas.
        target_c: target temperature or None; heating: direction.
        target_time_s: when the whole part reached the target, or None.
        largest_spread: (time_s, K) of the largest difference.
        estimates: (label, time_s) hand estimates of the time to target, to mark.
        title: the case title.
    """

    history: dict[str, np.ndarray]
    probe_names: tuple[str, ...]
    rates: dict[str, np.ndarray]
    gas: tuple[np.ndarray, np.ndarray]
    wall: tuple[np.ndarray, np.ndarray] | None
    target_c: float | None
    heating: bool
    target_time_s: float | None
    largest_spread: tuple[float, float]
    estimates: tuple[tuple[str, float], ...] = ()
    title: str = ""

    @classmethod
    def from_result(cls, result, rates=None, estimates: Sequence = ()) -> PlotData:
        """Collect the plot data of a `RunResult` (and a `RateHistory`, if recorded)."""
        h = result.history
        rows = np.asarray(h.rows, dtype=float)
        history = {c: rows[:, i] for i, c in enumerate(h.columns)}
        p = result.problem
        t_end = float(history["time_s"][-1]) if rows.size else 0.0
        grid = _schedule_times(p.furnace_gas, t_end)
        gas = (grid, np.array([p.furnace_gas(t) for t in grid]))
        wall = None
        if p.furnace_wall is not None and p.furnace_wall != p.furnace_gas:
            wgrid = _schedule_times(p.furnace_wall, t_end)
            wall = (wgrid, np.array([p.furnace_wall(t) for t in wgrid]))
        tw = result.target
        return cls(
            history=history,
            probe_names=tuple(result.probes.names),
            rates=rates.arrays() if rates is not None else {},
            gas=gas,
            wall=wall,
            target_c=tw.target if tw is not None else None,
            heating=(tw.sense > 0) if tw is not None else True,
            target_time_s=tw.time if tw is not None and tw.reached else None,
            largest_spread=(h.largest_spread_time, h.largest_spread),
            estimates=_estimates(estimates),
            title=p.title,
        )


def _estimates(items) -> tuple[tuple[str, float], ...]:
    out = []
    for item in items or ():
        if isinstance(item, dict):
            label, t = item.get("label"), item.get("time_s")
        elif hasattr(item, "time_s"):
            label, t = getattr(item, "label", getattr(item, "name", "")), item.time_s
        else:
            label, t = item
        if t is not None and math.isfinite(float(t)):
            out.append((str(label), float(t)))
    return tuple(out)


def _schedule_times(schedule, t_end: float) -> np.ndarray:
    """Times (s) that draw a piecewise-linear schedule exactly up to t_end."""
    knots = [t for t in schedule.times if 0.0 < t < t_end]
    return np.array([0.0, *knots, max(t_end, 0.0)])


def _hm(seconds: float) -> str:
    return hours_minutes(seconds)


def _figure(width: float, height: float):
    from matplotlib.figure import Figure

    # fixed margins: a layout engine costs more than the drawing for these small figures
    fig = Figure(figsize=(width, height), dpi=DPI)
    fig.subplots_adjust(
        left=0.08, right=0.98, bottom=0.1 * 5.0 / height, top=1 - 0.07 * 5.0 / height
    )
    return fig


def _grouped(estimates) -> list[tuple[str, float]]:
    """Estimates with the same time to the minute drawn as one line, labels joined."""
    groups: dict[int, list] = {}
    for label, t in estimates:
        groups.setdefault(int(round(t / 60.0)), []).append((label, t))
    return [(" = ".join(lbl for lbl, _ in g), g[0][1]) for _, g in sorted(groups.items())]


def _mark_estimates(ax, data: PlotData, t_end_h: float) -> None:
    """Dotted vertical lines at the estimates inside the plotted time; the others listed at
    the right edge."""
    import textwrap

    beyond = []
    for label, t in _grouped(data.estimates):
        th = t / 3600.0
        if th > t_end_h:
            beyond.append(textwrap.fill(f"{label}: {_hm(t)} h:min", 30, subsequent_indent="  "))
            continue
        ax.axvline(th, color="0.35", lw=1.0, ls=(0, (2, 2)), zorder=1)
        ax.annotate(
            f"{label}: {_hm(t)} h:min",
            xy=(th, 0.02),
            xycoords=("data", "axes fraction"),
            xytext=(-3, 0),
            textcoords="offset points",
            fontsize=8,
            color="0.25",
            rotation=90,
            ha="right",
            va="bottom",
        )
    if beyond:
        ax.annotate(
            "hand estimates later than\nthe plot:\n" + "\n".join(beyond),
            xy=(1.015, 0.0),
            xycoords="axes fraction",
            fontsize=7.5,
            color="0.25",
            va="bottom",
        )


def temperature_figure(data: PlotData):
    """Part, probe and furnace temperatures against time (h), with the target and crossing."""
    fig = _figure(*SIZES["temperatures"])
    ax = fig.add_subplot()
    h = data.history
    th = h["time_s"] / 3600.0
    gt, gv = data.gas
    ax.plot(gt / 3600.0, gv, color="0.15", lw=2.2, label="furnace gas")
    if data.wall is not None:
        wt, wv = data.wall
        ax.plot(wt / 3600.0, wv, color="0.45", lw=1.6, ls="--", label="furnace wall")
    ax.plot(th, h["max_C"], color="#d95f02", lw=1.6, label="hottest point")
    ax.plot(th, h["mean_C"], color="#7570b3", lw=1.6, label="volume mean")
    ax.plot(th, h["min_C"], color="#1b9e77", lw=1.8, label="coldest point")
    for i, name in enumerate(data.probe_names):
        ax.plot(
            th,
            h[f"{name}_C"],
            color=_PROBE_COLOURS[i % len(_PROBE_COLOURS)],
            lw=1.2,
            ls=_PROBE_STYLES[i % len(_PROBE_STYLES)],
            label=f"probe {name}",
        )
    if data.target_c is not None:
        ax.axhline(data.target_c, color="#e7298a", lw=1.0, ls="-.", label="target")
        ax.annotate(
            f"target {data.target_c:g} C",
            xy=(0.0, data.target_c),
            xycoords=("axes fraction", "data"),
            xytext=(4, -3 if data.heating else 3),
            va="top" if data.heating else "bottom",
            textcoords="offset points",
            fontsize=8,
            color="#e7298a",
        )
    if data.target_time_s is not None:
        tt = data.target_time_s / 3600.0
        ax.axvline(tt, color="#e7298a", lw=0.8, ls=":")
        ax.plot([tt], [data.target_c], "o", ms=7, mfc="white", mec="#e7298a", mew=2, zorder=5)
        ax.annotate(
            f"whole part at {data.target_c:g} C\nafter {_hm(data.target_time_s)} h:min",
            xy=(tt, data.target_c),
            xytext=(-10, -38),
            textcoords="offset points",
            ha="right",
            fontsize=9,
            bbox={"boxstyle": "round,pad=0.3", "fc": "white", "ec": "#e7298a", "lw": 0.8},
        )
    t_end_h = max(float(th[-1]) if th.size else 0.0, 1e-6)
    _mark_estimates(ax, data, t_end_h)
    ax.set_xlabel("time (h)")
    ax.set_ylabel("temperature (C)")
    ax.set_xlim(0.0, t_end_h)
    ax.grid(True, color="0.9", lw=0.6)
    ax.set_title(data.title or "temperatures", fontsize=10, loc="left")
    fig.subplots_adjust(right=0.84)
    ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=8, frameon=False)
    return fig


def difference_rate_figure(data: PlotData, limits: Limits | None = None):
    """Surface-to-core difference (K) and heating rate (C/h) against time (h)."""
    limits = limits or Limits()
    fig = _figure(*SIZES["difference_rate"])
    ax1, ax2 = fig.subplots(2, 1, sharex=True)
    h = data.history
    th = h["time_s"] / 3600.0
    ax1.plot(th, h["spread_C"], color="#d95f02", lw=1.6, label="hottest - coldest point")
    ts, ks = data.largest_spread
    ax1.plot([ts / 3600.0], [ks], "o", ms=6, mfc="white", mec="#d95f02", mew=2)
    ax1.annotate(
        f"largest {ks:.0f} K at {_hm(ts)} h:min",
        xy=(ts / 3600.0, ks),
        xytext=(8, 4),
        textcoords="offset points",
        fontsize=9,
        va="bottom",
    )
    if limits.spread_C is not None:
        ax1.axhline(limits.spread_C, color="#e41a1c", lw=1.2, ls="--", label="limit")
    ax1.set_ylabel("difference (K)")
    top = max(ks, limits.spread_C or 0.0)
    ax1.set_ylim(0.0, 1.2 * top if top > 0 else 1.0)
    ax1.grid(True, color="0.9", lw=0.6)
    ax1.legend(loc="upper right", fontsize=8)
    ax1.set_title("surface-to-core difference and heating rate", fontsize=10, loc="left")

    r = data.rates
    if r and r["time_s"].size:
        tr = r["time_s"] / 3600.0
        ax2.plot(tr, r["fastest_C_per_h"], color="#d95f02", lw=1.3, label="fastest point")
        ax2.plot(tr, r["mean_C_per_h"], color="#7570b3", lw=1.6, label="volume mean")
        ax2.plot(tr, r["slowest_C_per_h"], color="#1b9e77", lw=1.3, label="slowest point")
        # the first steps after a cold charge can be very steep: keep the scale readable
        both = np.concatenate([r["fastest_C_per_h"], r["slowest_C_per_h"]])
        # the surface rate right after charging is very high and brief: scale the axis on
        # the rest of the run (after its first 3 %) and say what is off scale
        late = np.concatenate([r["time_s"], r["time_s"]]) > 0.03 * r["time_s"][-1]
        hi = np.nanmax(np.abs(both[late])) if np.any(late) else np.nanmax(np.abs(both))
        for lim in (limits.heating_rate_C_per_h, limits.cooling_rate_C_per_h):
            if lim is not None:
                hi = max(hi, abs(lim))
        if np.isfinite(hi) and hi > 0:
            lo_lim = -1.1 * hi if np.nanmin(r["slowest_C_per_h"]) < 0 else 0.0
            hi_lim = 1.1 * hi if np.nanmax(r["fastest_C_per_h"]) > 0 else 0.0
            ax2.set_ylim(lo_lim, hi_lim)
            peak = float(np.nanmax(np.abs(both)))
            if peak > 1.1 * hi:
                ax2.annotate(
                    f"off scale: up to {peak:,.0f} C/h at a surface point just after charging",
                    xy=(0.01, 0.04),
                    xycoords="axes fraction",
                    fontsize=8,
                    color="0.3",
                )
    if limits.heating_rate_C_per_h is not None:
        ax2.axhline(limits.heating_rate_C_per_h, color="#e41a1c", lw=1.2, ls="--", label="limit")
    if limits.cooling_rate_C_per_h is not None:
        ax2.axhline(-abs(limits.cooling_rate_C_per_h), color="#e41a1c", lw=1.2, ls="--")
    if data.target_time_s is not None:
        for ax in (ax1, ax2):
            ax.axvline(data.target_time_s / 3600.0, color="#e7298a", lw=0.8, ls=":")
    ax2.axhline(0.0, color="0.6", lw=0.6)
    ax2.set_ylabel("heating rate (C/h)")
    ax2.set_xlabel("time (h)")
    ax2.grid(True, color="0.9", lw=0.6)
    ax2.legend(loc="upper right", fontsize=8)
    ax2.set_xlim(0.0, max(float(th[-1]) if th.size else 0.0, 1e-6))
    return fig


def save_figure(fig, folder: str | os.PathLike, stem: str) -> list[Path]:
    """Write `fig` as ``stem.png`` and ``stem.svg`` in `folder`, atomically; the paths."""
    from .images import atomic_save

    folder = Path(folder)
    out = []
    for ext in ("png", "svg"):
        path = folder / f"{stem}.{ext}"
        atomic_save(path, lambda f, ext=ext: fig.savefig(f, format=ext))
        out.append(path)
    return out


def write_plots(
    folder: str | os.PathLike, data: PlotData, limits: Limits | None = None
) -> list[Path]:
    """Write temperatures.{png,svg} and difference_rate.{png,svg}; the paths."""
    paths = save_figure(temperature_figure(data), folder, "temperatures")
    paths += save_figure(difference_rate_figure(data, limits), folder, "difference_rate")
    return paths
