"""Estimated error of the time to target: the run repeated on a finer mesh, then Richardson.

The repeat halves every element size (``mesh.size``, ``mesh.corner_size``, each
``[[mesh.refine]]`` size) and divides ``solver.tolerance`` by 8 (``fixed_step`` and
``max_step``, when given, are halved instead of or as well). Linear (P1) elements converge
as h^2 in space; the time march is second order, and with error control its global error
goes about as tolerance^(2/3), so 1/8 of the tolerance also cuts it by 4. Both errors then
fall by the same factor r^p = 4 and Richardson extrapolation applies to the sum::

    t_extrapolated = t_fine + (t_fine - t_run) / (r^p - 1)
    error of the run's time ~ t_run - t_extrapolated = (4/3) (t_run - t_fine)

Quadratic (P2) elements converge faster in space; assuming order 2 then overstates the band.
The estimate assumes both meshes are fine enough that the error follows its asymptotic order;
the band is |t_run - t_extrapolated|. A mesh read from a file cannot be refined here.
"""

from __future__ import annotations

import logging
import time
from dataclasses import asdict, dataclass

from .errors import CaseError

__all__ = ["ORDER", "RATIO", "AccuracyCheck", "refined_case", "check_accuracy"]

log = logging.getLogger(__name__)

ORDER = 2  # P1 elements in space, second-order time march
RATIO = 2  # element sizes halved


@dataclass(frozen=True)
class AccuracyCheck:
    """Outcome of the repeat on the finer mesh. Times in s, sizes in m.

    Attributes:
        status: "done", "skipped" (with `note` saying why) or "interrupted".
        note: why it was skipped, or what the band means.
    """

    status: str
    note: str = ""
    mesh_size_m: float | None = None
    refined_mesh_size_m: float | None = None
    nodes: int | None = None
    refined_nodes: int | None = None
    tolerance: float | None = None
    refined_tolerance: float | None = None
    time_s: float | None = None
    refined_time_s: float | None = None
    extrapolated_time_s: float | None = None
    error_band_s: float | None = None
    relative_error_band: float | None = None
    refined_wall_s: float | None = None

    def to_dict(self) -> dict:
        """The ``accuracy`` section of summary.json."""
        d = asdict(self)
        d["method"] = (
            f"Richardson extrapolation from this run and one with element sizes / {RATIO} and "
            f"tolerance / 8, assumed order {ORDER}"
        )
        return d

    def lines(self) -> list[str]:
        """Text for the command line."""
        if self.status != "done":
            return [f"accuracy check {self.status}: {self.note}"]
        return [
            f"accuracy check: on a mesh of {self.refined_nodes} nodes "
            f"(size {1000 * self.refined_mesh_size_m:.3g} mm, tolerance "
            f"{self.refined_tolerance:.3g}) the time to target is {self.refined_time_s:.0f} s",
            f"  estimated error of {self.time_s:.0f} s: +/- {self.error_band_s:.0f} s "
            f"({100 * self.relative_error_band:.2g} %); extrapolated time "
            f"{self.extrapolated_time_s:.0f} s",
        ]


def refined_case(case, mesh_size: float):
    """The case with element sizes halved and the step control tightened (see module doc).

    Args:
        case: the `femheat.case.Case`. mesh_size: the element size the run used, m.
    """
    mesh = case.mesh
    refine = [r.model_copy(update={"size": r.size / RATIO}) for r in mesh.refine]
    mesh = mesh.model_copy(
        update={
            "size": mesh_size / RATIO,
            "corner_size": None if mesh.corner_size is None else mesh.corner_size / RATIO,
            "refine": refine,
        }
    )
    s = case.solver
    update = {"tolerance": s.tolerance / 8.0}
    if s.fixed_step:
        update = {"fixed_step": s.fixed_step / RATIO}
    if s.max_step:
        update["max_step"] = s.max_step / RATIO
    if s.first_step:
        update["first_step"] = s.first_step / RATIO
    return case.model_copy(update={"mesh": mesh, "solver": s.model_copy(update=update)})


def check_accuracy(case, result, stop=None) -> AccuracyCheck:
    """Repeat the run on the finer mesh and estimate the error of its time to target.

    Args:
        case: the `femheat.case.Case` of the run. result: its `femheat.run.RunResult`.
        stop: passed to `run_problem` (an interrupted repeat gives status "interrupted").
    """
    from .geometry import get_shape
    from .problem import build_problem
    from .run import run_problem

    p = result.problem
    tw = result.target
    if tw is None or not tw.reached:
        return AccuracyCheck("skipped", "the run has no time to target to check")
    if get_shape(p.shape).load is not None:
        return AccuracyCheck("skipped", "a mesh read from a file cannot be refined here")
    h = float(p.mesh.size)
    if not h > 0:
        return AccuracyCheck("skipped", "the run's element size is not known")
    fine = refined_case(case, h)
    started = time.perf_counter()
    try:
        problem = build_problem(fine)
    except CaseError as exc:
        return AccuracyCheck("skipped", f"the finer mesh cannot be made ({exc})")
    second = run_problem(problem, stop=stop)
    wall = time.perf_counter() - started
    base = AccuracyCheck(
        "done",
        mesh_size_m=h,
        refined_mesh_size_m=h / RATIO,
        nodes=int(p.mesh.nodes),
        refined_nodes=int(problem.mesh.nodes),
        tolerance=p.settings.tolerance,
        refined_tolerance=problem.settings.tolerance,
        time_s=float(tw.time),
        refined_wall_s=wall,
    )
    if second.status == "interrupted":
        return AccuracyCheck("interrupted", second.reason, **_fields(base, status=False))
    if second.target is None or not second.target.reached:
        return AccuracyCheck(
            "skipped",
            f"the repeat on the finer mesh did not reach the target ({second.reason})",
            **_fields(base, status=False),
        )
    t_run, t_fine = float(tw.time), float(second.target.time)
    t_ext = t_fine + (t_fine - t_run) / (RATIO**ORDER - 1)
    band = abs(t_run - t_ext)
    return AccuracyCheck(
        "done",
        "the run's time to target is within about +/- error_band_s of the extrapolated time "
        "(both meshes assumed fine enough for the asymptotic order)",
        **{
            **_fields(base, status=False),
            "refined_time_s": t_fine,
            "extrapolated_time_s": t_ext,
            "error_band_s": band,
            "relative_error_band": band / t_run if t_run > 0 else None,
        },
    )


def _fields(check: AccuracyCheck, status: bool = True) -> dict:
    d = asdict(check)
    if not status:
        d.pop("status")
        d.pop("note")
    return d
