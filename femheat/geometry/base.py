"""The shape registry: each built-in shape declares its parameters, faces and gmsh builder.

A shape builder creates OpenCASCADE entities in the current gmsh model and returns a
`Built` record: the dimension of the part and, for each face name, the boundary entity tags.
Parameters are checked here, before any meshing, and problems raise `ShapeParamError` naming
the parameter so the case loader can report ``part.<name>: ...; fix: ...``.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

__all__ = [
    "REQUIRED",
    "Param",
    "Built",
    "ShapeDef",
    "ShapeParamError",
    "SHAPES",
    "register",
    "get_shape",
    "check_params",
    "resolve_paths",
]

REQUIRED = object()


class ShapeParamError(ValueError):
    """A shape parameter is missing, of the wrong kind or inconsistent with the others."""

    def __init__(self, param: str, problem: str, fix: str, index: int | None = None):
        super().__init__(f"{param}: {problem}")
        self.param = param
        self.problem = problem
        self.fix = fix
        self.index = index


@dataclass(frozen=True)
class Param:
    """A shape parameter.

    Args:
        name: key in ``[part]``.
        kind: "length" (m, > 0), "length0" (m, >= 0), "angle" (degrees, > 0, <= 360),
            "lengths" (list of m, each > 0), "pairs" (list of [a, b] pairs of m, > 0),
            "count" (integer >= 1), "text", "path" (file path, relative to the case file).
        doc: one line for `femheat shapes`.
        default: value when not given (REQUIRED: must be given).
    """

    name: str
    kind: str
    doc: str
    default: Any = REQUIRED


@dataclass(frozen=True)
class Built:
    """What a builder made: part dimension and face name -> boundary entity tags."""

    dim: int
    faces: dict[str, list[int]]
    volume_tags: list[int] = field(default_factory=list)


@dataclass(frozen=True)
class ShapeDef:
    """A built-in shape.

    Args:
        name: value of ``[part] shape``.
        models: part models it can be used with.
        params: its parameters.
        faces: face names it creates (documented by `femheat shapes`); may depend on params,
            in which case `face_names` is given.
        doc: one paragraph for `femheat shapes`.
        build: (gmsh, params, model) -> Built; creates entities in the current model.
        check: optional (params, model) -> None raising ShapeParamError on inconsistency.
        face_names: optional (params) -> tuple of names, when they depend on the parameters.
        thickness: optional (params) -> thinnest section (m), for the default mesh size.
        axis_faces: faces lying on the axis in the axisymmetric model (they take no condition).
        load: optional (params, model) -> PartMesh for shapes that come already meshed (a mesh
            file); used instead of `build` and gmsh meshing.
    """

    name: str
    models: tuple[str, ...]
    params: tuple[Param, ...]
    faces: tuple[str, ...]
    doc: str
    build: Callable[..., Built]
    check: Callable[[dict, str], None] | None = None
    face_names: Callable[[dict], tuple[str, ...]] | None = None
    thickness: Callable[[dict], float] | None = None
    axis_faces: tuple[str, ...] = ()
    load: Callable[..., Any] | None = None

    def names_of_faces(self, params: dict) -> tuple[str, ...]:
        return self.face_names(params) if self.face_names else self.faces


SHAPES: dict[str, ShapeDef] = {}


def register(shape: ShapeDef) -> ShapeDef:
    """Add a shape to the registry (names must be unique)."""
    if shape.name in SHAPES:
        raise ValueError(f"shape {shape.name!r} registered twice")
    SHAPES[shape.name] = shape
    return shape


def get_shape(name: str) -> ShapeDef:
    """The registered shape; ShapeParamError on 'shape' listing the known ones."""
    try:
        return SHAPES[name]
    except KeyError:
        import difflib

        close = difflib.get_close_matches(str(name), list(SHAPES), n=1)
        hint = f"did you mean {close[0]!r}? " if close else ""
        raise ShapeParamError(
            "shape",
            f"unknown shape {name!r}",
            f"{hint}known shapes: {', '.join(sorted(SHAPES))} (list them with femheat shapes)",
        ) from None


def _bad(p: Param, problem: str, fix: str) -> ShapeParamError:
    return ShapeParamError(p.name, problem, fix)


def _is_num(v) -> bool:
    return isinstance(v, int | float) and not isinstance(v, bool)


def _length(p: Param, v, index: int | None = None):
    """A length given as text with a unit ("25 mm", "1.5 in") in m; numbers pass through."""
    if not isinstance(v, str):
        return v
    from ..units import UnitError, to_si

    try:
        return to_si(v, "length")
    except UnitError as exc:
        raise ShapeParamError(p.name, exc.problem, exc.fix, index) from None


def _convert(p: Param, v):
    if p.kind in ("length", "length0"):
        v = _length(p, v)
    elif p.kind in ("lengths", "pairs") and isinstance(v, list | tuple):
        if p.kind == "lengths":
            v = [_length(p, x, i) for i, x in enumerate(v)]
        else:
            v = [
                [_length(p, x, i) for x in row] if isinstance(row, list | tuple) else row
                for i, row in enumerate(v)
            ]
    if p.kind in ("length", "length0", "angle"):
        if not _is_num(v):
            raise _bad(p, f"expected a number, got {v!r}", f"give {p.name} ({p.doc})")
        v = float(v)
        if p.kind == "length0" and v < 0:
            raise _bad(p, f"must be >= 0, got {v:g}", f"give {p.name} in m ({p.doc})")
        if p.kind == "length" and v <= 0:
            raise _bad(p, f"must be > 0, got {v:g}", f"give {p.name} in m ({p.doc})")
        if p.kind == "angle" and not 0 < v <= 360:
            raise _bad(p, f"must be in (0, 360] degrees, got {v:g}", f"give {p.name} in degrees")
        return v
    if p.kind == "lengths":
        if not isinstance(v, list | tuple) or not v or not all(_is_num(x) for x in v):
            raise _bad(p, f"expected a list of numbers, got {v!r}", f"give {p.name} ({p.doc})")
        for i, x in enumerate(v):
            if x <= 0:
                raise ShapeParamError(
                    p.name, f"must be > 0, got {x:g}", f"give {p.name} in m ({p.doc})", i
                )
        return tuple(float(x) for x in v)
    if p.kind == "pairs":
        ok = (
            isinstance(v, list | tuple)
            and v
            and all(
                isinstance(r, list | tuple) and len(r) == 2 and all(_is_num(x) for x in r)
                for r in v
            )
        )
        if not ok:
            raise _bad(p, f"expected a list of [a, b] pairs, got {v!r}", f"give {p.name} ({p.doc})")
        if any(x <= 0 for r in v for x in r):
            raise _bad(p, "every value must be > 0", f"give {p.name} in m")
        return tuple((float(a), float(b)) for a, b in v)
    if p.kind == "count":
        if not isinstance(v, int) or isinstance(v, bool) or v < 1:
            raise _bad(p, f"expected a whole number >= 1, got {v!r}", f"give {p.name}")
        return v
    if p.kind in ("text", "path"):
        if not isinstance(v, str) or not v.strip():
            raise _bad(p, f"expected text, got {v!r}", f"give {p.name} ({p.doc})")
        return v
    if p.kind == "any":
        return v
    raise ValueError(f"unknown parameter kind {p.kind!r}")  # a bug in a shape definition


def resolve_paths(shape_name: str, params: dict, base_dir) -> dict:
    """Parameters with every "path" parameter made absolute against `base_dir`.

    A sub-table parameter (kind "any") holding a ``shape`` key, such as the section of an
    extrusion, has its own path parameters resolved the same way.
    """
    from pathlib import Path

    shape = get_shape(shape_name)
    out = dict(params)
    for p in shape.params:
        if p.kind == "path" and isinstance(out.get(p.name), str):
            path = Path(out[p.name]).expanduser()
            out[p.name] = str(path if path.is_absolute() else Path(base_dir) / path)
        sub = out.get(p.name)
        if p.kind == "any" and isinstance(sub, dict) and isinstance(sub.get("shape"), str):
            if sub["shape"] in SHAPES:
                inner = resolve_paths(
                    sub["shape"], {k: v for k, v in sub.items() if k != "shape"}, base_dir
                )
                out[p.name] = {"shape": sub["shape"], **inner}
    return out


def check_params(shape_name: str, model: str, given: dict) -> dict:
    """Check and complete the parameters of a shape.

    Args:
        shape_name: ``[part] shape``. model: ``[part] model``.
        given: the other keys of ``[part]`` (besides model and shape).

    Returns:
        Parameters with defaults filled in and numbers as floats.

    Raises:
        ShapeParamError: unknown shape or key, missing or bad value, inconsistent values.
    """
    shape = get_shape(shape_name)
    if model not in shape.models:
        fits = [s.name for s in SHAPES.values() if model in s.models]
        raise ShapeParamError(
            "shape",
            f"shape {shape_name!r} does not fit model {model!r}; it works with "
            f"{' or '.join(repr(m) for m in shape.models)}",
            f'use model = "{shape.models[0]}", or one of these shapes: {", ".join(fits)}',
        )
    known = {p.name: p for p in shape.params}
    for key in given:
        if key not in known:
            import difflib

            close = difflib.get_close_matches(key, list(known), n=1)
            hint = f"did you mean {close[0]!r}? " if close else ""
            raise ShapeParamError(
                key,
                f"unknown key for shape {shape_name!r}",
                f"{hint}valid keys here: model, shape, {', '.join(known)}",
            )
    out = {}
    for p in shape.params:
        if p.name in given:
            out[p.name] = _convert(p, given[p.name])
        elif p.default is REQUIRED:
            raise ShapeParamError(
                p.name, f"missing for shape {shape_name!r}", f"add {p.name} = ... ({p.doc})"
            )
        else:
            out[p.name] = p.default
    if shape.check is not None:
        shape.check(out, model)
    return out
