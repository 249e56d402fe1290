"""``femheat plan PLAN.toml``: design the shortest furnace program that keeps a part's limits.

Writes to ``OUT`` (default ``<plan name>_plan``):

* ``results.jsonl``: every run as it finishes (one JSON line each, synced), so a stopped or
  failed plan keeps what it computed;
* ``plan.json``: the summary (``status`` "running" while the search goes on, then
  "designed", "limits broken", "failed", "bad input" or "interrupted", with ``complete``);
* ``program.csv`` (the program table), ``program.toml`` (the ``[furnace.temperature]`` table
  to paste into a case), ``designed_case.toml`` (the base case with the program, to run as it
  is), ``history.csv`` (the check run per step: setpoint, coldest and hottest point,
  difference, heating rates), ``runs.csv`` (every run's design values and worst values);
* ``plan.png`` and ``plan.svg``: setpoint and part temperatures, difference and heating rate
  against their limits.

Exit code 0 when the designed program keeps every limit in its check run, 1 when no program
was found or the check broke a limit, 2 for bad input.
"""

from __future__ import annotations

import csv
import json
import math
from pathlib import Path

__all__ = ["add_parser", "run"]


def add_parser(sub) -> None:
    """Register the ``plan`` subcommand."""
    p = sub.add_parser(
        "plan", help="design the shortest furnace program that keeps a part's limits"
    )
    p.add_argument("plan", help="plan file (TOML; see femheat.plan.spec)")
    p.add_argument("--out", help="results folder (default: <plan name>_plan)")
    p.add_argument("--runs", type=int, help="search runs (default: plan.search.runs)")
    p.add_argument("--quiet", action="store_true", help="print only the program and margins")


def _clean(value):
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, dict):
        return {k: _clean(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_clean(v) for v in value]
    return value


class _Files:
    """The results folder: the run log as it grows, and the summary marker."""

    def __init__(self, out: Path, plan, plan_file: str):
        from .study.store import ResultStore

        self.out = out
        self.plan = plan
        self.plan_file = plan_file
        self.store = ResultStore(out)
        self.runs: list = []
        self._marker("running", "the search is running")

    def add(self, evaluation) -> None:
        self.runs.append(evaluation)
        row = evaluation.row()
        row["id"] = f"run{evaluation.index:03d}"
        self.store.add(row)

    def write_json(self, name: str, data: dict) -> None:
        from .output.files import atomic_write_text

        atomic_write_text(self.out / name, json.dumps(_clean(data), indent=2) + "\n")

    def _marker(self, status: str, reason: str) -> None:
        from .plan.report import CAUTION, evaluation_summary, limits_summary
        from .plan.search import keeps_limits

        kept = [e for e in self.runs if keeps_limits(self.plan, e) and e.design is not None]
        best = min(kept, key=lambda e: e.through_s, default=None)
        self.write_json(
            "plan.json",
            {
                "title": self.plan.title,
                "plan_file": self.plan_file,
                "status": status,
                "complete": False,
                "reason": reason,
                "limits": limits_summary(self.plan),
                "runs": len(self.runs),
                "best_so_far": None if best is None else evaluation_summary(self.plan, best),
                "caution": CAUTION,
            },
        )
        self.write_runs()

    def fail(self, status: str, reason: str) -> None:
        """Record a plan that stopped (what ran so far stays in results.jsonl)."""
        self._marker(status, reason)

    def write_runs(self) -> None:
        from .output.files import atomic_write_text

        if not self.runs:
            return
        rows = [e.row() for e in self.runs]
        cols = list(rows[0])
        lines = [",".join(cols)]
        for r in rows:
            r["program"] = json.dumps(r["program"])
            lines.append(",".join(_cell(r[c]) for c in cols))
        atomic_write_text(self.out / "runs.csv", "\n".join(lines) + "\n")


def _cell(value) -> str:
    import io

    buf = io.StringIO()
    if isinstance(value, float):
        value = "" if not math.isfinite(value) else f"{value:.6g}"
    csv.writer(buf, lineterminator="").writerow([value])
    return buf.getvalue()


def _write_results(files: _Files, result, plan_file: str) -> None:
    from .output.files import atomic_write_text
    from .output.plots import save_figure
    from .plan.evaluate import HISTORY_COLUMNS
    from .plan.report import designed_case_text, plan_figure, summary

    out = files.out
    files.write_runs()
    atomic_write_text(out / "program.toml", result.program.case_text())
    atomic_write_text(out / "designed_case.toml", designed_case_text(result))
    rows = result.program.rows()
    lines = [",".join(rows[0])]
    lines += [",".join(_cell(v if v is not None else math.nan) for v in r.values()) for r in rows]
    atomic_write_text(out / "program.csv", "\n".join(lines) + "\n")
    h = result.check.history
    lines = [",".join(HISTORY_COLUMNS)]
    for i in range(h["time_s"].size):
        lines.append(",".join(_cell(float(h[c][i])) for c in HISTORY_COLUMNS))
    atomic_write_text(out / "history.csv", "\n".join(lines) + "\n")
    save_figure(plan_figure(result), out, "plan")
    files.write_json("plan.json", summary(result, plan_file))


def run(args, console) -> int:
    """Design the program, print it and write the files."""
    from .errors import CaseError, FemheatError
    from .plan.report import CAUTION, RULE_NOTE, hm, margin_lines, program_lines
    from .plan.search import design_program
    from .plan.spec import load_plan

    plan = load_plan(args.plan)
    if args.runs is not None and not 4 <= args.runs <= 1000:
        raise CaseError("--runs", f"expected 4 to 1000, got {args.runs}", "give e.g. --runs 40")
    out = Path(args.out or f"{Path(args.plan).stem}_plan")
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise CaseError(
            "--out", f"cannot make {str(out)!r} ({exc.strerror or exc})", "give a folder"
        ) from None
    runs = args.runs or plan.spec.search.runs
    say = (lambda *a, **k: None) if args.quiet else console.print
    above = f"above {plan.above_c:g} C" if plan.above_c is not None else "everywhere"
    say(f"[bold]{plan.title or Path(args.plan).stem}[/bold]: designing a furnace program")
    say(
        f"  limits: difference {plan.max_difference:g} K; part heating rate {above} "
        f"{plan.limit_rate * 3600:.3g} C/h; soak {plan.soak.minimum:g}..{plan.soak.maximum:g} C "
        f"for {hm(plan.soak.hold)} h:min (furnace at {plan.setpoint_c:g} C)",
        markup=False,
    )
    say(f"  [dim]{RULE_NOTE}[/dim]")
    files = _Files(out, plan, str(args.plan))
    from .output.progress import task_bar

    bar = task_bar(console, transient=True)
    task = bar.add_task("search runs", total=runs, visible=not args.quiet)

    def on_evaluation(e) -> None:
        files.add(e)
        if e.label == "search":
            bar.advance(task)
            return
        length = e.through_s + plan.soak.hold if e.reached else math.nan
        rate = f"{e.rate.value:.3g}" if math.isfinite(e.rate.value) else "-"
        note = f", failed: {e.error}" if e.error else ""
        if not args.quiet:
            bar.console.print(
                f"  run {e.index}: {e.label}: {hm(length)} h:min, difference "
                f"{e.difference.value:.1f} K, rate {above} {rate} C/h{note}",
                markup=False,
            )

    try:
        with bar:
            result = design_program(plan, on_evaluation=on_evaluation, runs=runs)
    except CaseError as exc:
        files.fail("bad input", str(exc))
        raise
    except FemheatError as exc:
        files.fail("failed", str(exc))
        raise
    except KeyboardInterrupt:
        files.fail("interrupted", "stopped by the user")
        raise
    _write_results(files, result, str(args.plan))
    message = result.message[:1].lower() + result.message[1:].rstrip(".")
    console.print(f"  designed program ({len(result.evaluations)} runs; search: {message}):")
    for line in program_lines(result.program):
        console.print(f"    {line}", markup=False)
    ref = result.reference
    ref_len = ref.through_s + plan.soak.hold if ref.reached else math.nan
    console.print(
        f"  length {hm(result.length_s)} h:min; one constant ramp keeping the limits "
        f"({ref.program.steps[0].rate * 3600:.3g} C/h): {hm(ref_len)} h:min",
        markup=False,
    )
    lim = result.limit_run
    if lim is not ref:
        console.print(
            f"  (one ramp at the limit rate, {plan.limit_rate * 3600:.3g} C/h, breaks a limit: "
            f"difference {lim.difference.value:.1f} K, rate {above} {lim.rate.value:.3g} C/h)",
            markup=False,
        )
    console.print("  limits in the check run (the program run as an ordinary case):")
    for line in margin_lines(result.margins):
        console.print(f"    {line}", markup=False)
    console.print("  to paste into a case file:")
    for line in result.program.case_text().splitlines():
        console.print(f"    {line}", markup=False)
    console.print(
        f"  results in {out}/ (plan.json, program.csv, program.toml, designed_case.toml, "
        "history.csv, runs.csv, plan.png)"
    )
    console.print(f"[dim]{CAUTION}[/dim]")
    return 0 if result.ok else 1
