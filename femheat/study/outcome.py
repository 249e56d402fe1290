"""One variant's run reduced to the key results of a study row.

`run_case_table` runs a case table (optionally on a mesh built earlier) and returns a plain
dict, so it travels between processes (Dask workers) and into a JSON line unchanged.
"""

from __future__ import annotations

import math
import time
from pathlib import Path

import numpy as np

from ..errors import FemheatError

__all__ = ["OUTPUT_COLUMNS", "case_from_table", "mesh_for_table", "run_case_table", "outcome"]

#: The result columns of a study row (times in s, temperatures in C, rates in C/h).
OUTPUT_COLUMNS = (
    "status",
    "reached",
    "time_to_target_s",
    "last_point_x_m",
    "last_point_y_m",
    "last_point_z_m",
    "largest_difference_C",
    "largest_difference_time_s",
    "largest_heating_rate_C_per_h",
    "end_time_s",
    "nodes",
    "steps",
    "wall_s",
    "warnings",
    "error",
)


def case_from_table(table: dict, base_dir: Path | str):
    """A validated `Case` from a case table whose relative paths are taken from `base_dir`."""
    from ..case import parse_case

    case = parse_case(table, source=str(Path(base_dir) / "<study variant>"))
    case._base_dir = Path(base_dir)
    return case


def mesh_for_table(table: dict, base_dir: Path | str):
    """Mesh the part of a case table (the `PartMesh` a variant's problem will use)."""
    from ..problem import build_problem

    return build_problem(case_from_table(table, base_dir)).mesh


def outcome(result, rates) -> dict:
    """The study row's result columns from a `RunResult` and the recorder's rate history."""
    tw = result.target
    reached = bool(tw is not None and tw.reached)
    point = [math.nan] * 3
    if reached:
        lp = [float(x) for x in np.atleast_1d(tw.last_point)]
        point[: len(lp)] = lp
    fastest = np.asarray(rates.arrays()["fastest_C_per_h"], dtype=float)
    fastest = fastest[np.isfinite(fastest)]
    h = result.history
    return {
        "status": result.status,
        "reached": reached,
        "time_to_target_s": float(tw.time) if reached else math.nan,
        "last_point_x_m": point[0],
        "last_point_y_m": point[1],
        "last_point_z_m": point[2],
        "largest_difference_C": float(h.largest_spread),
        "largest_difference_time_s": float(h.largest_spread_time),
        "largest_heating_rate_C_per_h": float(fastest.max()) if fastest.size else math.nan,
        "end_time_s": float(result.end_time),
        "nodes": int(result.problem.mesh.nodes),
        "steps": int(result.stats.steps),
        "wall_s": float(result.wall_s),
        "warnings": "; ".join(result.warnings),
        "error": "",
    }


def run_case_table(table: dict, base_dir: Path | str, mesh=None) -> dict:
    """Run one case table and return its result columns.

    A bad case or a failed run does not raise: its row has ``status`` "bad input" or "failed"
    and the one-line message in ``error``, so one bad variant does not stop a study.

    Args:
        table: the case as a table (as TOML reads it).
        base_dir: folder for relative paths in the case.
        mesh: a `PartMesh` of this case's part built earlier (None: mesh here).
    """
    from ..api import recorder_for
    from ..errors import CaseError
    from ..problem import build_problem
    from ..run import run_problem

    start = time.perf_counter()
    row = {c: math.nan for c in OUTPUT_COLUMNS}
    row.update(reached=False, error="", warnings="", nodes=0, steps=0)
    try:
        problem = build_problem(case_from_table(table, base_dir), mesh=mesh)
        recorder = recorder_for(problem, None, None, keep=False)
        result = run_problem(problem, observers=[recorder])
        recorder.finish()
    except CaseError as exc:
        row.update(status="bad input", error=str(exc), wall_s=time.perf_counter() - start)
        return row
    except FemheatError as exc:
        row.update(status="failed", error=str(exc), wall_s=time.perf_counter() - start)
        return row
    return outcome(result, recorder.rates)
