"""``femheat sweep STUDY.toml``: run every variant of a study and collect the table and plots.

Runs are tasks on Dask: a local cluster on this machine's cores by default, or the existing
cluster at ``--scheduler tcp://host:port`` (or the ``FEMHEAT_SCHEDULER`` environment variable).
Results stream to ``OUT/results.jsonl`` as they finish; ``--resume`` skips finished variants.
"""

from __future__ import annotations

import os
from pathlib import Path

__all__ = ["add_parser", "run"]


def add_parser(sub) -> None:
    """Register the ``sweep`` subcommand."""
    p = sub.add_parser("sweep", help="run a study of many variants of a case (Dask)")
    p.add_argument("study", help="study file (TOML; see femheat.study.spec)")
    p.add_argument("--out", help="results folder (default: <study name>_study)")
    p.add_argument(
        "--scheduler",
        metavar="ADDRESS",
        help="Dask scheduler of an existing cluster, tcp://host:port (default: the "
        "FEMHEAT_SCHEDULER environment variable, else a local cluster)",
    )
    p.add_argument("--workers", type=int, help="worker processes of the local cluster")
    p.add_argument(
        "--engine",
        choices=("dask", "serial"),
        default="dask",
        help="dask (default) or serial (one run after another in this process)",
    )
    p.add_argument("--resume", action="store_true", help="skip variants already in --out")
    p.add_argument("--retries", type=int, default=2, help="re-runs of a task that raised")


def _quiet_dask() -> None:
    """Keep Dask's own loggers to warnings on the terminal."""
    import logging

    try:
        import distributed  # noqa: F401  (sets up its loggers)
    except ImportError:
        return
    for name in list(logging.root.manager.loggerDict):
        if name == "distributed" or name.startswith("distributed."):
            logging.getLogger(name).setLevel(logging.WARNING)


def _hours(seconds) -> str:
    from .output.summary import hours_minutes

    return "-" if seconds is None or seconds != seconds else hours_minutes(seconds)


def run(args, console) -> int:
    """Run the study; 0 when every variant ran (even if some did not reach the target)."""
    from .output.plots import save_figure
    from .study.plots import percentiles, sensitivities, spread_figure, tornado_figure
    from .study.runner import run_study
    from .study.spec import load_study

    _quiet_dask()
    study = load_study(args.study)
    out = Path(args.out or f"{Path(args.study).stem}_study")
    scheduler = args.scheduler or os.environ.get("FEMHEAT_SCHEDULER") or None
    where = "serial" if args.engine == "serial" else (scheduler or "a local Dask cluster")
    console.print(
        f"[bold]{study.title or Path(args.study).stem}[/bold]: {len(study.variants)} variants "
        f"({study.mode}), {len(study.variables)} varied values; running on {where}"
    )
    from .output.progress import task_bar

    bar = task_bar(console, transient=False)
    task = None

    def on_start(todo, skipped):
        nonlocal task
        if skipped:
            console.print(f"  {skipped} variants already finished in {out}/ (resumed)")
        task = bar.add_task("variants", total=todo)

    def on_row(row):
        bar.advance(task)
        if row.get("error"):
            bar.console.print(f"  [yellow]{row['id']}[/yellow]: {row['error']}", markup=True)

    with bar:
        res = run_study(
            study,
            out,
            engine=args.engine,
            scheduler=scheduler,
            workers=args.workers,
            resume=args.resume,
            retries=args.retries,
            on_row=on_row,
            on_start=on_start,
        )
    rows = res.rows
    reached = [r for r in rows if r.get("reached")]
    console.print(
        f"  {len(rows)} variants stored, {len(reached)} reached the target; table {res.table}"
    )
    paths = [v.path for v in study.variables]
    times = [r.get("time_to_target_s") for r in rows]
    if study.mode == "one_at_a_time":
        sens = sensitivities(rows, paths)
        for s in sens:
            console.print(
                f"  {s.path}: {_hours(s.shortest_s)} .. {_hours(s.longest_s)} h:min "
                f"(base {_hours(s.base_s)}; at {s.low_value:g} .. {s.high_value:g})"
            )
        if sens:
            save_figure(tornado_figure(sens, study.title), out, "tornado")
    else:
        pct = percentiles(times)
        console.print(
            "  time to target: " + ", ".join(f"P{q} {_hours(v)} h:min" for q, v in pct.items())
        )
        save_figure(spread_figure(times, study.title), out, "time_to_target")
    failed = [r for r in rows if r.get("status") in ("bad input", "failed")]
    if failed:
        console.print(f"  [yellow]{len(failed)} variants did not run[/yellow] (see 'error')")
    return 0
