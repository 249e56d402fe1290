"""``femheat run`` and ``femheat demo``: run a case so that nothing is lost and nothing is silent.

* While the march goes on, history.csv is rewritten every few seconds and field frames are
  written as they are made (each file atomically), summary.json says ``"complete": false``
  (status "running"), and a checkpoint is written every ``--checkpoint-every`` seconds.
* SIGINT (Ctrl-C) or SIGTERM stops the run after the current step: a last checkpoint, the
  end frame, history.csv and a summary with ``"complete": false``, status "interrupted" and
  the reason are written, and the exit code is 130 (SIGINT) or 143 (SIGTERM). The pictures
  and report.html are left for the complete run.
* ``--resume DIR`` continues from the checkpoint in DIR (refused when the case or its mesh
  has changed) and writes into DIR.
* ``--check-accuracy`` repeats the run on a finer mesh with a tighter tolerance and adds the
  estimated error band of the time to target (`femheat.accuracy`) to the summary.
* A run that fails leaves summary.json with status "failed" and the reason.

Only `femheat.cli` calls this; it prints through the rich console it is given.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from .errors import CaseError, FemheatError

__all__ = ["RunOptions", "run_case"]


@dataclass(frozen=True)
class RunOptions:
    """Options of one run from the command line.

    Attributes:
        quiet: print only the one-line result. units: "si" or "us" for the printed values.
        resume: results folder holding the checkpoint to continue from (None: a new run).
        checkpoint_every: wall-clock seconds between checkpoints (0: none, except when the
            run is interrupted).
        history_every: wall-clock seconds between rewrites of history.csv during the run.
        check_accuracy: repeat on a finer mesh and estimate the error of the time to target.
    """

    quiet: bool = False
    units: str = "si"
    resume: Path | None = None
    checkpoint_every: float = 30.0
    history_every: float = 5.0
    check_accuracy: bool = False


def _load_checkpoint(options: RunOptions, out: Path, identity):
    from .checkpoint import read_checkpoint

    if options.resume is None:
        return None
    if out.resolve() != options.resume.resolve():
        raise CaseError(
            "--out",
            f"{str(out)!r} is not the folder being resumed ({str(options.resume)!r})",
            "leave out --out: a resumed run continues in its own results folder",
        )
    ckpt = read_checkpoint(options.resume)
    ckpt.check_case(identity)
    return ckpt


def run_case(case, out: Path, console, options: RunOptions, case_text: str, source: str) -> int:
    """Run `case`, writing into `out`; returns the exit code (0, or 130/143 when interrupted).

    Raises:
        CaseError: bad input (also a checkpoint that does not fit). FemheatError: the run
            failed (summary.json then says so).
    """
    from .api import Results, recorder_for
    from .checkpoint import CaseIdentity, CheckpointWriter, remove_checkpoint
    from .cli import _print_result, _print_schedule, _writable
    from .interrupt import StopRequests
    from .output.live import HistoryFlusher, mark_failed, mark_interrupted, mark_running
    from .output.progress import RunProgress
    from .output.vtk import VtkSeriesWriter
    from .problem import build_problem
    from .resources import estimate_run
    from .run import run_problem

    _writable(out)
    identity = CaseIdentity.of(case, case_text, source)
    ckpt = _load_checkpoint(options, out, identity)
    # a resumed run continues on the checkpoint's own mesh (meshing again may differ)
    problem = build_problem(case, mesh=ckpt.load_mesh() if ckpt is not None else None)
    if not options.quiet:
        _print_schedule(problem, console, options.units)
        est = estimate_run(problem.mesh.nodes, problem.mesh.dim, problem.settings)
        if est.wall_s > 60:
            console.print(f"  {est.line()}", markup=False)
        warn = est.warning(problem.mesh.dim)
        if warn:
            console.print(f"  [yellow]warning:[/yellow] {warn}")
        if ckpt is not None:
            console.print(f"  resuming from the checkpoint at t = {ckpt.time_s:.6g} s")
    if ckpt is None:
        remove_checkpoint(out)  # one left by an earlier run in this folder is not ours
    mark_running(out, problem.title)

    recorder = recorder_for(problem, case.output, out)  # field frames written as they come
    keep: dict = {"recorder": recorder}
    for sink in recorder.sinks:
        if isinstance(sink, VtkSeriesWriter):
            keep["vtk"] = sink
    if ckpt is not None:
        for name, obj in keep.items():
            if name in ckpt.observers:
                obj.restore(ckpt.observers[name])
    flusher = HistoryFlusher(out, options.history_every)
    writer = CheckpointWriter(out, identity, options.checkpoint_every, keep)
    resume = ckpt.run if ckpt is not None else None

    with StopRequests() as stop:
        try:
            with RunProgress.for_problem(console, problem, enabled=not options.quiet) as bar:
                result = run_problem(
                    problem, [recorder, bar, flusher, writer], stop=stop, resume=resume
                )
        except FemheatError as exc:
            _flush(flusher)
            mark_failed(out, str(exc), problem.title)
            raise
        except KeyboardInterrupt:  # a second signal: stop at once, say so
            _flush(flusher)
            mark_interrupted(out, "stopped at once by a second interrupt", problem.title)
            raise
        if result.status == "interrupted":
            writer.write()  # before the end frame, so a resume continues the series
            recorder.finish()
            Results(result, recorder, case, case_text).save(out, pictures=False, report=False)
            _print_interrupted(result, out, console, source)
            return stop.exit_code

        recorder.finish()
        results = Results(result, recorder, case, case_text)
        try:
            # summary.json, history.csv, then the plots, pictures and report.html per [output]
            results.save(out)
        except OSError as exc:
            _print_result(result, out, console, options.quiet, options.units)
            raise FemheatError(f"results could not be written to {out}: {exc}") from None
        remove_checkpoint(out)
        accuracy = None
        if options.check_accuracy:
            accuracy = _accuracy(case, result, results, out, console, options, stop)
    _print_result(result, out, console, options.quiet, options.units)
    for problem_text in (writer.failed, flusher.failed):
        if problem_text:
            console.print(f"  [yellow]warning:[/yellow] {problem_text}")
    if accuracy is not None and not options.quiet:
        for line in accuracy.lines():
            console.print(f"  {line}", markup=False)
    if accuracy is not None and accuracy.status == "interrupted":
        return stop.exit_code
    return 0


def _flush(flusher) -> None:
    """Write history.csv now if the run had started (never raises)."""
    if flusher.history is not None:
        try:
            flusher.write()
        except OSError:
            pass


def _accuracy(case, result, results, out, console, options, stop):
    """The repeat on a finer mesh; its section is added to summary.json."""
    from .accuracy import check_accuracy
    from .output.summary import write_summary_dict

    if not options.quiet:
        console.print("  checking accuracy: repeating the run on a finer mesh ...")
    accuracy = check_accuracy(case, result, stop=stop)
    results.extra["accuracy"] = accuracy.to_dict()
    write_summary_dict(out, results.summary)
    return accuracy


def _print_interrupted(result, out: Path, console, source: str) -> None:
    console.print(f"[bold red]interrupted[/bold red]: {result.reason}")
    console.print(
        f"  results so far in {out}/ (summary.json says complete: false; history.csv, "
        "fields.pvd and a checkpoint)"
    )
    console.print(f"  to continue: femheat run {source} --resume {out}", markup=False)
