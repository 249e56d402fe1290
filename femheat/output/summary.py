"""summary.json and history.csv of a run."""

from __future__ import annotations

import io
import json
import math
from pathlib import Path

import numpy as np

from .. import __version__
from ..checks import checks_section
from ..estimates import summary_section as estimates_section
from ..run import RunResult
from ..units import hours_minutes
from .files import atomic_write_text

__all__ = [
    "summary_dict",
    "write_summary",
    "write_summary_dict",
    "write_history",
    "write_history_rows",
    "hours_minutes",
]

CAUTION = (
    "Estimates only. Confirm with thermocouples on the part; the applicable code, qualified "
    "procedures and licensed practice govern heat treatment of pressure parts and certified work."
)


def finite_or_none(x):
    """A number as float, or None when it is missing, NaN or infinite (JSON has no NaN)."""
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def summary_dict(result: RunResult, complete: bool = True) -> dict:
    """The machine-readable summary of a run (SI units, temperatures in C).

    ``complete`` is false for an interrupted run (status "interrupted") whatever is passed.
    """
    complete = complete and result.status != "interrupted"
    p = result.problem
    tw = result.target
    mesh = p.mesh
    per = "J per metre depth" if p.part_model == "planar" else "J"
    target = {"reached": False, "time_s": None}
    if tw is not None:
        last = tw.last_point
        lag = tw.lagging(result.final)
        target = {
            "temperature_C": tw.target,
            "mode": "heating" if tw.sense > 0 else "cooling",
            "reached": tw.reached,
            "time_s": finite_or_none(tw.time),
            "time_h_min": hours_minutes(tw.time),
            "hold_s": p.target.hold,
            "last_point": last,
            "lagging_point_at_end": [float(v) for v in mesh.points[lag]],
            "lagging_temperature_at_end_C": float(result.final[lag]),
        }
    probes = []
    for i, name in enumerate(result.probes.names):
        probes.append(
            {
                "name": name,
                "point": [float(v) for v in p.probe_points[i]],
                "final_C": finite_or_none(result.probes.values(result.final)[i]),
                "time_to_target_s": finite_or_none(result.probes.crossing[i]),
            }
        )
    e = result.energy
    q = mesh.quality()
    stats = result.stats
    return {
        "femheat_version": __version__,
        "title": p.title,
        "complete": complete,
        "status": result.status,
        "reason": result.reason,
        "target": target,
        "part": {
            "model": p.part_model,
            "shape": p.shape,
            "parameters": {k: list(v) if isinstance(v, tuple) else v for k, v in p.params.items()},
            "volume_m3": p.model.volume,
            "volume_unit": "m3 per metre depth" if p.part_model == "planar" else "m3",
        },
        "mesh": {
            "nodes": int(mesh.nodes),
            # P2: the node mesh splits each element into 4 (2D) or 8 (3D)
            "cells": int(mesh.cells.shape[0])
            // (1 if p.model.element == "P1" else (4 if mesh.dim == 2 else 8)),
            "element": p.model.element,
            "size_m": mesh.size,
            "faces": dict(p.face_labels),
            "min_quality": float(q.min()),
        },
        "solver": {
            "steps": stats.steps,
            "rejected_steps": stats.rejected,
            "newton_iterations": stats.newton_iterations,
            "factorizations": stats.factorizations,
            "linear_solves": stats.linear_solves,
            "tolerance": p.settings.tolerance,
            "end_time_s": result.end_time,
            "settled": result.settled,
            "wall_s": result.wall_s,
        },
        "temperatures": {
            "initial_C": p.initial_c,
            "final_min_C": float(result.final.min()),
            "final_max_C": float(result.final.max()),
            "final_mean_C": p.model.mean_temperature(result.final),
            "largest_spread_C": result.history.largest_spread,
            "largest_spread_time_s": result.history.largest_spread_time,
        },
        "energy": {
            "unit": per,
            "heat_in": e.total_in,
            "stored": e.stored,
            "relative_error": e.relative_error,
            "by_face": dict(e.heat_in),
        },
        "probes": probes,
        "checks": checks_section(result.checks),
        "estimates": estimates_section(result),
        "warnings": list(result.warnings),
        "caution": CAUTION,
    }


def _plain(obj):
    """JSON fallback for numpy scalars and arrays."""
    if isinstance(obj, np.generic):
        return obj.item()
    if isinstance(obj, np.ndarray):
        return obj.tolist()
    raise TypeError(f"cannot write {type(obj).__name__} to JSON")


def write_summary(folder: str | Path, result: RunResult, complete: bool = True) -> Path:
    return write_summary_dict(folder, summary_dict(result, complete))


def write_summary_dict(folder: str | Path, data: dict) -> Path:
    """Write a summary dict (from `summary_dict`, perhaps with more sections) atomically."""
    text = json.dumps(data, indent=2, default=_plain, allow_nan=False)
    return atomic_write_text(Path(folder) / "summary.json", text + "\n")


def write_history(folder: str | Path, result: RunResult) -> Path:
    h = result.history
    return write_history_rows(folder, h.columns, h.rows)


def write_history_rows(folder: str | Path, columns, rows) -> Path:
    """Write history.csv atomically from its column names and rows (also during a run)."""
    buf = io.StringIO()
    buf.write(",".join(columns) + "\n")
    for row in np.asarray(rows, dtype=float).reshape(-1, len(columns)):
        buf.write(",".join(f"{v:.10g}" for v in row) + "\n")
    return atomic_write_text(Path(folder) / "history.csv", buf.getvalue())
