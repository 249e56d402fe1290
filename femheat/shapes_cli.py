"""``femheat shapes [NAME]``: every built-in shape, its models, parameters and face names.

The listing is built from the shape registry (`femheat.geometry.SHAPES`), so a newly
registered shape shows up without changes here.
"""

from __future__ import annotations

from .errors import CaseError

__all__ = ["add_parser", "run", "shape_lines"]

_KIND = {
    "length": "m",
    "length0": "m, >= 0",
    "angle": "degrees",
    "lengths": "list of m",
    "pairs": "list of [m, m]",
    "count": "whole number",
    "text": "text",
    "path": "file path",
    "any": "table",
}


def add_parser(sub) -> None:
    """Add the ``shapes`` command to an argparse sub-parser collection."""
    s = sub.add_parser("shapes", help="list the built-in shapes, their parameters and faces")
    s.add_argument("name", nargs="?", help="show only this shape")


def _default(value) -> str:
    from .geometry import REQUIRED

    if value is REQUIRED:
        return "required"
    if value is None:
        return "optional"
    if isinstance(value, float | int) and not isinstance(value, bool):
        return f"default {value:g}"
    return f"default {value!r}"


def shape_lines(shape) -> list[str]:
    """The description of one registered shape, as lines of plain text."""
    lines = [f"{shape.name}  (model: {' or '.join(shape.models)})", f"  {shape.doc}"]
    if shape.params:
        lines.append("  parameters ([part] keys):")
        width = max(len(p.name) for p in shape.params)
        for p in shape.params:
            kind = _KIND.get(p.kind, p.kind)
            lines.append(f"    {p.name:<{width}}  {p.doc} [{kind}; {_default(p.default)}]")
    faces = []
    for name in shape.faces:
        faces.append(f"{name} (the axis: no condition)" if name in shape.axis_faces else name)
    if faces:
        lines.append(f"  faces: {', '.join(faces)}")
    return lines


def run(args, console) -> int:
    """Print every shape (or the one named); returns the exit code."""
    from .geometry import SHAPES, ShapeParamError, get_shape

    if args.name:
        try:
            shapes = [get_shape(args.name)]
        except ShapeParamError as exc:
            raise CaseError("shapes", exc.problem, exc.fix) from None
    else:
        shapes = [SHAPES[k] for k in sorted(SHAPES)]
    for i, shape in enumerate(shapes):
        if i:
            console.print("")
        for line in shape_lines(shape):
            console.print(line, markup=False)
    if not args.name:
        console.print("")
        console.print(
            "Use one in a case file: [part] model = ..., shape = ..., and its parameters; "
            "[faces.NAME] sets a condition on a face.",
            markup=False,
        )
    return 0
