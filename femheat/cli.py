"""Command line: ``femheat run CASE --out DIR``, ``femheat demo``, ``femheat check CASE``.

Thin layer over the library. Bad input prints one line naming the place and the fix and exits
with code 2; no traceback.
"""

from __future__ import annotations

import argparse
import logging
import sys
from importlib import resources
from pathlib import Path

from . import __version__
from .errors import CaseError, FemheatError

__all__ = ["main"]

CAUTION = (
    "Caution: results are estimates. Confirm with thermocouples on the part. The applicable "
    "code, qualified procedures and licensed practice govern heat treatment of pressure parts "
    "and certified work."
)


def _seconds(text: str) -> float:
    value = float(text)
    if not value >= 0:
        raise argparse.ArgumentTypeError(f"expected seconds >= 0, got {text!r}")
    return value


def _add_run_options(p) -> None:
    p.add_argument(
        "--checkpoint-every",
        type=_seconds,
        default=30.0,
        metavar="S",
        help="write a checkpoint every S seconds of wall time (default: %(default)g; 0: only "
        "when interrupted)",
    )
    p.add_argument(
        "--check-accuracy",
        action="store_true",
        help="repeat the run on a mesh of half the element size with 1/8 of the tolerance and "
        "report the estimated error of the time to target (several times the run's cost)",
    )


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="femheat",
        description="Finite-element heating and cooling of parts in furnaces: when the whole "
        "part reaches temperature, and where the last point is.",
        epilog=CAUTION,
    )
    p.add_argument("--version", action="version", version=f"femheat {__version__}")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")

    r = sub.add_parser("run", help="run a case file and write results to a folder")
    r.add_argument("case", help="case file (TOML)")
    r.add_argument("--out", help="results folder (default: <case name>_results)")
    r.add_argument("--quiet", action="store_true", help="print only the one-line result")
    r.add_argument(
        "--units", choices=("si", "us"), default="si", help="also print F and inches (us)"
    )
    r.add_argument(
        "--resume",
        metavar="DIR",
        help="continue the interrupted run whose results folder is DIR (from its checkpoint)",
    )
    _add_run_options(r)

    d = sub.add_parser("demo", help="run the built-in demonstration case")
    d.add_argument("--out", default="femheat_demo", help="results folder (default: %(default)s)")
    d.add_argument("--quiet", action="store_true", help="print only the one-line result")
    d.add_argument(
        "--units", choices=("si", "us"), default="si", help="also print F and inches (us)"
    )
    _add_run_options(d)

    c = sub.add_parser("check", help="check a case file and its mesh without running it")
    c.add_argument("case", help="case file (TOML)")

    from .mesh_cli import add_parser as add_mesh_parser

    add_mesh_parser(sub)
    from .estimate_cli import add_parser as add_estimate_parser

    add_estimate_parser(sub)
    from .materials_cli import add_parser as add_materials_parser

    add_materials_parser(sub)
    from .shapes_cli import add_parser as add_shapes_parser

    add_shapes_parser(sub)
    from .sweep_cli import add_parser as add_sweep_parser

    add_sweep_parser(sub)
    from .fit_cli import add_parser as add_fit_parser

    add_fit_parser(sub)
    from .plan_cli import add_parser as add_plan_parser

    add_plan_parser(sub)
    return p


def demo_case_text() -> str:
    """The built-in demonstration case file (TOML)."""
    return resources.files("femheat").joinpath("data/demo.toml").read_text(encoding="utf-8")


def _print_result(result, out: Path, console, quiet: bool, units: str = "si") -> None:
    from .output.summary import hours_minutes
    from .units import show_difference, show_length, show_temperature

    tw = result.target
    p = result.problem
    if tw is not None and tw.reached:
        line = (
            f"through at {show_temperature(tw.target, units)} after {hours_minutes(tw.time)} "
            f"h:min ({tw.time:.0f} s); last point {show_length(tw.last_point, units)}"
        )
    elif tw is not None:
        line = f"NOT REACHED: {result.reason}"
    else:
        line = f"finished at t = {result.end_time:.6g} s ({result.reason})"
    if quiet:
        console.print(line)
        return
    axes = "r, z" if p.part_model == "axisymmetric" else ("x, y" if p.mesh.dim == 2 else "x, y, z")
    console.print(f"[bold]{p.title or 'femheat run'}[/bold]")
    console.print(
        f"  mesh: {p.mesh.nodes} nodes, {p.mesh.cells.shape[0]} cells; "
        f"{result.stats.steps} steps ({result.stats.rejected} rejected) in {result.wall_s:.1f} s"
    )
    if tw is not None and tw.reached:
        console.print(
            f"  [bold green]time to target[/bold green] {show_temperature(tw.target, units)}: "
            f"{hours_minutes(tw.time)} h:min ({tw.time:.0f} s)"
        )
        console.print(f"  last point to reach it ({axes}): {show_length(tw.last_point, units)}")
    elif tw is not None:
        console.print(f"  [bold red]target not reached[/bold red]: {result.reason}")
    else:
        console.print(f"  finished at t = {result.end_time:.6g} s: {result.reason}")
    h = result.history
    console.print(
        f"  largest surface-to-core difference (max - min over the part): "
        f"{show_difference(h.largest_spread, units)} at "
        f"{hours_minutes(h.largest_spread_time)} h:min"
    )
    for i, name in enumerate(result.probes.names):
        ct = result.probes.crossing[i]
        when = f"reached target at {hours_minutes(ct)} h:min" if ct == ct else "target not reached"
        console.print(f"  probe {name}: {when}")
    e = result.energy
    console.print(
        f"  energy balance: heat in {e.total_in:.4g}, stored {e.stored:.4g} "
        f"({'J/m' if p.part_model == 'planar' else 'J'}), error {100 * e.relative_error:.3f} %"
    )
    from .estimate_cli import run_lines
    from .estimates import assess_run

    for line in run_lines(assess_run(result)):
        console.print(f"  {line}", markup=False)
    for w in result.warnings:
        console.print(f"  [yellow]warning:[/yellow] {w}")
    files = ("summary.json", "history.csv", "report.html", "fields.pvd")
    written = [n for n in files if (out / n).exists()] + [f"{len(list(out.glob('*.png')))} PNG"]
    console.print(f"  results in {out}/ ({', '.join(written)})")
    console.print(f"[dim]{CAUTION}[/dim]")


def _print_schedule(problem, console, units: str) -> None:
    """The furnace schedule the run will use, as a short table."""
    from .program import schedule_lines

    walls = problem.furnace_wall != problem.furnace_gas
    console.print("  furnace gas temperature:" if walls else "  furnace temperature:")
    for line in schedule_lines(problem.furnace_gas, units):
        console.print(f"    {line}", markup=False)
    if walls:
        console.print("  furnace wall temperature:")
        for line in schedule_lines(problem.furnace_wall, units):
            console.print(f"    {line}", markup=False)


def _run_case(case, out: Path, console, args, case_text: str, source: str) -> int:
    """Run through `femheat.run_cli` (interrupts, checkpoints, resume, accuracy check)."""
    from .run_cli import RunOptions, run_case

    resume = getattr(args, "resume", None)
    options = RunOptions(
        quiet=args.quiet,
        units=args.units,
        resume=Path(resume) if resume else None,
        checkpoint_every=args.checkpoint_every,
        check_accuracy=args.check_accuracy,
    )
    return run_case(case, out, console, options, case_text, source)


def _writable(out: Path) -> None:
    """Make the results folder now, so a bad --out fails before the run, not after it."""
    try:
        out.mkdir(parents=True, exist_ok=True)
        probe = out / ".femheat_write_test"
        probe.write_text("", encoding="utf-8")
        probe.unlink()
    except OSError as exc:
        raise CaseError(
            "--out",
            f"cannot write results to {str(out)!r} ({exc.strerror or exc})",
            "give a folder you can write to",
        ) from None


def _check(case, console) -> int:
    from .problem import build_problem

    problem = build_problem(case)
    m = problem.mesh
    console.print(f"[bold]{problem.title or 'case'}[/bold]: the case file is valid")
    given = {k: v for k, v in problem.params.items() if v is not None}
    element = problem.model.element
    console.print(
        f"  {problem.part_model} {problem.shape} {given}; mesh {m.nodes} nodes "
        f"({element}), {problem.model.geometry.cells.shape[0]} elements, smallest quality "
        f"{problem.model.geometry.quality().min():.2f}"
    )
    for g in problem.model.faces:
        label = problem.face_labels.get(g.name, "")
        unit = "m2 per m depth" if problem.part_model == "planar" else "m2"
        console.print(f"  face {g.name}: {label} (area {g.area:.4g} {unit})")
    from .resources import estimate_run

    console.print(f"  {estimate_run(m.nodes, m.dim, problem.settings).line()}", markup=False)
    for w in problem.warnings:
        console.print(f"  [yellow]warning:[/yellow] {w}")
    return 0


def main(argv: list[str] | None = None) -> int:
    """Entry point; returns the exit code (0 ok, 1 run failed, 2 bad input)."""
    from rich.console import Console

    args = _parser().parse_args(argv)
    console = Console(highlight=False, soft_wrap=True)
    err = Console(stderr=True, highlight=False, soft_wrap=True)
    logging.basicConfig(level=logging.ERROR, format="femheat: %(levelname)s: %(message)s")
    from .case import load_case, parse_case

    try:
        if args.command == "demo":
            import tomllib

            text = demo_case_text()
            out = Path(args.out)
            _writable(out)
            (out / "demo_case.toml").write_text(text, encoding="utf-8")
            case = parse_case(tomllib.loads(text), source="demo case")
            return _run_case(case, out, console, args, text, str(out / "demo_case.toml"))
        if args.command == "estimate":
            from .estimate_cli import run as run_estimate

            return run_estimate(args, console)
        if args.command == "materials":
            from .materials_cli import run as run_materials

            return run_materials(args, console)
        if args.command == "mesh":
            from .mesh_cli import run as run_mesh

            return run_mesh(args, console)
        if args.command == "shapes":
            from .shapes_cli import run as run_shapes

            return run_shapes(args, console)
        if args.command in ("sweep", "fit"):
            from .fit_cli import run as run_fit
            from .sweep_cli import run as run_sweep

            return (run_sweep if args.command == "sweep" else run_fit)(args, console)
        if args.command == "plan":
            from .plan_cli import run as run_plan

            return run_plan(args, console)
        case = load_case(args.case)
        if args.command == "check":
            return _check(case, console)
        out = Path(args.out or args.resume or f"{Path(args.case).stem}_results")
        text = Path(args.case).read_text(encoding="utf-8")  # echoed in report.html
        return _run_case(case, out, console, args, text, args.case)
    except CaseError as exc:
        err.print(f"error: {exc}", markup=False)
        return 2
    except FemheatError as exc:
        err.print(f"femheat failed: {exc}", markup=False)
        return 1
    except KeyboardInterrupt:
        err.print("interrupted", markup=False)
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
