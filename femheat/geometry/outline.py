"""Outlines read from a text file: the shape ``outline`` (planar or axisymmetric).

A case uses it with::

    [part]
    model = "planar"            # or "axisymmetric": x is the radius, y the axis
    shape = "outline"
    file = "bracket.outline"    # relative to the case file

The outline file
----------------
Plain text, one statement per line; ``#`` starts a comment; blank lines are ignored; words
are separated by spaces. Example (a 60 x 40 mm plate with rounded corners and a 16 mm
hole, its bottom edge named so it can be set insulated)::

    units mm                  # m (default), cm, mm or in; before the first loop
    outline                   # the outer loop; "outline NAME" gives its default face name
      0   0   face bottom     # a point: x y, then optional words
      60  0   face side round 5
      60  40  round 5
      0   40
    close                     # ends the loop: the last point joins the first
    hole bore                 # a hole; its edges are face "bore" unless named otherwise
      22  20  through 30 28   # the edge to the next point is an arc through (30, 28)
      38  20  through 30 12
    close

Each point line is ``x y`` followed by any of:

``face NAME``
    The edge leaving this point (towards the next point) and every following edge of the
    loop belong to face NAME, until another ``face`` word. Edges before the first ``face`` of
    a loop take the loop's default name: the name after ``outline`` or ``hole``, else
    ``outline`` for the outer loop and ``hole_1``, ``hole_2``, ... for the holes. Names use
    letters, digits, ``_`` and ``-`` and start with a letter.
``round R``
    Round the corner at this point with radius R (tangent to both edges, which must be
    straight). The rounding belongs to the face of the edge leaving the point.
``through X Y``
    The edge leaving this point is a circular arc through the point (X, Y).
``centre X Y`` (or ``center``)
    The edge leaving this point is the shorter circular arc about the centre (X, Y); both
    ends must be at the same distance from it. For a half circle use ``through``.

Exactly one ``outline`` loop; any number of ``hole`` loops, each inside the outline, not
touching it or each other. Edges of a loop must not cross.

In the axisymmetric model x is the radius: no point or arc may reach x < 0, and the edges
on the axis x = 0 must be named ``axis`` (write ``face axis`` on the point where the axis edge
starts). No heat crosses the axis, so it takes no condition. The face names are the same in
both models; in the planar model ``axis`` is a name like any other.

Errors name the file and the line, e.g.
``part.file: bracket.outline line 7: unknown word 'radius'; fix: after x y use face NAME,
round R, through X Y or centre X Y``.

DXF drawings
------------
A file whose name ends in ``.dxf`` is read as a drawing instead (`femheat.geometry.dxf`): its
closed polylines (bulges are arcs), circles and closed chains of lines and arcs in the model
space give the outline (the loop enclosing the others) and the holes; the layer of an edge
names its face (layer ``0``: the default names above); units from the drawing's ``$INSUNITS``,
or ``units = "mm"`` (m, cm, mm, in or ft) in ``[part]``, which overrides it. In the
axisymmetric model draw a line on layer ``axis`` along x = 0 over the edges on the axis.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import CaseError
from .base import Built, Param, ShapeDef, ShapeParamError, register
from .loops import (
    LoopError,
    Segment,
    Vertex,
    build_surface,
    check_loops,
    face_names_of,
    loop_area,
    loop_length,
    sample,
    segments,
)

__all__ = ["Outline", "parse_outline", "read_outline", "outline_loops"]

WHERE = "part.file"
UNITS = {"m": 1.0, "cm": 0.01, "mm": 0.001, "in": 0.0254}
_NAME = re.compile(r"[A-Za-z][A-Za-z0-9_-]*$")
_WORDS = "face NAME, round R, through X Y or centre X Y"


@dataclass(frozen=True)
class Outline:
    """A parsed outline file: the outer loop first, then the holes; lengths in m.

    Args:
        loops: vertices of each loop.
        loop_names: how messages call each loop ("outline (line 3)", "hole bore (line 9)").
        source: the file, for messages.
    """

    loops: tuple[tuple[Vertex, ...], ...]
    loop_names: tuple[str, ...]
    source: str


def _error(source: str, line: int | None, problem: str, fix: str) -> CaseError:
    at = f"{source} line {line}: " if line else f"{source}: "
    return CaseError(WHERE, at + problem, fix)


def _number(word: str, source: str, line: int, what: str) -> float:
    try:
        v = float(word)
    except ValueError:
        raise _error(source, line, f"{what} {word!r} is not a number", "write it as 12.5") from None
    if not math.isfinite(v):
        raise _error(source, line, f"{what} {word!r} is not a finite number", "give a number")
    return v


class _Loop:
    def __init__(self, kind: str, name: str, line: int):
        self.kind, self.name, self.line = kind, name, line
        self.points: list[dict] = []
        self.closed = False


def parse_outline(text: str, source: str = "outline") -> Outline:
    """Parse the text of an outline file (lengths converted to m).

    Raises:
        CaseError: at ``part.file`` with the line number: unknown words, bad numbers or names,
            a loop not closed, no outline, a centre not equidistant from the arc's ends.
    """
    scale = None
    loops: list[_Loop] = []
    current: _Loop | None = None
    for n, raw in enumerate(text.splitlines(), start=1):
        words = raw.split("#", 1)[0].split()
        if not words:
            continue
        head = words[0].lower()
        if head == "units":
            if len(words) != 2 or words[1].lower() not in UNITS:
                raise _error(
                    source, n, f"'{' '.join(words)}' is not a units line", "write units mm"
                )
            if scale is not None or loops:
                raise _error(
                    source, n, "units must come once, before the first loop", "move it to the top"
                )
            scale = UNITS[words[1].lower()]
            continue
        if head in ("outline", "hole"):
            if current is not None and not current.closed:
                raise _error(
                    source,
                    current.line,
                    f"the {current.kind} starting here is not closed before line {n}",
                    "end every loop with a line 'close'",
                )
            if len(words) > 2 or (len(words) == 2 and not _NAME.match(words[1])):
                raise _error(
                    source,
                    n,
                    f"'{' '.join(words)}': expected '{head}' or '{head} NAME'",
                    "names use letters, digits, _ and - and start with a letter",
                )
            if head == "outline" and any(lp.kind == "outline" for lp in loops):
                raise _error(
                    source,
                    n,
                    "a second 'outline'; a file holds one part",
                    "make further outlines holes ('hole') or put them in their own case",
                )
            index = sum(lp.kind == "hole" for lp in loops) + 1
            default = words[1] if len(words) == 2 else ("outline" if head == "outline" else "")
            current = _Loop(head, default or f"hole_{index}", n)
            loops.append(current)
            continue
        if head == "close":
            if current is None or current.closed:
                raise _error(source, n, "'close' without an open loop", "remove it")
            if len(words) > 1:
                raise _error(source, n, "'close' takes nothing after it", "write close")
            current.closed = True
            continue
        # a point
        if current is None or current.closed:
            raise _error(
                source,
                n,
                f"'{' '.join(words)}' is outside a loop",
                "points go between 'outline' (or 'hole') and 'close'",
            )
        if len(words) < 2:
            raise _error(source, n, f"unknown word {words[0]!r}", "a point line starts with x y")
        try:
            float(words[0])
        except ValueError:
            raise _error(
                source,
                n,
                f"unknown word {words[0]!r}",
                "lines start with units, outline, hole, close, or the x y of a point",
            ) from None
        point = {
            "line": n,
            "x": _number(words[0], source, n, "x"),
            "y": _number(words[1], source, n, "y"),
        }
        i = 2
        while i < len(words):
            key = words[i].lower()
            key = "centre" if key == "center" else key
            size = {"face": 1, "round": 1, "through": 2, "centre": 2}.get(key)
            if size is None:
                raise _error(source, n, f"unknown word {words[i]!r}", f"after x y use {_WORDS}")
            arc_twice = key in ("through", "centre") and ("through" in point or "centre" in point)
            if key in point or arc_twice:
                raise _error(source, n, f"'{words[i]}' given twice for one point", "give it once")
            args = words[i + 1 : i + 1 + size]
            if len(args) < size:
                raise _error(
                    source,
                    n,
                    f"'{words[i]}' needs {size} value{'s' if size > 1 else ''}",
                    f"after x y use {_WORDS}",
                )
            if key == "face":
                if not _NAME.match(args[0]):
                    raise _error(
                        source,
                        n,
                        f"face name {args[0]!r} is not allowed",
                        "names use letters, digits, _ and - and start with a letter",
                    )
                point["face"] = args[0]
            elif key == "round":
                r = _number(args[0], source, n, "round radius")
                if r <= 0:
                    raise _error(source, n, f"round radius {args[0]} must be > 0", "give R > 0")
                point["round"] = r
            else:
                point[key] = (
                    _number(args[0], source, n, f"{key} x"),
                    _number(args[1], source, n, f"{key} y"),
                )
            i += 1 + size
        current.points.append(point)
    if current is not None and not current.closed:
        raise _error(
            source,
            current.line,
            f"the {current.kind} starting here is not closed at the end of the file",
            "end every loop with a line 'close'",
        )
    if not any(lp.kind == "outline" for lp in loops):
        raise _error(source, None, "no 'outline' loop in the file", "start the part with 'outline'")
    loops.sort(key=lambda lp: lp.kind != "outline")  # the outline first, holes in file order
    s = scale if scale is not None else 1.0
    out, names = [], []
    for lp in loops:
        if len(lp.points) < 2:
            raise _error(
                source,
                lp.line,
                f"the {lp.kind} has {len(lp.points)} point(s)",
                "a loop needs at least 3 points (or 2 joined by arcs)",
            )
        out.append(_vertices(lp, s, source))
        label = lp.kind if lp.kind == "outline" else f"hole {lp.name}"
        names.append(f"{label} (line {lp.line})")
    return Outline(tuple(out), tuple(names), source)


def _vertices(lp: _Loop, s: float, source: str) -> tuple[Vertex, ...]:
    name = lp.name
    pts = lp.points
    out = []
    for k, p in enumerate(pts):
        name = p.get("face", name)
        through = tuple(s * v for v in p["through"]) if "through" in p else None
        if "centre" in p:
            through = _arc_middle(p, pts[(k + 1) % len(pts)], s, source)
        out.append(
            Vertex(
                s * p["x"],
                s * p["y"],
                name,
                s * p.get("round", 0.0),
                through,
                label=f"line {p['line']}",
            )
        )
    return tuple(out)


def _arc_middle(p: dict, q: dict, s: float, source: str) -> tuple[float, float]:
    """The middle of the shorter arc from p to q about p's centre, in m."""
    c = np.array(p["centre"]) * s
    a, b = np.array([p["x"], p["y"]]) * s, np.array([q["x"], q["y"]]) * s
    ra, rb = np.linalg.norm(a - c), np.linalg.norm(b - c)
    if min(ra, rb) <= 0 or abs(ra - rb) > 1e-6 * max(ra, rb):
        raise _error(
            source,
            p["line"],
            f"the arc ends are {ra / s:.6g} and {rb / s:.6g} from the centre, not the same",
            "correct the centre or the points (or use 'through' with a point on the arc)",
        )
    m = (a + b) / 2.0 - c
    if np.linalg.norm(m) <= 1e-9 * ra:
        raise _error(
            source,
            p["line"],
            "the arc ends are opposite each other about the centre, so the arc could go either way",
            "use 'through X Y' with a point on the half circle",
        )
    return tuple(c + ra * m / np.linalg.norm(m))


def _from_loop_error(exc: LoopError, outline: Outline) -> CaseError:
    at = f"{outline.source} {exc.label}: " if exc.label else f"{outline.source}: "
    return CaseError(WHERE, at + exc.problem, exc.fix)


def outline_loops(outline: Outline, model: str = "planar") -> list[list[Segment]]:
    """The checked boundary loops of an outline.

    Raises:
        CaseError: crossing edges, holes outside the outline, roundings that do not fit; in
            the axisymmetric model also points or arcs left of the axis, and edges on x = 0
            not named ``axis`` (or ``axis`` edges off it).
    """
    try:
        loops = [segments(v) for v in outline.loops]
        check_loops(loops, list(outline.loop_names))
    except LoopError as exc:
        raise _from_loop_error(exc, outline) from None
    if model == "axisymmetric":
        _check_axis(loops, outline)
    return loops


def _check_axis(loops: list[list[Segment]], outline: Outline) -> None:
    pts = np.concatenate([sample(s) for lp in loops for s in lp])
    tol = 1e-9 * max(float(np.ptp(pts[:, 0])), float(np.ptp(pts[:, 1])))
    for lp in loops:
        for seg in lp:
            where = f"{outline.source} {seg.label}"
            pts = np.vstack([sample(seg, math.radians(0.5)), [seg.end]])
            if pts[:, 0].min() < -tol:
                raise CaseError(
                    WHERE,
                    f"{where}: the edge reaches x = {pts[:, 0].min():.6g} m, left of the axis "
                    "(x = 0) of the axisymmetric model",
                    "x is the radius: keep every point and arc at x >= 0",
                )
            on_axis = not seg.is_arc and abs(seg.start[0]) <= tol and abs(seg.end[0]) <= tol
            if on_axis and seg.name != "axis":
                raise CaseError(
                    WHERE,
                    f"{where}: the edge from ({seg.start[0]:.6g}, {seg.start[1]:.6g}) to "
                    f"({seg.end[0]:.6g}, {seg.end[1]:.6g}) m lies on the axis x = 0 but is "
                    f"named {seg.name!r}",
                    "write 'face axis' on the point where it starts (and name the edge after "
                    "it, if any)",
                )
            if seg.name == "axis" and not on_axis:
                raise CaseError(
                    WHERE,
                    f"{where}: the edge from ({seg.start[0]:.6g}, {seg.start[1]:.6g}) m is "
                    "named 'axis' but does not lie on x = 0",
                    "give the next face name on the point after the axis edge",
                )


_CACHE: dict[tuple, Outline] = {}


def read_outline(path) -> Outline:
    """Read and parse an outline file (kept while the file is unchanged).

    Raises:
        CaseError: at ``part.file``: missing, unreadable or not UTF-8, or a bad outline.
    """
    p = Path(path)
    try:
        st = p.stat()
        key = (str(p.resolve()), st.st_mtime_ns, st.st_size)
        if key in _CACHE:
            return _CACHE[key]
        raw = p.read_bytes()
    except FileNotFoundError:
        raise CaseError(
            WHERE,
            f"no such file {str(p)!r}",
            "give the outline file's path, relative to the case file",
        ) from None
    except IsADirectoryError:
        raise CaseError(WHERE, f"{str(p)!r} is a folder", "give the outline file's path") from None
    except OSError as exc:
        raise CaseError(
            WHERE,
            f"cannot read {str(p)!r} ({exc.strerror or exc})",
            "check that the file exists and that you may read it",
        ) from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise CaseError(
            WHERE,
            f"{p.name} is not UTF-8 text (byte {raw[exc.start]:#04x} at offset {exc.start})",
            "save the outline as plain UTF-8 text (a DXF drawing is read when its name ends in "
            "'.dxf')",
        ) from None
    outline = parse_outline(text, p.name)
    _CACHE[key] = outline
    return outline


def _loops_of(params: dict, model: str) -> list[list[Segment]]:
    from .dxf import check_axis, is_dxf, read_dxf

    if not is_dxf(params["file"]):
        return outline_loops(read_outline(params["file"]), model)
    outline = read_dxf(params["file"], params.get("units"))
    if model == "axisymmetric":
        check_axis(outline)  # with a fix in the drawing's terms
    return outline_loops(outline, model)


def _check(params: dict, model: str) -> None:
    from .dxf import UNITS, is_dxf

    units = params.get("units")
    if units is None:
        return
    if not is_dxf(params["file"]):
        raise ShapeParamError(
            "units",
            f"units = {units!r} is read only for DXF drawings, and {params['file']!r} is not one",
            "write 'units mm' (m, cm, mm or in) at the top of the outline file instead",
        )
    if units.strip().lower() not in UNITS:
        raise ShapeParamError("units", f"unknown unit {units!r}", f"give one of {', '.join(UNITS)}")


def _build(gmsh, params: dict, model: str) -> Built:
    return build_surface(gmsh, _loops_of(params, model))


def _face_names(params: dict) -> tuple[str, ...]:
    return face_names_of(_loops_of(params, "planar"))


def _thickness(params: dict) -> float:
    """2 x area / perimeter: the thickness of a long strip; smaller for compact shapes."""
    loops = _loops_of(params, "planar")
    area = abs(loop_area(loops[0])) - sum(abs(loop_area(lp)) for lp in loops[1:])
    return 2.0 * area / sum(loop_length(lp) for lp in loops)


register(
    ShapeDef(
        name="outline",
        models=("planar", "axisymmetric"),
        params=(
            Param("file", "path", "outline file or DXF drawing (.dxf), relative to the case file"),
            Param("units", "text", "DXF only: the drawing's unit, m, cm, mm, in or ft", None),
        ),
        faces=("outline", "hole_1", "axis"),
        doc="A closed outline with optional holes, arcs and rounded corners, read from a text "
        "file (the format is described in femheat.geometry.outline and "
        "geometries/outline_format.md) or from a DXF drawing (file ending in .dxf: closed "
        "polylines, circles, closed chains of lines and arcs; the loop enclosing the others is "
        "the outline; an edge's layer names its face; units from $INSUNITS or the key units; "
        "see femheat.geometry.dxf). "
        "Faces: the names given in the file; unnamed edges (layer 0) are 'outline' (outer loop) "
        "or 'hole_1', 'hole_2', ... In the axisymmetric model the edges on x = 0 must be named "
        "'axis' (in a drawing: a line on layer 'axis' over them).",
        build=_build,
        check=_check,
        face_names=_face_names,
        thickness=_thickness,
        axis_faces=("axis",),
    )
)
