"""Python interface for notebooks and scripts: ``femheat.run(case)``.

Example::

    import femheat
    res = femheat.run("billet.toml")            # a path, a dict like the TOML, or a Case
    res.summary["target"]["time_h_min"]           # '2:19'
    res.history["min_C"]                          # numpy arrays (a DataFrame: res.history_frame())
    res.final                                     # nodal temperatures at the end, C
    res.time_to_target                            # per node, s (NaN where never reached)
    figs = res.plot()                             # matplotlib figures
    res.write_vtk("out")                          # fields.pvd + fields/*.vtu + faces.vtu
    res.save("out")                               # everything the command line writes

`run` never prints (unless ``progress=True``) and raises `femheat.errors.CaseError` for bad
input. With ``out=`` the field frames are written during the run, as the command line does.
"""

from __future__ import annotations

import logging
import os
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .errors import CaseError, FemheatError

__all__ = ["run", "Results", "SaveLog", "recorder_for", "toml_text"]

log = logging.getLogger(__name__)


@dataclass
class SaveLog:
    """What `Results.save` wrote and how long each part took (s)."""

    files: list[Path] = field(default_factory=list)
    seconds: dict[str, float] = field(default_factory=dict)
    render_seconds: dict[str, float] = field(default_factory=dict)
    render_backend: str = ""
    notes: list[str] = field(default_factory=list)


# --- case input -------------------------------------------------------------------------------


def _toml_value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int | float):
        return repr(v)
    if isinstance(v, str):
        return '"' + v.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n") + '"'
    if isinstance(v, list | tuple):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{k} = {_toml_value(x)}" for k, x in v.items()) + "}"
    return _toml_value(str(v))


def toml_text(data: dict, _prefix: str = "") -> str:
    """A plain TOML rendering of a case table (for echoing a dict case in the report)."""
    lines, tables = [], []
    for k, v in data.items():
        if v is None:
            continue
        if isinstance(v, dict):
            tables.append((k, v))
        elif isinstance(v, list) and v and all(isinstance(x, dict) for x in v):
            tables.append((k, v))
        else:
            lines.append(f"{k} = {_toml_value(v)}")
    for k, v in tables:
        name = f"{_prefix}{k}"
        if isinstance(v, dict):
            lines.append(f"\n[{name}]")
            lines.append(toml_text(v, f"{name}.").strip("\n"))
        else:
            for item in v:
                lines.append(f"\n[[{name}]]")
                lines.append(toml_text(item, f"{name}.").strip("\n"))
    return "\n".join(x for x in lines if x != "") + "\n"


def _load(case):
    """(Case, case text) from a path, a dict or a Case."""
    from .case import Case, load_case, parse_case

    if isinstance(case, Case):
        return case, toml_text(case.model_dump(mode="json", exclude_none=True))
    if isinstance(case, dict):
        return parse_case(case), toml_text(case)
    if isinstance(case, str | os.PathLike):
        loaded = load_case(case)
        try:
            text = Path(case).read_text(encoding="utf-8")
        except OSError:
            text = ""
        return loaded, text
    raise CaseError(
        "", f"expected a case file path, a dict or a Case, got {type(case).__name__}", ""
    )


# --- the run ----------------------------------------------------------------------------------


def recorder_for(problem, output=None, folder=None, keep: bool = False):
    """The frame recorder for a run: frames at ``output.interval``, at the target and at the
    end; streamed to VTK files in `folder` when given and ``output.fields`` is on."""
    from .output.frames import FrameRecorder

    sinks = []
    if folder is not None and (output is None or output.fields):
        from .output.vtk import VtkSeriesWriter

        target = problem.target.temperature if problem.target else None
        sinks.append(VtkSeriesWriter(folder, problem.mesh, target))
    interval = output.interval if output is not None else None
    return FrameRecorder.for_problem(problem, interval=interval, sinks=sinks, keep=keep)


def _estimates_for(result) -> list:
    """Hand estimates of the time to target, when `femheat.estimates` can make them."""
    try:
        from .estimates import for_run
    except ImportError:
        return []
    try:
        return list(for_run(result))
    except (FemheatError, ValueError, ArithmeticError) as exc:
        log.warning("hand estimates skipped: %s", exc)
        return []


def _holds(estimate) -> bool:
    valid = getattr(estimate, "valid", None)
    if valid is None and isinstance(estimate, dict):
        valid = estimate.get("valid")
    return valid is None or bool(valid)


class Results:
    """The outcome of a run, with ways to look at it.

    Attributes:
        result: the `femheat.run.RunResult`.
        case: the `femheat.case.Case` (None when built from a problem only).
        case_text: the case as TOML text (echoed in the report).
        frames: the field frames kept in memory (empty when they were only streamed).
        estimates: hand estimates of the time to target ((label, time_s) pairs or objects with
            ``label`` and ``time_s``), shown in the plots and the report.
        extra: more sections for summary.json (e.g. ``"accuracy"`` from
            `femheat.accuracy`), added after the standard ones.
    """

    def __init__(self, result, recorder, case=None, case_text: str = "", estimates=None):
        self.result = result
        self.case = case
        self.case_text = case_text
        self._recorder = recorder
        self.estimates = list(estimates) if estimates is not None else _estimates_for(result)
        self.extra: dict[str, dict] = {}

    def __repr__(self) -> str:
        t = self.summary["target"]
        return (
            f"<femheat Results: {self.result.status}, time to target "
            f"{t.get('time_h_min')} h:min, {self.problem.mesh.nodes} nodes>"
        )

    # -- data -----------------------------------------------------------------------------------
    @property
    def problem(self):
        return self.result.problem

    @property
    def summary(self) -> dict:
        """The content of summary.json."""
        from .output.summary import summary_dict

        data = summary_dict(self.result)
        data.update(self.extra)
        return data

    @property
    def history(self) -> dict[str, np.ndarray]:
        """Per-step history as arrays: time_s, min_C, max_C, mean_C, spread_C, <probe>_C."""
        h = self.result.history
        rows = np.asarray(h.rows, dtype=float)
        return {c: rows[:, i].copy() for i, c in enumerate(h.columns)}

    @property
    def rates(self) -> dict[str, np.ndarray]:
        """Per-step heating rates, C/h: time_s, fastest_C_per_h, slowest_C_per_h, mean_C_per_h."""
        return self._recorder.rates.arrays()

    def history_frame(self):
        """The history (with the rates joined on time) as a pandas DataFrame (needs pandas)."""
        try:
            import pandas as pd
        except ImportError as exc:
            raise FemheatError("pandas is not installed; fix: pip install pandas") from exc
        df = pd.DataFrame(self.history)
        rates = pd.DataFrame(self.rates)
        return df.merge(rates, on="time_s", how="left")

    @property
    def points(self) -> np.ndarray:
        """Node coordinates, m ((r, z) for axisymmetric parts)."""
        return self.problem.mesh.points

    @property
    def final(self) -> np.ndarray:
        """Nodal temperatures at the end of the run, C."""
        return self.result.final

    @property
    def time_to_target(self) -> np.ndarray | None:
        """When each node first reached the target, s (NaN where never); None without target."""
        tw = self.result.target
        return None if tw is None else tw.node_time.copy()

    @property
    def frames(self):
        return list(self._recorder.frames)

    @property
    def at_target(self):
        """The frame at the moment the whole part reached the target (None if not reached)."""
        return self._recorder.at_target

    # -- pictures ---------------------------------------------------------------------------------
    def plot_data(self):
        from .output.plots import PlotData

        # mark only the estimates whose method holds here (the table in the report has all)
        marks = [e for e in self.estimates if _holds(e)]
        return PlotData.from_result(self.result, self._recorder.rates, marks)

    def plot(self, folder=None, limits=None):
        """Matplotlib figures (temperatures; difference and rate); also written as PNG and SVG
        into `folder` when given."""
        from .output.plots import difference_rate_figure, save_figure, temperature_figure

        data = self.plot_data()
        figs = [temperature_figure(data), difference_rate_figure(data, limits)]
        if folder is not None:
            save_figure(figs[0], folder, "temperatures")
            save_figure(figs[1], folder, "difference_rate")
        return figs

    def scene(self):
        """What the pictures show: the field at the target time (or the end), the time to
        target and the last (or lagging) point."""
        from .output.render import Scene

        p, tw = self.problem, self.result.target
        frame = self.at_target
        if frame is not None:
            temp, t, reached = frame.temperature, frame.time_s, True
        else:
            temp, t, reached = self.result.final, self.result.end_time, False
        last = None
        if tw is not None:
            if tw.reached:
                last = tuple(tw.last_point)
            else:
                last = tuple(float(v) for v in p.mesh.points[tw.lagging(self.result.final)])
        from .output.meshinfo import face_labels

        labels = face_labels(p)
        return Scene(
            mesh=p.mesh,
            part_model=p.part_model,
            temperature=temp,
            time_s=t,
            reached=reached,
            target_c=tw.target if tw is not None else None,
            node_time=tw.node_time if tw is not None else None,
            last_point=last,
            title=p.title,
            probes=tuple(
                (n, tuple(pt)) for n, pt in zip(p.probe_names, p.probe_points, strict=True)
            ),
            face_labels=labels,
        )

    def render(self, folder, backend: str = "auto"):
        """Write the PNG pictures into `folder`; returns (paths, RenderLog)."""
        from .output.render import render_pictures

        return render_pictures(folder, self.scene(), backend)

    def write_vtk(self, folder) -> Path:
        """Write the kept frames as a VTK series (fields.pvd, fields/, faces.vtu) into `folder`."""
        from .output.vtk import write_series

        frames = self.frames
        if not frames:
            raise FemheatError(
                "no frames were kept in memory (they were written during the run); "
                "fix: run with keep_frames=True"
            )
        target = self.result.target.target if self.result.target is not None else None
        return write_series(folder, self.problem.mesh, frames, target)

    def save(self, folder, fields=None, pictures=None, report=None, backend="auto") -> SaveLog:
        """Write the outputs into `folder`: summary.json, history.csv, and as the case's
        ``[output]`` says (or the arguments override): VTK frames, PNG pictures and plots,
        report.html. Frames already written during the run are not written again."""
        from .output.summary import write_history, write_summary_dict

        out = SaveLog()
        spec = self.case.output if self.case is not None else None
        fields = spec.fields if fields is None and spec is not None else fields
        pictures = spec.pictures if pictures is None and spec is not None else pictures
        report = spec.report if report is None and spec is not None else report
        fields = True if fields is None else fields
        pictures = True if pictures is None else pictures
        report = True if report is None else report
        folder = Path(folder)
        folder.mkdir(parents=True, exist_ok=True)
        t = time.perf_counter()
        # the history first: a summary on disk vouches for the history beside it
        history = write_history(folder, self.result)
        out.files += [write_summary_dict(folder, self.summary), history]
        out.seconds["summary"] = time.perf_counter() - t
        if fields and self.frames and not self._streamed_to(folder):
            t = time.perf_counter()
            out.files.append(self.write_vtk(folder))
            out.seconds["fields"] = time.perf_counter() - t
        elif fields and self._streamed_to(folder):
            out.files.append(folder / "fields.pvd")
        figures = []
        if pictures:
            t = time.perf_counter()
            plots = self._save_plots(folder)
            out.files += plots
            out.seconds["plots"] = time.perf_counter() - t
            t = time.perf_counter()
            pics, rlog = self.render(folder, backend)
            out.files += pics
            out.seconds["pictures"] = time.perf_counter() - t
            out.render_seconds = dict(rlog.seconds)
            out.render_backend = rlog.backend
            out.notes += rlog.skipped
            figures = self._figures(plots, pics)
        if report:
            t = time.perf_counter()
            out.files.append(self.write_report(folder, figures))
            out.seconds["report"] = time.perf_counter() - t
        return out

    def _streamed_to(self, folder) -> bool:
        from .output.vtk import VtkSeriesWriter

        for s in self._recorder.sinks:
            if (
                isinstance(s, VtkSeriesWriter)
                and Path(s.folder).resolve() == Path(folder).resolve()
            ):
                return True
        return False

    def _save_plots(self, folder) -> list[Path]:
        from .output.plots import write_plots

        return write_plots(folder, self.plot_data())

    def _figures(self, plots, pics):
        from .output.report import Figure

        tw = self.result.target
        target = f"{tw.target:g} C" if tw is not None else ""
        captions = {
            "temperatures.png": "Part, probe and furnace temperatures against time, with the "
            "target line and the moment the whole part reached it"
            + (" (dotted lines: hand estimates)" if self.estimates else ""),
            "difference_rate.png": "Difference between the hottest and the coldest point, and "
            "the heating rate, against time",
            "temperature.png": "Temperature field at the moment the whole part reached the "
            "target, with the last point marked"
            if self.at_target is not None
            else "Temperature field at the end of the run, with the lagging point marked",
            "temperature_cut.png": "The same field on a cut through the last point",
            "time_to_target.png": f"When each point reached {target}: the map shows how the "
            "heat moves into the part",
            "faces.png": "The mesh, with each face coloured by name (and its condition)",
        }
        order = [
            "temperatures.png",
            "temperature.png",
            "temperature_cut.png",
            "time_to_target.png",
            "difference_rate.png",
            "faces.png",
        ]
        have = {p.name: p for p in list(plots) + list(pics) if p.suffix == ".png"}
        return [Figure(have[n], captions[n]) for n in order if n in have]

    def write_report(self, folder, figures=None) -> Path:
        """Write report.html into `folder` (figures: `femheat.output.report.Figure` list)."""
        from .output.meshinfo import mesh_figures
        from .output.report import write_report

        return write_report(
            folder,
            self.summary,
            case_text=self.case_text,
            figures=figures or [],
            estimates=self.estimates,
            mesh_extra=mesh_figures(self.problem.mesh),
        )


def run(
    case,
    out: str | os.PathLike | None = None,
    *,
    progress: bool = False,
    keep_frames: bool | None = None,
    estimates=None,
    backend: str = "auto",
) -> Results:
    """Run a case and return its `Results`.

    Args:
        case: a case file path, a dict shaped like the TOML file, or a `femheat.case.Case`.
        out: results folder; when given, everything is written there as ``femheat run`` does
            (field frames during the run, the rest after it).
        progress: show a progress bar on the terminal for runs longer than about 2 s.
        keep_frames: keep the field frames in memory (default: when `out` is not given).
        estimates: hand estimates to show ((label, time_s) pairs); default: those of
            `femheat.estimates`, when it can make them.
        backend: picture drawing, "auto", "pyvista" or "matplotlib".

    Raises:
        CaseError: bad input. FemheatError: the run failed.
    """
    from .problem import build_problem
    from .run import run_problem

    loaded, text = _load(case)
    problem = build_problem(loaded)
    keep = (out is None) if keep_frames is None else keep_frames
    folder = Path(out) if out is not None else None
    recorder = recorder_for(problem, loaded.output, folder, keep)
    observers = [recorder]
    bar = None
    if progress:
        from rich.console import Console

        from .output.progress import RunProgress

        bar = RunProgress.for_problem(Console(), problem)
        observers.append(bar)
    try:
        result = run_problem(problem, observers=observers)
    finally:
        if bar is not None:
            bar.close()
    recorder.finish()
    res = Results(result, recorder, loaded, text, estimates)
    if folder is not None:
        res.save(folder, backend=backend)
    return res
