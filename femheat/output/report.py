"""``report.html``: one self-contained page to attach to a furnace decision.

The page holds the answer first (time to target in h:min, the last point, the largest
surface-to-core difference and when, the energy balance), then the cautions, the figures
(PNG files embedded as base64, so the page needs no other file), the comparison with hand
estimates when there are any, the mesh and solver figures, the warnings and the case file as
given. Nothing is fetched from the network.
"""

from __future__ import annotations

import base64
import datetime as _dt
import html
import math
import os
from collections.abc import Sequence
from pathlib import Path

from .. import __version__
from ..units import hours_minutes
from .files import atomic_write_text

__all__ = ["Figure", "report_html", "write_report", "estimate_rows"]

CAUTIONS = (
    "Results are estimates, only as good as the inputs: the heat transfer coefficient, the "
    "emissivity and the contact with the hearth or fixtures are rarely known well.",
    "Confirm the times with thermocouples on the part, placed at the last point reported here.",
    "The applicable code, qualified procedures and licensed engineering practice govern the heat "
    "treatment of pressure parts and certified work. This report does not replace them.",
)

_CSS = """
body{font:15px/1.45 system-ui,-apple-system,"Segoe UI",Roboto,sans-serif;color:#1d232a;
margin:0;background:#f3f4f6}
main{max-width:1060px;margin:0 auto;padding:24px 28px 40px;background:#fff}
h1{font-size:22px;margin:0 0 4px}h2{font-size:17px;margin:28px 0 8px;border-bottom:1px solid
#d6d9de;padding-bottom:4px}
.meta{color:#5b6470;font-size:13px}
.answer{margin:16px 0;padding:14px 18px;border-left:6px solid #2a7a4b;background:#eef7f1}
.answer.not{border-color:#b3261e;background:#fbeeed}.answer.none{border-color:#5b6470;
background:#f1f2f4}
.big{font-size:21px;font-weight:600}
table{border-collapse:collapse;margin:6px 0 10px}td,th{padding:4px 12px 4px 0;text-align:left;
vertical-align:top}th{color:#5b6470;font-weight:500}td.n{text-align:right;
font-variant-numeric:tabular-nums}
.caution{background:#fff8e5;border:1px solid #e8d28a;padding:10px 16px;border-radius:4px}
.caution ul{margin:4px 0;padding-left:20px}
figure{margin:14px 0 22px}figure img{max-width:100%;border:1px solid #e2e4e8}
figcaption{color:#5b6470;font-size:13px;margin-top:4px}
pre{background:#f6f7f9;border:1px solid #e2e4e8;padding:10px;overflow-x:auto;font-size:12.5px}
.warn{color:#8a5a00}
"""


class Figure:
    """A picture for the report: a PNG file and its caption."""

    def __init__(self, path: str | os.PathLike, caption: str):
        self.path = Path(path)
        self.caption = caption

    def data_uri(self) -> str:
        data = base64.b64encode(self.path.read_bytes()).decode("ascii")
        return f"data:image/png;base64,{data}"


def _e(x) -> str:
    return html.escape(str(x), quote=True)


def _hm(seconds) -> str:
    return hours_minutes(seconds, "-")


def _mm(point, axes) -> str:
    if point is None:
        return "-"
    vals = ", ".join(f"{1000.0 * float(v):.1f}" for v in point)
    return f"({', '.join(axes)}) = ({vals}) mm"


def _axes(summary: dict) -> tuple[str, ...]:
    model = summary.get("part", {}).get("model")
    if model == "axisymmetric":
        return ("r", "z")
    return ("x", "y", "z") if model == "solid" else ("x", "y")


def estimate_rows(estimates, fe_time_s: float | None) -> list[dict]:
    """Normalise hand estimates for the table: label, time_s, difference from the FE time (%),
    and a note (validity, condition, verdict when given). Accepts (label, time_s) pairs, dicts
    or objects with those fields (such as `femheat.estimates.Estimate`)."""
    rows = []
    for item in estimates or ():
        if isinstance(item, dict):
            get = item.get
        elif isinstance(item, tuple | list):
            pair = {"label": item[0], "time_s": item[1]}
            get = pair.get
        else:

            def get(key, default=None, _item=item):
                return getattr(_item, key, default)

        label = get("label") or get("name") or get("method") or "estimate"
        t = get("time_s")
        t = float(t) if t is not None and math.isfinite(float(t)) else None
        diff = None
        if t is not None and fe_time_s:
            diff = 100.0 * (t - fe_time_s) / fe_time_s
        notes = [str(get(k)) for k in ("condition", "verdict", "note") if get(k)]
        valid = get("valid")
        holds = "-" if valid is None else ("yes" if bool(valid) else "no")
        rows.append(
            {
                "label": str(label),
                "time_s": t,
                "difference_pct": diff,
                "holds": holds,
                "note": "; ".join(notes),
            }
        )
    return rows


def _answer(summary: dict) -> str:
    t = summary.get("target", {})
    axes = _axes(summary)
    status = summary.get("status")
    if status == "reached":
        cls = "answer"
        big = (
            f"The whole part reaches {t['temperature_C']:g} C after "
            f"<b>{_e(t['time_h_min'])} h:min</b> ({t['time_s']:.0f} s)"
        )
        where = f"Last point to get there: {_e(_mm(t.get('last_point'), axes))}"
        if t.get("hold_s"):
            where += f"; the run went on for a hold of {t['hold_s']:.0f} s"
    elif status == "not reached":
        cls = "answer not"
        big = f"Target {t['temperature_C']:g} C <b>not reached</b>"
        where = (
            f"{_e(summary.get('reason', ''))}. Lagging point at the end: "
            f"{_e(_mm(t.get('lagging_point_at_end'), axes))} at "
            f"{t.get('lagging_temperature_at_end_C', float('nan')):.1f} C"
        )
    else:
        cls = "answer none"
        big = "Run finished (no target set)"
        where = _e(summary.get("reason", ""))
    temps = summary.get("temperatures", {})
    spread = (
        f"Largest surface-to-core difference (hottest minus coldest point): "
        f"<b>{temps.get('largest_spread_C', 0):.1f} K</b> at "
        f"{_hm(temps.get('largest_spread_time_s'))} h:min"
    )
    e = summary.get("energy", {})
    energy = (
        f"Energy balance: heat in {e.get('heat_in', 0):.4g}, stored {e.get('stored', 0):.4g} "
        f"({_e(e.get('unit', 'J'))}); difference {100 * e.get('relative_error', 0):.3f} %"
    )
    return (
        f'<div class="{cls}"><div class="big">{big}</div><div>{where}</div>'
        f"<div>{spread}</div><div>{energy}</div></div>"
    )


def _table(rows, head=None) -> str:
    out = ["<table>"]
    if head:
        out.append("<tr>" + "".join(f"<th>{_e(h)}</th>" for h in head) + "</tr>")
    for row in rows:
        cells = []
        for v in row:
            if isinstance(v, float | int) and not isinstance(v, bool):
                cells.append(f'<td class="n">{_e(_num(v))}</td>')
            else:
                cells.append(f"<td>{_e(v)}</td>")
        out.append("<tr>" + "".join(cells) + "</tr>")
    out.append("</table>")
    return "".join(out)


def _num(v) -> str:
    if isinstance(v, int):
        return f"{v:,}"
    if not math.isfinite(v):
        return "-"
    return f"{v:.4g}"


def _probes(summary: dict) -> str:
    probes = summary.get("probes") or []
    if not probes:
        return ""
    axes = _axes(summary)
    rows = [
        (
            p["name"],
            _mm(p.get("point"), axes),
            _hm(p.get("time_to_target_s"))
            if p.get("time_to_target_s") is not None
            else "not reached",
            p["final_C"] if p.get("final_C") is not None else float("nan"),
        )
        for p in probes
    ]
    head = ("probe", "position", "reached target (h:min)", "at the end (C)")
    return "<h2>Probes</h2>" + _table(rows, head)


def _estimates(summary: dict, estimates) -> str:
    t = summary.get("target", {})
    rows = estimate_rows(estimates, t.get("time_s"))
    if not rows:
        return ""
    fe = t.get("time_s")
    body = [("finite elements (this run)", _hm(fe), "", "", "")] if fe else []
    for r in rows:
        diff = f"{r['difference_pct']:+.1f} %" if r["difference_pct"] is not None else "-"
        body.append((r["label"], _hm(r["time_s"]), diff, r["holds"], r["note"]))
    head = ("method", "time to target (h:min)", "against this run", "method holds", "note")
    return "<h2>Hand estimates</h2>" + _table(body, head)


def _mesh_solver(summary: dict, mesh_extra: dict | None) -> str:
    m, s = summary.get("mesh", {}), summary.get("solver", {})
    part = summary.get("part", {})
    rows = [
        (
            "part",
            f"{part.get('model')} {part.get('shape')}, volume {part.get('volume_m3', 0):.4g} "
            f"{part.get('volume_unit', 'm3')}",
        ),  # fmt: skip
        (
            "mesh",
            f"{m.get('nodes', 0):,} nodes, {m.get('cells', 0):,} cells, "
            f"{m.get('element', 'P1')}, size {1000 * (m.get('size_m') or 0):.3g} mm",
        ),  # fmt: skip
        ("smallest element quality (1 = equilateral)", f"{m.get('min_quality', 0):.2f}"),
    ]
    if mesh_extra:
        rows.append(
            (
                f"element angles ({mesh_extra['angle_kind']})",
                f"{mesh_extra['min_angle_deg']:.1f} to {mesh_extra['max_angle_deg']:.1f} degrees",
            )
        )
    faces = m.get("faces") or {}
    if faces:
        rows.append(("faces", ", ".join(f"{k}: {v}" for k, v in faces.items())))
    rows += [
        (
            "time steps",
            f"{s.get('steps', 0)} accepted, {s.get('rejected_steps', 0)} rejected; "
            f"{s.get('newton_iterations', 0)} Newton iterations",
        ),  # fmt: skip
        ("step tolerance", f"{s.get('tolerance', 0):g} of the temperature span"),
        ("simulated time", f"{_hm(s.get('end_time_s'))} h:min ({s.get('end_time_s', 0):.0f} s)"),
        ("wall-clock time", f"{s.get('wall_s', 0):.2f} s"),
    ]
    by_face = summary.get("energy", {}).get("by_face") or {}
    if by_face:
        unit = summary.get("energy", {}).get("unit", "J")
        rows.append(
            (f"heat in by face ({unit})", ", ".join(f"{k}: {v:.4g}" for k, v in by_face.items()))
        )
    return "<h2>Mesh and solver</h2>" + _table(rows)


def report_html(
    summary: dict,
    case_text: str = "",
    figures: Sequence[Figure] = (),
    estimates=None,
    mesh_extra: dict | None = None,
    generated: str | None = None,
) -> str:
    """The report page as one HTML string.

    Args:
        summary: `femheat.output.summary.summary_dict` of the run.
        case_text: the case file as given (TOML), echoed at the end.
        figures: pictures and plots to embed, in order.
        estimates: hand estimates of the time to target ((label, time_s) pairs, dicts or
            objects with ``label`` and ``time_s``), or None.
        mesh_extra: `femheat.output.meshinfo.mesh_figures` of the mesh, or None.
        generated: the date line (default: now, local time).
    """
    title = summary.get("title") or "femheat run"
    when = generated or _dt.datetime.now().strftime("%Y-%m-%d %H:%M")
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{_e(title)} - femheat report</title><style>{_CSS}</style></head><body><main>",
        f"<h1>{_e(title)}</h1>",
        f'<div class="meta">femheat {_e(summary.get("femheat_version", __version__))}; '
        f"report made {_e(when)}</div>",
    ]
    if not summary.get("complete", True):
        parts.append('<p class="warn"><b>This run did not finish; the results are partial.</b></p>')
    parts.append(_answer(summary))
    parts.append(
        '<div class="caution"><b>Cautions</b><ul>'
        + "".join(f"<li>{_e(c)}</li>" for c in CAUTIONS)
        + "</ul></div>"
    )
    parts.append(_probes(summary))
    if figures:
        parts.append("<h2>Figures</h2>")
        for f in figures:
            parts.append(
                f'<figure><img src="{f.data_uri()}" alt="{_e(f.caption)}">'
                f"<figcaption>{_e(f.caption)}</figcaption></figure>"
            )
    parts.append(_estimates(summary, estimates))
    parts.append(_mesh_solver(summary, mesh_extra))
    warnings = summary.get("warnings") or []
    if warnings:
        parts.append(
            "<h2>Warnings</h2><ul>"
            + "".join(f'<li class="warn">{_e(w)}</li>' for w in warnings)
            + "</ul>"
        )
    if case_text:
        parts.append(f"<h2>Case file</h2><pre>{_e(case_text)}</pre>")
    parts.append("</main></body></html>")
    return "\n".join(p for p in parts if p)


def write_report(folder: str | os.PathLike, summary: dict, **kwargs) -> Path:
    """Write ``report.html`` into `folder` atomically (keyword arguments as `report_html`)."""
    return atomic_write_text(Path(folder) / "report.html", report_html(summary, **kwargs))
