"""What a plan writes: the program table, the case-file program, the margins and the plot.

* `summary`: the content of ``plan.json`` (limits, program, margins, comparison, search);
* `program_lines`, `margin_lines`: the printed tables;
* `designed_case_text`: the base case with the designed program, soak target and end time,
  to run as an ordinary case (relative file paths made absolute);
* `plan_figure`: furnace setpoint and the part's coldest and hottest point with the soak band;
  the difference against its limit; the heating rate above the limit's temperature against
  the limit (times in h).

Files are written by `femheat.plan_cli`; nothing here writes.
"""

from __future__ import annotations

import math
import textwrap
from pathlib import Path

import numpy as np

from ..output.summary import finite_or_none
from ..units import hours_minutes
from .design import FurnaceProgram
from .evaluate import Evaluation, case_table
from .search import Margin, PlanResult, keeps_limits

__all__ = [
    "CAUTION",
    "RULE_NOTE",
    "designed_case_text",
    "evaluation_summary",
    "hm",
    "limits_summary",
    "margin_lines",
    "plan_figure",
    "program_lines",
    "summary",
]

_HOUR = 3600.0

CAUTION = (
    "The designed program is an estimate from this model and mesh. Check it against the "
    "applicable code and qualified procedures, and confirm it with thermocouples on the part, "
    "before use."
)
RULE_NOTE = (
    "Limits are the plan file's. Rule values shown in the examples have the form of "
    "pressure-vessel post-weld heat-treatment rules, as remembered: to be checked against the "
    "code in force."
)

_PATH_KEYS = ("file", "mesh", "table_file", "from_run", "from_file")


def hm(seconds: float | None) -> str:
    """Seconds as h:min ("-" for none)."""
    return hours_minutes(seconds, "-")


def program_lines(program: FurnaceProgram) -> list[str]:
    """The program as a table: step, what, from and to (C), rate (C/h), duration and clock
    times (h:min)."""
    lines = [f"{'step':>4}  {'':5} {'from C':>7} {'to C':>7} {'C/h':>6} {'h:min':>6}  start - end"]
    for r in program.rows():
        rate = f"{r['rate_C_per_h']:.3g}" if r["kind"] == "ramp" else ""
        lines.append(
            f"{r['step']:>4}  {r['kind']:5} {r['from_C']:>7.0f} {r['to_C']:>7.0f} {rate:>6} "
            f"{hm(r['duration_s']):>6}  {hm(r['start_s'])} - {hm(r['end_s'])}"
        )
    return lines


def margin_lines(margins) -> list[str]:
    """The limits against the check run, one line each."""
    out = []
    for m in margins:
        if m.unit == "s":
            spare = f"{m.margin / 60:.1f} min" if abs(m.margin) < 3600 else f"{hm(m.margin)} h:min"
            vals = (
                f"held {hm(m.worst)} h:min, needed {hm(m.limit)}, margin {spare}"
                if math.isfinite(m.worst)
                else f"not reached (needed {hm(m.limit)})"
            )
            when = f"from {hm(m.time_s)}"
        else:
            worst = f"{m.worst:.1f}" if math.isfinite(m.worst) else "-"
            vals = f"limit {m.limit:.4g} {m.unit}, worst {worst}, margin {m.margin:.3g}"
            when = f"at {hm(m.time_s)}"
        verdict = "ok" if m.ok else "BROKEN"
        out.append(f"{verdict:6} {m.name}: {vals} ({when} h:min, {m.where})")
    return out


def _margin_dict(m: Margin) -> dict:
    return {
        "name": m.name,
        "unit": m.unit,
        "limit": finite_or_none(m.limit),
        "worst": finite_or_none(m.worst),
        "margin": finite_or_none(m.margin),
        "time_s": finite_or_none(m.time_s),
        "time_h_min": hm(m.time_s),
        "where": m.where,
        "ok": m.ok,
    }


def limits_summary(plan) -> dict:
    """The plan's limits and search bounds in plain units (K, C, C/h, s)."""
    spec = plan.spec
    lim = spec.heating_limit
    return {
        "max_difference_K": plan.max_difference,
        "heating_limit_C_per_h": plan.limit_rate * _HOUR,
        "heating_limit_rule": {
            "heating_C_per_h": lim.heating * _HOUR,
            "reference_thickness_m": lim.reference_thickness,
            "thickness_m": lim.thickness,
            "min_rate_C_per_h": None if lim.min_rate is None else lim.min_rate * _HOUR,
            "max_rate_C_per_h": None if lim.max_rate is None else lim.max_rate * _HOUR,
        },
        "above_C": plan.above_c,
        "start_C": plan.start_c,
        "soak": {
            "minimum_C": plan.soak.minimum,
            "maximum_C": plan.soak.maximum,
            "hold_s": plan.soak.hold,
            "setpoint_C": plan.setpoint_c,
        },
        "furnace": {
            "fastest_C_per_h": plan.fastest * _HOUR,
            "slowest_C_per_h": plan.slowest * _HOUR,
            "longest_hold_s": plan.longest_hold,
        },
        "margin": spec.search.margin,
        "max_step_s": spec.search.max_step,
        "note": RULE_NOTE,
    }


def evaluation_summary(plan, e: Evaluation) -> dict:
    """A run's length and worst values, and whether it keeps the limits (no margin)."""
    length = e.through_s + plan.soak.hold if e.reached else math.nan
    return {
        "run": e.index,
        "label": e.label,
        "program": e.program.case_value(units=True),
        "length_s": finite_or_none(length),
        "length_h_min": hm(length),
        "through_s": finite_or_none(e.through_s),
        "largest_difference_K": finite_or_none(e.difference.value),
        "largest_rate_above_C_per_h": finite_or_none(e.rate.value),
        "hottest_C": finite_or_none(e.hottest.value),
        "keeps_limits": keeps_limits(plan, e),
        "status": e.status,
        "error": e.error,
    }


def summary(result: PlanResult, plan_file: str = "") -> dict:
    """The content of ``plan.json`` for a finished plan."""
    plan = result.plan
    program = result.program
    check = result.check
    ref = evaluation_summary(plan, result.reference)
    saved = (ref["length_s"] or math.nan) - program.length
    d = result.best.design
    return {
        "title": plan.title,
        "plan_file": plan_file,
        "case_file": plan.spec.case,
        "status": "designed" if result.ok else "limits broken",
        "complete": True,
        "limits": limits_summary(plan),
        "program": {
            "length_s": program.length,
            "length_h_min": hm(program.length),
            "steps": program.rows(),
            "case_text": program.case_text(),
        },
        "margins": [_margin_dict(m) for m in result.margins],
        "comparison": {
            "limit_rate_as_one_ramp": evaluation_summary(plan, result.limit_run),
            "fastest_one_ramp_keeping_limits": ref,
            "slowest_ramp": evaluation_summary(plan, result.slowest),
            "saved_s": finite_or_none(saved),
            "saved_h_min": hm(saved),
        },
        "search": {
            "method": "scipy.optimize.minimize, COBYQA, constraints as nonlinear inequalities",
            "runs": len(result.evaluations),
            "message": result.message,
            "best_design": None
            if d is None
            else {
                "fast_rate_C_per_h": d.fast_rate * _HOUR,
                "hold_at_C": d.hold_at,
                "hold_time_s": d.hold_time,
                "slow_rate_C_per_h": d.slow_rate * _HOUR,
            },
        },
        "check_run": {
            "run": check.index,
            "steps": check.steps,
            "through_s": finite_or_none(check.through_s),
            "last_point_m": list(check.last_point),
            "warnings": list(check.warnings),
        },
        "caution": CAUTION,
    }


def _absolute(node, base: Path) -> None:
    """Make relative file paths of a case table absolute (in place)."""
    if isinstance(node, dict):
        for k, v in node.items():
            if k in _PATH_KEYS and isinstance(v, str) and not Path(v).is_absolute():
                node[k] = str((base / v).resolve())
            else:
                _absolute(v, base)
    elif isinstance(node, list):
        for v in node:
            _absolute(v, base)


def designed_case_text(result: PlanResult) -> str:
    """The base case with the designed program, as a case file to run on its own."""
    from ..api import toml_text

    program = result.program
    table = case_table(result.plan, program, end_time=program.length)
    table["furnace"]["temperature"] = program.case_value(units=True)
    _absolute(table, result.plan.base_dir)
    head = (
        f"{result.plan.title or 'Designed program'}: the base case with the furnace program "
        "designed by femheat plan. The target is the soak minimum, held for the soak time; the "
        f"run ends with the program. {CAUTION}"
    )
    lines = textwrap.wrap(head, 92, initial_indent="# ", subsequent_indent="# ")
    return "\n".join(lines) + "\n" + toml_text(table)


def plan_figure(result: PlanResult):
    """Setpoint and part temperatures; difference; heating rate above the limit's temperature."""
    from matplotlib.figure import Figure

    plan = result.plan
    h = result.check.history
    t = h["time_s"] / _HOUR
    fig = Figure(figsize=(9.5, 9.0), dpi=110)
    fig.subplots_adjust(left=0.09, right=0.97, bottom=0.06, top=0.94, hspace=0.12)
    ax1, ax2, ax3 = fig.subplots(3, 1, sharex=True)
    ref = result.reference
    if ref.reached:
        ref_end = ref.through_s + plan.soak.hold
        corners = np.array(ref.program.with_soak(max(ref_end - ref.program.length, 60.0)).corners())
        ax1.plot(
            corners[:, 0] / _HOUR,
            corners[:, 1],
            color="0.6",
            ls="--",
            lw=1.0,
            label=f"one ramp keeping the limits ({hm(ref_end)} h:min)",
        )
    ax1.plot(t, h["setpoint_C"], color="#b2182b", lw=1.8, label="furnace setpoint (designed)")
    ax1.plot(t, h["max_C"], color="#ef8a62", lw=1.3, label="part, hottest point")
    ax1.plot(t, h["min_C"], color="#2166ac", lw=1.3, label="part, coldest point")
    soak = plan.soak
    through = result.check.through_s / _HOUR
    ax1.axhspan(soak.minimum, soak.maximum, color="#fee08b", alpha=0.5, lw=0, label="soak band")
    if math.isfinite(through):
        ax1.axvline(through, color="0.4", lw=0.8, ls=":")
        ax1.annotate(
            f"whole part at {soak.minimum:g} C: {hm(result.check.through_s)}",
            xy=(through, 0.03),
            xycoords=("data", "axes fraction"),
            xytext=(4, 0),
            textcoords="offset points",
            fontsize=8,
        )
    if plan.above_c is not None:
        ax1.axhline(plan.above_c, color="0.3", lw=0.8, ls="-.")
        ax1.annotate(
            f"rate limit applies above {plan.above_c:g} C",
            xy=(0.01, plan.above_c),
            xycoords=("axes fraction", "data"),
            xytext=(0, 3),
            textcoords="offset points",
            fontsize=8,
        )
    ax1.set_ylabel("temperature (C)")
    ax1.legend(loc="center right", fontsize=8)
    ax1.grid(True, color="0.9", lw=0.6)
    ax1.set_title(
        f"{plan.title or 'designed furnace program'}: {hm(result.program.length)} h:min",
        fontsize=10,
        loc="left",
    )

    m = {x.unit: x for x in result.margins}
    ax2.plot(t, h["difference_C"], color="#d95f02", lw=1.5, label="hottest - coldest point")
    ax2.axhline(plan.max_difference, color="#e41a1c", ls="--", lw=1.2, label="limit")
    dm = m["K"]
    ax2.plot([dm.time_s / _HOUR], [dm.worst], "o", mfc="white", mec="#d95f02", mew=2)
    ax2.annotate(
        f"largest {dm.worst:.1f} K (margin {dm.margin:.1f} K)",
        xy=(dm.time_s / _HOUR, dm.worst),
        xytext=(8, 4),
        textcoords="offset points",
        fontsize=8,
    )
    ax2.set_ylim(0, 1.25 * max(plan.max_difference, float(np.nanmax(h["difference_C"]))))
    ax2.set_ylabel("difference (K)")
    ax2.legend(loc="upper right", fontsize=8)
    ax2.grid(True, color="0.9", lw=0.6)

    limit = plan.limit_rate * _HOUR
    above = "any point" if plan.above_c is None else f"points above {plan.above_c:g} C"
    ax3.plot(t, h["fastest_rate_C_per_h"], color="0.65", lw=0.9, label="fastest point, any")
    ax3.plot(t, h["rate_above_C_per_h"], color="#7b3294", lw=1.5, label=f"fastest of {above}")
    ax3.axhline(limit, color="#e41a1c", ls="--", lw=1.2, label="limit")
    rm = m["C/h"]
    if math.isfinite(rm.worst):
        ax3.plot([rm.time_s / _HOUR], [rm.worst], "o", mfc="white", mec="#7b3294", mew=2)
        ax3.annotate(
            f"largest {rm.worst:.1f} C/h (margin {rm.margin:.1f})",
            xy=(rm.time_s / _HOUR, rm.worst),
            xytext=(8, 4),
            textcoords="offset points",
            fontsize=8,
        )
    ax3.set_ylim(0, 2.5 * limit)  # the cold charge's surface rates run off the top
    ax3.set_ylabel("heating rate (C/h)")
    ax3.set_xlabel("time (h)")
    ax3.legend(loc="upper right", fontsize=8)
    ax3.grid(True, color="0.9", lw=0.6)
    return fig
