"""``femheat estimate``: hand estimates for a simple body, no mesh; and the estimate lines of a run.

Usage::

    femheat estimate --body slab --size 0.04 --density 7850 --conductivity 36 \\
        --specific-heat 600 --htc 40 --emissivity 0.8 --furnace 900 --initial 20 --target 880
    femheat estimate case.toml --body cylinder --size 0.2

Bodies and their ``--size`` (whole dimensions in m, every face exposed): ``slab`` thickness;
``cylinder`` (long) diameter; ``sphere`` diameter; ``bar`` (long, rectangular) width and
thickness; ``box`` three edges; ``short-cylinder`` diameter and length.

Material, furnace and temperatures come from the options, or from the ``[material]``,
``[furnace]``, ``[initial]`` and ``[target]`` sections of a case file given first; options
override the file. ``--material NAME`` takes a material of the library. The case's ``[part]``
and ``[faces]`` are not used. A property table is taken at the mean of start and target, a
furnace schedule at its final value; both are stated.

This module, like :mod:`femheat.cli`, prints; the numbers come from :mod:`femheat.estimates`.
"""

from __future__ import annotations

import argparse
import math

from .errors import CaseError
from .estimates import (
    Body,
    BodyEstimates,
    Conditions,
    Estimate,
    RunEstimates,
    estimate_body,
)
from .units import hours_minutes

__all__ = ["add_parser", "conditions_from", "body_lines", "run_lines", "run"]

_BODIES = {
    "slab": "slab",
    "cylinder": "cylinder",
    "sphere": "sphere",
    "bar": "bar",
    "box": "box",
    "short-cylinder": "short cylinder",
}

# option -> (Conditions field, what it is, unit, check)
_OPTIONS = {
    "density": ("density", "density", "kg/m3", "positive"),
    "conductivity": ("conductivity", "thermal conductivity", "W/(m K)", "positive"),
    "specific_heat": ("specific_heat", "specific heat", "J/(kg K)", "positive"),
    "htc": ("htc", "convective heat transfer coefficient", "W/(m2 K)", "non-negative"),
    "emissivity": ("emissivity", "surface emissivity", "0 to 1", "fraction"),
    "furnace": ("gas_c", "furnace gas temperature", "C", "temperature"),
    "wall": ("wall_c", "furnace wall temperature seen by radiation", "C", "temperature"),
    "initial": ("initial_c", "start temperature", "C", "temperature"),
    "target": ("target_c", "temperature the centre must reach", "C", "temperature"),
}


def add_parser(sub) -> argparse.ArgumentParser:
    """Add the ``estimate`` command to the subparsers of the main parser."""
    e = sub.add_parser(
        "estimate",
        help="hand estimates (lumped, one-term, series, rule of thumb) for a simple body",
        description="Hand estimates of the time for the centre of a simple body to reach a "
        "target: Biot number, lumped capacitance, one-term and exact series (products for "
        "bar, box and short cylinder), and the rule of thumb for comparison. No mesh.",
    )
    e.add_argument(
        "case", nargs="?", help="case file whose [material], [furnace], [initial], [target] to use"
    )
    e.add_argument("--body", required=True, choices=list(_BODIES), help="the body")
    e.add_argument(
        "--size",
        required=True,
        type=float,
        nargs="+",
        metavar="M",
        help="whole dimensions in m: slab thickness; cylinder or sphere diameter; bar width "
        "and thickness; box three edges; short-cylinder diameter and length",
    )
    e.add_argument(
        "--material",
        metavar="NAME",
        help="a material of the library (femheat materials lists them); its k and c are taken "
        "at the mean of start and target",
    )
    for opt, (_, what, unit, _) in _OPTIONS.items():
        e.add_argument(f"--{opt.replace('_', '-')}", type=float, help=f"{what} ({unit})")
    return e


def _check_option(name: str, value: float) -> float:
    _, what, unit, kind = _OPTIONS[name]
    flag = f"--{name.replace('_', '-')}"
    bad = None
    if not math.isfinite(value):
        bad = "a finite number"
    elif kind == "positive" and value <= 0.0:
        bad = "> 0"
    elif kind == "non-negative" and value < 0.0:
        bad = ">= 0"
    elif kind == "fraction" and not 0.0 <= value <= 1.0:
        bad = "between 0 and 1"
    elif kind == "temperature" and value <= -273.15:
        bad = "above absolute zero (-273.15 C)"
    if bad:
        raise CaseError(flag, f"must be {bad}, got {value:g}", f"give the {what} in {unit}")
    return value


def _from_case(case, thickness: float) -> tuple[dict, list[str], list[str]]:
    """Values from a case file's material, furnace, initial and target sections.

    Args:
        case: the loaded case. thickness: of the body, m, for a furnace program whose rate
            limit depends on the thickness (only the final setpoint is used here).
    """
    from .problem import material_from_case
    from .program import to_schedule

    material = material_from_case(case.material, base_dir=case.base_dir)
    start = float(case.initial.temperature)
    values: dict = {"density": float(material.density), "initial": start}
    simplified, notes = [], []
    if case.target is not None:
        values["target"] = float(case.target.temperature)
    gas = to_schedule(case.furnace.temperature, "furnace.temperature", thickness=thickness)
    wall = (
        to_schedule(case.furnace.wall_temperature, "furnace.wall_temperature", thickness=thickness)
        or gas
    )
    values.update(
        furnace=gas.final,
        wall=wall.final,
        htc=float(case.furnace.htc),
        emissivity=float(case.furnace.emissivity),
    )
    if len(set(gas.values)) > 1 or len(set(wall.values)) > 1:
        simplified.append("furnace ramp ignored")
        notes.append(
            f"the furnace schedule of the case is taken at its final value ({gas.final:g} C) "
            "from the start; the hand methods ignore the ramp"
        )
    values["_material"] = material
    return values, simplified, notes


def _library_material(name: str):
    from .library import find, suggest

    entry = find(name)
    if entry is None:
        close = suggest(name)
        hint = f"did you mean {close!r}? " if close else ""
        raise CaseError(
            "--material",
            f"no material {name!r} in the library",
            f"{hint}femheat materials lists them",
        )
    return entry.material()


def conditions_from(args: argparse.Namespace, case=None) -> tuple[Body, Conditions]:
    """The body and the constant conditions from the command-line options (and a case).

    Raises:
        CaseError: a missing or bad option, or a target the furnace cannot reach.
    """
    try:
        body = Body(_BODIES[args.body], tuple(args.size))
    except ValueError as exc:
        raise CaseError("--size", str(exc), "give the whole dimensions in m") from None
    values, simplified, notes = ({}, [], []) if case is None else _from_case(case, body.thickness)
    material = values.pop("_material", None)
    if getattr(args, "material", None):
        material = _library_material(args.material)
        values["density"] = float(material.density)
    for name in _OPTIONS:
        given = getattr(args, name, None)
        if given is not None:
            values[name] = _check_option(name, given)
    values.setdefault("emissivity", 0.0)
    if "furnace" in values:
        values.setdefault("wall", values["furnace"])
    for name in ("initial", "target"):
        if name not in values:
            raise CaseError(
                f"--{name}",
                "missing",
                f"give --{name} in C, or a case file with [{name}] temperature",
            )
    mean = 0.5 * (values["initial"] + values["target"])
    if material is not None:
        table_k, table_c = material.conductivity, material.specific_heat
        if "conductivity" not in values:
            values["conductivity"] = float(table_k(mean))
        if "specific_heat" not in values:
            values["specific_heat"] = float(table_c(mean))
        if not (table_k.is_constant and table_c.is_constant):
            simplified.append(f"k, c at {mean:.4g} C")
            label = f" ({material.name})" if material.name else ""
            notes.append(
                f"temperature-dependent k and c{label} taken at {mean:.4g} C, the mean of start "
                "and target"
            )
    for name in ("density", "conductivity", "specific_heat", "htc", "furnace"):
        if name not in values:
            _, what, unit, _ = _OPTIONS[name]
            flag = f"--{name.replace('_', '-')}"
            raise CaseError(flag, "missing", f"give {flag} ({what}, {unit}) or a case file")
    if values["target"] == values["initial"]:
        raise CaseError(
            "--target",
            f"equals the start temperature ({values['initial']:g} C)",
            "give a target above the start to heat, below it to cool",
        )
    if values["htc"] == 0.0 and values["emissivity"] == 0.0:
        raise CaseError("--htc", "h and emissivity are both 0", "give --htc or --emissivity")
    _check_reachable(values)
    cond = Conditions(
        density=values["density"],
        conductivity=values["conductivity"],
        specific_heat=values["specific_heat"],
        htc=values["htc"],
        emissivity=values["emissivity"],
        gas_c=values["furnace"],
        wall_c=values["wall"],
        initial_c=values["initial"],
        target_c=values["target"],
        simplified=tuple(simplified),
        notes=tuple(notes),
    )
    return body, cond


def _check_reachable(values: dict) -> None:
    sources = []
    if values["htc"] > 0.0:
        sources.append(values["furnace"])
    if values["emissivity"] > 0.0:
        sources.append(values["wall"])
    heating = values["target"] > values["initial"]
    limit = max(sources) if heating else min(sources)
    if (heating and values["target"] >= limit) or (not heating and values["target"] <= limit):
        raise CaseError(
            "--target",
            f"{values['target']:g} C can never be reached: the furnace drives the part only "
            f"towards {limit:g} C",
            "set a target between the start and the furnace temperature",
        )


# --------------------------------------------------------------------------------------------
# text
# --------------------------------------------------------------------------------------------
def _h_min(seconds: float | None) -> str:
    if seconds is None or not math.isfinite(seconds):
        return "--"
    return f"{hours_minutes(seconds)} h:min ({seconds:.0f} s)"


def _table(headers: list[str], rows: list[list[str]], indent: str) -> list[str]:
    widths = [max(len(r[i]) for r in [headers] + rows) for i in range(len(headers))]

    def line(cells):
        return indent + "  ".join(c.ljust(w) for c, w in zip(cells, widths, strict=True)).rstrip()

    return [line(headers)] + [line(r) for r in rows]


def _validity(e: Estimate) -> str:
    flag = {True: "valid", False: "NOT valid", None: "no condition"}[e.valid]
    return f"{flag}: {e.condition}"


def _short_verdict(e: Estimate) -> str:
    rel = e.relative_error
    if rel is None:
        return "--"
    if abs(rel) < 0.005:
        return "agrees"
    return "conservative" if rel > 0.0 else "NOT conservative"


def _mm(length_m: float) -> str:
    return f"{1000 * length_m:.3g} mm"


def body_lines(est: BodyEstimates) -> list[str]:
    """Plain text lines of ``femheat estimate`` (no markup)."""
    c, e, body = est.conditions, est.effective, est.body
    lines = [
        f"Hand estimates: {body.describe()}",
        f"  material: k {c.conductivity:.4g} W/(m K), rho {c.density:.5g} kg/m3, "
        f"c {c.specific_heat:.4g} J/(kg K); diffusivity {c.diffusivity:.4g} m2/s",
        f"  furnace: gas {c.gas_c:g} C, walls {c.wall_c:g} C, h {c.htc:g} W/(m2 K), "
        f"emissivity {c.emissivity:g}; start {c.initial_c:g} C, target {c.target_c:g} C "
        "(at the centre)",
    ]
    if c.emissivity > 0.0:
        lines += [
            f"  radiation coefficient h_r = eps sigma (Ts^2 + Tw^2)(Ts + Tw): {e.h_r:.4g} "
            f"W/(m2 K) at Ts = {e.surface_c:.4g} C (mean of start and target); "
            f"{e.h_r_range[0]:.4g} to {e.h_r_range[1]:.4g} with Ts from start to target",
            f"  effective h for the series and one-term (linear theory): h + h_r = "
            f"{c.htc:g} + {e.h_r:.4g} = {e.htc:.4g} W/(m2 K) at {e.surface_c:.4g} C; "
            f"effective ambient {e.ambient_c:.4g} C",
        ]
    lo, hi = e.htc_range
    k = c.conductivity
    va = body.volume_over_area
    radiating = c.emissivity > 0.0
    at = f" at {e.surface_c:.4g} C" if radiating else ""

    def spread(length: float) -> str:
        if not radiating:
            return ""
        return f" ({lo * length / k:.3g} to {hi * length / k:.3g} from start to target)"

    lines.append(
        f"  Biot number h_eff (V/A)/k with V/A = {_mm(va)}: {e.htc * va / k:.3g}{at}{spread(va)}"
    )
    for b, length in body.factors:
        name = "half-thickness" if b == "slab" else "radius"
        lines.append(
            f"  Biot number h_eff L/k, {b} {name} L = {_mm(length)}: "
            f"{e.htc * length / k:.3g}{at}{spread(length)}"
        )
    rows = [[i.label, _h_min(i.time_s), _validity(i)] for i in est.items]
    lines += _table(["estimate", "time to target", "validity"], rows, "  ")
    for note in c.notes:
        lines.append(f"  note: {note}")
    return lines


def run_lines(est: RunEstimates) -> list[str]:
    """Plain text lines of the hand estimates of a finite-element run (no markup)."""
    lines = []
    if not est.available:
        lines.append(f"hand estimates: none ({est.reason})")
    else:
        c, lg = est.conditions, est.lengths
        lines.append(
            f"hand estimates (last point {_mm(lg.depth_m)} below face {lg.nearest_face}; "
            f"V/A {_mm(lg.volume_over_area_m)}; k {c.conductivity:.3g} W/(m K) and "
            f"c {c.specific_heat:.4g} J/(kg K) at {c.mean_c:.4g} C):"
        )
        rows = [
            [
                i.label,
                _h_min(i.time_s),
                "--" if i.relative_error is None else f"{100 * i.relative_error:+.1f} %",
                _short_verdict(i),
                _validity(i),
            ]
            for i in est.items
        ]
        lines += _table(["estimate", "time", "vs FE", "verdict", "validity"], rows, "  ")
        for note in est.notes:
            lines.append(f"  note: {note}")
    sc = est.self_check
    if sc is not None and sc.applies:
        if sc.agrees is None:
            state = "no finite-element time to compare"
        elif sc.agrees:
            state = (
                f"finite elements {100 * sc.relative_difference:+.3f} %, agree within "
                f"{100 * sc.tolerance:g} %"
            )
        else:
            state = (
                f"finite elements {100 * sc.relative_difference:+.3f} %, do NOT agree within "
                f"{100 * sc.tolerance:g} %: refine mesh.size or solver.tolerance"
            )
        lines.append(
            f"self-check, exact series ({sc.description}): {_h_min(sc.exact_time_s)}; {state}"
        )
    return lines


def run(args: argparse.Namespace, console) -> int:
    """Carry out ``femheat estimate``; returns the exit code. CaseError goes to the caller."""
    case = None
    if args.case:
        from .case import load_case

        case = load_case(args.case)
    body, cond = conditions_from(args, case)
    for line in body_lines(estimate_body(body, cond)):
        console.print(line, markup=False)
    return 0
