"""DXF drawings for the shape ``outline``: closed polylines, circles and closed line/arc chains.

A case uses a drawing in place of an outline file; the suffix ``.dxf`` tells them apart::

    [part]
    model = "planar"            # or "axisymmetric": x is the radius, y the axis
    shape = "outline"
    file = "plate.dxf"          # relative to the case file
    units = "mm"                # only if the drawing does not state its units

The drawing is read with the ezdxf package into the same loops an outline file gives
(`femheat.geometry.outline.Outline`), so the same checks and the same gmsh builder apply.

What is read
------------
The model space only, and there only entities on layers that are on and not frozen (never
those on layer ``Defpoints``), lying flat in the x-y plane:

- closed ``LWPOLYLINE`` and 2D or 3D ``POLYLINE`` (one whose last point repeats its first
  counts as closed). A bulge b between two points is the circular arc it stands for: included
  angle 4 atan(b), counter-clockwise when b > 0, its middle b c / 2 off the middle of the
  chord c, to the right of the direction of travel for b > 0;
- ``CIRCLE``;
- ``LINE`` and ``ARC`` entities, and open polylines, joined end to end into closed loops (ends
  closer than 1e-6 of the drawing's extent are joined).

Every other line, arc or polyline drawn with a continuous line type must belong to a closed
loop, or the drawing is refused with its handle (a part with a gap is not guessed at): turn off
the layer of construction lines. Entities with a dashed line type (centre lines, hidden lines)
never form loops; dashed lines and arcs may still name edges (below). ``ELLIPSE`` and ``SPLINE``
are refused (convert them to polylines with arcs); text, dimensions, hatching, points and block
references (``INSERT``: explode a block that holds the part) are passed over.

Loops and faces
---------------
The loop enclosing all others is the outline; the others are holes, each inside the outline,
not touching it or each other (checked as for outline files). An edge belongs to the face
named after the layer of the entity it comes from: lowercased, every run of characters other
than letters, digits, ``_`` and ``-`` turned into one ``_`` (layer ``Bore D20`` gives face
``bore_d20``), with ``layer_`` put before a name that does not start with a letter. Edges on
layer ``0`` take the default names: ``outline`` on the outline; ``hole_1``, ``hole_2``, ... on
the holes, numbered from left to right (then bottom to top) by the centre of their extent.

To name one edge of a polyline, draw over it a ``LINE`` on a layer of that name: a line lying
along a straight edge and covering it from end to end (it may run further, like a centre
line) names that edge; an ``ARC`` with the same ends and middle as an arc edge names that.
These lines may be dashed. Two such names for one edge are refused.

Axisymmetric model
------------------
x is the radius, y the axis. As in outline files, the straight edges on x = 0 must be named
``axis`` and no point or arc may reach x < 0. Draw a line on layer ``axis`` along x = 0 over
them: one centre line of the axis, longer than the part, names every edge on it. (Or draw
those edges themselves as lines on layer ``axis``.)

Units
-----
``units`` in ``[part]`` (``m``, ``cm``, ``mm``, ``in`` or ``ft``) when given: it also overrides
a header that is wrong (a drawing started from a template carries the template's units).
Otherwise the header variable ``$INSUNITS``: inches, feet, millimetres, centimetres or metres.
A drawing that states none of these, without ``units``, is refused.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

from ..errors import CaseError
from .loops import LoopError, Vertex, loop_area, segments
from .outline import WHERE, Outline

__all__ = ["UNITS", "INSUNITS", "JOIN", "face_name", "read_dxf", "check_axis", "is_dxf"]

UNITS = {"m": 1.0, "cm": 0.01, "mm": 0.001, "in": 0.0254, "ft": 0.3048}
"""Length units of ``[part] units``: metres per drawing unit."""
INSUNITS = {1: "in", 2: "ft", 4: "mm", 5: "cm", 6: "m"}
"""Values of the DXF header variable $INSUNITS that are read, and their unit."""
JOIN = 1e-6
"""Ends closer than this fraction of the drawing's extent are one point."""

_UNIT_WORDS = "m, cm, mm, in or ft"
_REFUSED = ("ELLIPSE", "SPLINE")


def is_dxf(path) -> bool:
    """Whether ``[part] file`` names a DXF drawing (by its suffix, any case)."""
    return Path(str(path)).suffix.lower() == ".dxf"


def face_name(layer: str) -> str:
    """The face name a layer gives its edges ("" for layer 0: the loop's default name)."""
    if layer.strip() == "0":
        return ""
    name = re.sub(r"[^a-z0-9_-]+", "_", layer.lower()).strip("_-")
    if name and not name[0].isalpha():
        name = f"layer_{name}"
    return name


@dataclass
class _Edge:
    """A straight edge or a circular arc through `mid`, in drawing units (x, y)."""

    a: np.ndarray
    b: np.ndarray
    mid: np.ndarray | None
    name: str  # face name from the layer; "" for the default
    layer: str
    label: str  # "LWPOLYLINE #2F vertex 3"
    entity: str  # "LWPOLYLINE #2F"
    loose: bool = False  # a LINE or ARC entity (may name an edge it lies over)
    dashed: bool = False


def _error(source: str, problem: str, fix: str) -> CaseError:
    return CaseError(WHERE, f"{source}: {problem}", fix)


def _fmt(v: float) -> str:
    return f"{v:.6g}"


def _pt(p, unit: str) -> str:
    return f"({_fmt(p[0])}, {_fmt(p[1])}) {unit}"


def _open(path: Path):
    """The ezdxf document of a file, or a CaseError naming the file."""
    try:
        import ezdxf
    except ImportError:
        raise CaseError(
            WHERE,
            f"reading the DXF drawing {path.name} needs the Python package ezdxf, which is not "
            "installed",
            "pip install ezdxf (or give an outline file instead)",
        ) from None
    try:
        return ezdxf.readfile(str(path))
    except FileNotFoundError:
        raise CaseError(
            WHERE,
            f"no such file {str(path)!r}",
            "give the drawing's path, relative to the case file",
        ) from None
    except IsADirectoryError:
        raise CaseError(WHERE, f"{str(path)!r} is a folder", "give the drawing's path") from None
    except ezdxf.DXFError as exc:
        raise _error(
            path.name,
            f"not a readable DXF drawing ({exc})",
            "save the drawing again as DXF (ASCII or binary) from the CAD program",
        ) from None
    except (OSError, UnicodeDecodeError, ValueError) as exc:
        text = getattr(exc, "strerror", None) or str(exc)
        if "not a DXF file" in text:
            text = "it does not begin like a DXF file"
        raise _error(
            path.name,
            f"cannot read it as a DXF drawing ({text})",
            "give a DXF file saved by a CAD program (DWG and other formats are not read)",
        ) from None


def _units(doc, units: str | None, source: str) -> tuple[float, str]:
    """Metres per drawing unit and the unit's name."""
    if units is not None:
        key = units.strip().lower()
        if key not in UNITS:
            raise CaseError(
                "part.units", f"unknown unit {units!r}", f"give units = one of {_UNIT_WORDS}"
            )
        return UNITS[key], key
    code = doc.header.get("$INSUNITS", 0)
    try:
        code = int(code)
    except (TypeError, ValueError):
        code = -1
    if code in INSUNITS:
        return UNITS[INSUNITS[code]], INSUNITS[code]
    if code == 0:
        problem = "the drawing does not state its units ($INSUNITS = 0, unitless)"
    else:
        from ezdxf.units import unit_name

        try:
            what = unit_name(code)
        except (KeyError, ValueError, IndexError):
            what = "unknown"
        problem = f"the drawing's units are {what} ($INSUNITS = {code}), which are not read"
    raise _error(
        source,
        problem,
        f'add units = "mm" (or {_UNIT_WORDS}: the unit the drawing was made in) to [part]',
    )


def _layer_state(doc):
    """Function: layer name -> (read it?, dashed line type of the layer?)."""
    cache: dict[str, tuple[bool, str]] = {}

    def state(name: str) -> tuple[bool, str]:
        key = name.lower()
        if key not in cache:
            layer = doc.layers.get(name) if doc.layers.has_entry(name) else None
            if layer is None:
                cache[key] = (key != "defpoints", "Continuous")
            else:
                on = not (layer.is_off() or layer.is_frozen()) and key != "defpoints"
                cache[key] = (on, layer.dxf.get("linetype", "Continuous"))
        return cache[key]

    return state


def _dashed(doc, linetype: str) -> bool:
    if linetype.upper() in ("CONTINUOUS", "BYBLOCK", ""):
        return False
    if not doc.linetypes.has_entry(linetype):
        return False  # an undefined line type is drawn continuous
    try:
        return len(doc.linetypes.get(linetype).simplified_line_pattern()) > 0
    except Exception:  # a malformed pattern: take the line as drawn
        return False


def _ocs_map(e, source: str, tag: str):
    """Function mapping OCS (x, y) of a planar entity to world (x, y); refuses tilted ones."""
    ext = e.dxf.get("extrusion", (0.0, 0.0, 1.0))
    if abs(abs(float(ext[2])) - 1.0) > 1e-9:
        raise _error(
            source,
            f"{tag} does not lie in the x-y plane (extrusion {tuple(float(v) for v in ext)})",
            "draw the part flat in the x-y plane (or turn that layer off)",
        )
    if float(ext[2]) > 0:
        return lambda p: np.array([float(p[0]), float(p[1])])
    ocs = e.ocs()

    def to_world(p) -> np.ndarray:
        w = ocs.to_wcs((float(p[0]), float(p[1]), 0.0))
        return np.array([w.x, w.y])

    return to_world


def _bulge_mid(p0: np.ndarray, p1: np.ndarray, bulge: float) -> np.ndarray:
    """Middle of the arc from p0 to p1 with the given bulge (OCS, the same units)."""
    d = p1 - p0
    right = np.array([d[1], -d[0]])  # |right| = chord length c
    return (p0 + p1) / 2.0 + 0.5 * bulge * right


def _polyline_edges(e, tag, name, layer, source, tol_abs) -> tuple[list[_Edge], bool]:
    """Edges of a polyline (world x, y) and whether it is closed."""
    kind = e.dxftype()
    if kind == "LWPOLYLINE":
        raw = [(x, y, b) for x, y, b in e.get_points("xyb")]
        closed = bool(e.closed)
        to_w = _ocs_map(e, source, tag)
    else:
        if e.is_poly_face_mesh or e.is_polygon_mesh:
            raise _error(
                source,
                f"{tag} is a polygon mesh, which is not read",
                "draw the part's outline as a closed polyline (or turn that layer off)",
            )
        flags = e.dxf.get("flags", 0)
        if flags & (e.CURVE_FIT_VERTICES_ADDED | e.SPLINE_FIT_VERTICES_ADDED):
            raise _error(
                source,
                f"{tag} is a smoothed (curve- or spline-fit) polyline, which is not read",
                "undo the smoothing, or draw the curve with arcs",
            )
        raw = [(v.dxf.location[0], v.dxf.location[1], v.dxf.get("bulge", 0.0)) for v in e.vertices]
        closed = bool(e.is_closed)
        if e.is_3d_polyline:  # world coordinates, no bulges
            raw = [(x, y, 0.0) for x, y, _ in raw]
            to_w = lambda p: np.array([float(p[0]), float(p[1])])  # noqa: E731
        else:
            to_w = _ocs_map(e, source, tag)
    pts = [np.array([float(x), float(y)]) for x, y, _ in raw]
    bulges = [float(b) for _, _, b in raw]
    keep = list(range(len(pts)))
    # drop repeated points (zero-length edges); the repeat of the first point closes it
    keep = [i for i in keep if i == len(pts) - 1 or np.linalg.norm(pts[i + 1] - pts[i]) > tol_abs]
    if len(keep) > 1 and np.linalg.norm(pts[keep[-1]] - pts[keep[0]]) <= tol_abs:
        keep.pop()
        closed = True
    n = len(keep)
    edges = []
    for k in range(n if closed else n - 1):
        i, j = keep[k], keep[(k + 1) % n]
        mid = None
        if abs(bulges[i]) > 1e-12:
            mid = to_w(_bulge_mid(pts[i], pts[j], bulges[i]))
        edges.append(
            _Edge(to_w(pts[i]), to_w(pts[j]), mid, name, layer, f"{tag} vertex {i + 1}", tag)
        )
    return edges, closed


def _arc_points(e, to_w) -> tuple[np.ndarray, np.ndarray, np.ndarray] | None:
    c = e.dxf.center
    r = float(e.dxf.radius)
    a0, a1 = float(e.dxf.start_angle), float(e.dxf.end_angle)
    sweep = (a1 - a0) % 360.0
    if r <= 0 or sweep <= 1e-9:
        return None
    am = a0 + sweep / 2.0

    def at(deg):
        t = math.radians(deg)
        return to_w((c[0] + r * math.cos(t), c[1] + r * math.sin(t)))

    return at(a0), at(am), at(a1)


def _collect(doc, source: str):
    """Edges of the model space (drawing units); counts of passed-over entities by type and
    of entities on layers that are off; the joining tolerance (drawing units)."""
    state = _layer_state(doc)
    msp = doc.modelspace()
    found: list = []
    passed: dict[str, int] = {}
    off = 0
    pts = []
    for e in msp:
        kind = e.dxftype()
        layer = e.dxf.get("layer", "0")
        on, layer_type = state(layer)
        if kind in ("LINE", "ARC", "CIRCLE", "LWPOLYLINE", "POLYLINE", *_REFUSED) and not on:
            off += 1
            continue
        tag = f"{kind} #{e.dxf.handle}"
        if kind in _REFUSED:
            raise _error(
                source,
                f"{tag} on layer {layer!r} is {'an' if kind == 'ELLIPSE' else 'a'} "
                f"{kind.lower()}, which is not read",
                "draw it as a polyline with arcs (or turn its layer off if it is not part of "
                "the part)",
            )
        if kind not in ("LINE", "ARC", "CIRCLE", "LWPOLYLINE", "POLYLINE"):
            passed[kind] = passed.get(kind, 0) + 1
            continue
        linetype = e.dxf.get("linetype", "BYLAYER")
        if linetype.upper() == "BYLAYER":
            linetype = layer_type
        found.append((e, tag, layer, _dashed(doc, linetype)))
        if kind == "LINE":
            pts += [(e.dxf.start[0], e.dxf.start[1]), (e.dxf.end[0], e.dxf.end[1])]
        elif kind in ("ARC", "CIRCLE"):
            c, r = e.dxf.center, float(e.dxf.radius)
            pts += [(c[0] - r, c[1] - r), (c[0] + r, c[1] + r)]
        elif kind == "LWPOLYLINE":
            pts += [(x, y) for x, y in e.get_points("xy")]
        else:
            pts += [(v.dxf.location[0], v.dxf.location[1]) for v in e.vertices]
    if not pts:
        return [], passed, off, 0.0
    arr = np.asarray(pts, dtype=float)
    span = max(float(np.ptp(arr[:, 0])), float(np.ptp(arr[:, 1])), 1e-300)
    tol = JOIN * span
    edges: list[_Edge] = []
    for e, tag, layer, dashed in found:
        kind = e.dxftype()
        name = face_name(layer)
        if kind == "LINE":
            a, b = (np.array([float(p[0]), float(p[1])]) for p in (e.dxf.start, e.dxf.end))
            if np.linalg.norm(b - a) > tol:
                edges.append(_Edge(a, b, None, name, layer, tag, tag, True, dashed))
        elif kind == "ARC":
            got = _arc_points(e, _ocs_map(e, source, tag))
            if got is not None:
                a, m, b = got
                edges.append(_Edge(a, b, m, name, layer, tag, tag, True, dashed))
        elif kind == "CIRCLE":
            r = float(e.dxf.radius)
            if r <= tol or dashed:
                continue
            to_w = _ocs_map(e, source, tag)
            c = e.dxf.center
            q = [to_w((c[0] + r * dx, c[1] + r * dy)) for dx, dy in ((1, 0), (0, 1), (-1, 0))]
            q.append(to_w((c[0], c[1] - r)))
            edges.append(_Edge(q[0], q[2], q[1], name, layer, tag, tag))
            edges.append(_Edge(q[2], q[0], q[3], name, layer, tag, tag))
        elif not dashed:  # polylines
            got, _ = _polyline_edges(e, tag, name, layer, source, tol)
            edges.extend(got)
    return edges, passed, off, tol


def _covered(over: _Edge, edges: list[_Edge], tol: float) -> np.ndarray:
    """Which of `edges` the LINE or ARC `over` lies over from end to end (boolean array)."""
    if not edges:
        return np.zeros(0, dtype=bool)
    a = np.array([e.a for e in edges])
    b = np.array([e.b for e in edges])
    straight = np.array([e.mid is None for e in edges])
    if over.mid is None:
        d = over.b - over.a
        length = float(np.linalg.norm(d))
        u = d / length
        ok = straight.copy()
        for p in (a, b):
            w = p - over.a
            off = np.abs(u[0] * w[:, 1] - u[1] * w[:, 0])
            t = w @ u
            ok &= (off <= tol) & (t >= -tol) & (t <= length + tol)
        return ok
    mids = np.array([e.mid if e.mid is not None else (np.nan, np.nan) for e in edges])

    def near(p, q):
        return np.linalg.norm(p - q, axis=-1) <= tol

    same_ends = (near(a, over.a) & near(b, over.b)) | (near(a, over.b) & near(b, over.a))
    return ~straight & same_ends & near(mids, over.mid)


def _join(pool: list[_Edge], tol: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Node coordinates and the start and end node of every edge (ends within tol joined)."""
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components
    from scipy.spatial import cKDTree

    ends = np.array([e.a for e in pool] + [e.b for e in pool])
    pairs = cKDTree(ends).query_pairs(tol, output_type="ndarray")
    n = len(ends)
    graph = coo_matrix((np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])), shape=(n, n))
    _, comp = connected_components(graph, directed=False)
    first = np.full(comp.max() + 1, -1)
    for i in range(n - 1, -1, -1):
        first[comp[i]] = i
    return ends[first], comp[: len(pool)], comp[len(pool) :]


def _describe(entities: list[str]) -> str:
    names = list(dict.fromkeys(entities))
    return names[0] if len(names) == 1 else f"{names[0]} and {len(names) - 1} more"


def _chains(pool, nodes, ia, ib, tol, source, unit) -> list[list[tuple[int, _Edge]]]:
    """Closed loops of the pool: lists of (start node, edge); refuses branches and open ends."""
    keep = []
    for k, e in enumerate(pool):
        if ia[k] != ib[k]:
            keep.append(k)
        elif e.mid is not None:
            raise _error(
                source,
                f"{e.label} is an arc whose ends meet at {_pt(nodes[ia[k]], unit)}",
                "draw a full circle as a CIRCLE",
            )
    # an edge drawn twice: keep one; a LINE or ARC on a named layer names it
    groups: dict[tuple[int, int], list[int]] = {}
    for k in keep:
        groups.setdefault((min(ia[k], ib[k]), max(ia[k], ib[k])), []).append(k)
    drop = set()
    for ks in groups.values():
        for i, k in enumerate(ks):
            for j in ks[i + 1 :]:
                if j in drop or k in drop:
                    continue
                ek, ej = pool[k], pool[j]
                if (ek.mid is None) != (ej.mid is None):
                    continue
                if ek.mid is not None and np.linalg.norm(ek.mid - ej.mid) > tol:
                    continue
                if not (ek.loose or ej.loose):
                    raise _error(
                        source,
                        f"the edge from {_pt(nodes[ia[k]], unit)} to {_pt(nodes[ib[k]], unit)} "
                        f"is drawn twice ({ek.label} and {ej.label})",
                        "loops must not touch or share edges: delete one of them",
                    )
                names = {e.name for e in (ek, ej) if e.loose and e.name}
                if len(names) > 1:
                    raise _error(
                        source,
                        f"{ek.label} and {ej.label} lie on each other with different layers "
                        f"({ek.layer!r}, {ej.layer!r})",
                        "delete one of them, so that the edge has one face name",
                    )
                keeper = k if not ek.loose or ej.loose else j
                if names:
                    pool[keeper] = replace(pool[keeper], name=names.pop())
                drop.add(j if keeper == k else k)
    keep = [k for k in keep if k not in drop]
    adj: dict[int, list[int]] = {}
    for k in keep:
        adj.setdefault(int(ia[k]), []).append(k)
        adj.setdefault(int(ib[k]), []).append(k)
    for node, ks in adj.items():
        if len(ks) > 2:
            raise _error(
                source,
                f"{len(ks)} edges meet at {_pt(nodes[node], unit)} "
                f"({', '.join(pool[k].label for k in ks)})",
                "loops must not branch or touch: every corner joins exactly two edges",
            )
    open_ends = [node for node, ks in adj.items() if len(ks) == 1]
    if open_ends:
        node = open_ends[0]
        e = pool[adj[node][0]]
        # a loop that closes: a component without open ends
        closes = len(open_ends) < len(adj) and _any_closed(adj, ia, ib, set(open_ends))
        head = "" if closes else "no closed loop in the drawing: "
        polyline = not e.loose
        other = [n for n in open_ends[1:] if pool[adj[n][0]].entity == e.entity]
        if polyline and other:
            gap = float(np.linalg.norm(nodes[other[0]] - nodes[node]))
            problem = (
                f"{e.entity} on layer {e.layer!r} is open: its ends {_pt(nodes[node], '')}and "
                f"{_pt(nodes[other[0]], unit)} are {_fmt(gap)} {unit} apart"
            )
        elif polyline:
            problem = (
                f"{e.entity} on layer {e.layer!r} is open: its end at "
                f"{_pt(nodes[node], unit)} joins no other edge"
            )
        else:
            problem = (
                f"{e.label} on layer {e.layer!r}: its end at {_pt(nodes[node], unit)} joins "
                "no other edge"
            )
        raise _error(
            source,
            head + problem,
            (
                "close the polyline (or join its ends)"
                if polyline
                else "join the lines and arcs of each loop end to end"
            )
            + "; delete stray lines or turn their layer off (dashed centre lines are passed "
            "over)",
        )
    used: set[int] = set()
    loops = []
    for start in keep:
        if start in used:
            continue
        loop, k, node = [], start, int(ia[start])
        while True:
            used.add(k)
            forward = int(ia[k]) == node
            nxt_node = int(ib[k]) if forward else int(ia[k])
            loop.append((node, pool[k]))
            node = nxt_node
            k = next(j for j in adj[node] if j != k)
            if k == start:
                break
        loops.append(loop)
    return loops


def _any_closed(adj, ia, ib, open_nodes: set[int]) -> bool:
    """Whether some connected set of edges has no open end."""
    seen: set[int] = set()
    for start in adj:
        if start in seen:
            continue
        stack, comp = [start], set()
        while stack:
            n = stack.pop()
            if n in comp:
                continue
            comp.add(n)
            for k in adj[n]:
                stack.extend((int(ia[k]), int(ib[k])))
        seen |= comp
        if not comp & open_nodes:
            return True
    return False


def _nothing(source: str, passed: dict[str, int], off: int) -> CaseError:
    notes = []
    if off:
        notes.append(f"{off} on layers that are off or frozen")
    if passed:
        notes.append("passed over: " + ", ".join(f"{n} {k}" for k, n in sorted(passed.items())))
    extra = f" ({'; '.join(notes)})" if notes else ""
    return _error(
        source,
        "no closed polyline, circle or loop of continuous lines and arcs in the model space"
        + extra,
        "draw the part as a closed polyline (holes as circles or closed polylines) in the model "
        "space on a layer that is on; explode a block (INSERT) that holds it",
    )


def _outline(doc, source: str, scale: float, unit: str) -> Outline:
    edges, passed, off, tol = _collect(doc, source)
    solid = [e for e in edges if not e.loose]
    overlays, pool = [], list(solid)
    for e in edges:
        if not e.loose:
            continue
        if e.dashed or _covered(e, solid, tol).any():
            overlays.append(e)
        else:
            pool.append(e)
    if not pool:
        raise _nothing(source, passed, off)
    nodes, ia, ib = _join(pool, tol)
    # a LINE or ARC drawn over an edge names it after its layer
    by: dict[int, _Edge] = {}
    for over in overlays:
        if not over.name:
            continue
        for k in np.flatnonzero(_covered(over, pool, tol)):
            prev = by.get(int(k))
            if prev is not None and prev.name != over.name:
                raise _error(
                    source,
                    f"{pool[k].label} lies under {prev.label} on layer {prev.layer!r} and "
                    f"{over.label} on layer {over.layer!r}",
                    "keep one of them, so that the edge has one face name",
                )
            by[int(k)] = over
            pool[k] = replace(pool[k], name=over.name)
    chains = _chains(pool, nodes, ia, ib, tol, source, unit)
    loops = []
    for chain in chains:
        verts = tuple(
            Vertex(
                scale * float(nodes[n][0]),
                scale * float(nodes[n][1]),
                e.name,
                through=None
                if e.mid is None
                else (scale * float(e.mid[0]), scale * float(e.mid[1])),
                label=e.label,
            )
            for n, e in chain
        )
        try:
            area = abs(loop_area(segments(verts)))
        except LoopError as exc:
            raise _error(source, f"{exc.label}: {exc.problem}", exc.fix) from None
        pts = np.array([(v.x, v.y) for v in verts] + [v.through for v in verts if v.through])
        centre = (pts.min(axis=0) + pts.max(axis=0)) / 2.0
        loops.append((area, centre, verts, [e.entity for _, e in chain]))
    loops.sort(key=lambda lp: -lp[0])
    outer, holes = loops[0], loops[1:]
    step = scale * tol
    holes.sort(key=lambda lp: (round(lp[1][0] / step), round(lp[1][1] / step)))
    out, names = [], []
    count = 0
    for i, (_, _, verts, entities) in enumerate([outer, *holes]):
        if i == 0:
            default = "outline"
        elif any(not v.name for v in verts):
            count += 1
            default = f"hole_{count}"
        else:
            default = verts[0].name
        out.append(tuple(replace(v, name=v.name or default) for v in verts))
        names.append(f"{'outline' if i == 0 else 'hole ' + default} ({_describe(entities)})")
    return Outline(tuple(out), tuple(names), source)


_CACHE: dict[tuple, Outline] = {}


def read_dxf(path, units: str | None = None) -> Outline:
    """Read the loops of a DXF drawing (kept while the file is unchanged).

    Args:
        path: the drawing.
        units: ``[part] units`` (m, cm, mm, in or ft); None: the drawing's ``$INSUNITS``.

    Returns:
        The outline first, then the holes, lengths in m; not yet checked for crossing edges
        (`femheat.geometry.outline.outline_loops` does that).

    Raises:
        CaseError: at ``part.file``: missing, not DXF, no units, no closed loop, open or
            branching chains, refused entities; at ``part.units``: an unknown unit.
    """
    p = Path(path)
    try:
        st = p.stat()
        key = (str(p.resolve()), st.st_mtime_ns, st.st_size, units)
    except OSError:
        key = None
    if key is not None and key in _CACHE:
        return _CACHE[key]
    doc = _open(p)
    scale, unit = _units(doc, units, p.name)
    outline = _outline(doc, p.name, scale, unit)
    if key is not None:
        _CACHE[key] = outline
    return outline


def check_axis(outline: Outline) -> None:
    """Axisymmetric model: straight edges on x = 0 must be named ``axis``, and only they.

    Raises:
        CaseError: at ``part.file``, naming the entity and how to name the edge in the drawing.
    """
    pts = np.array([(v.x, v.y) for lp in outline.loops for v in lp])
    tol = 1e-9 * max(float(np.ptp(pts[:, 0])), float(np.ptp(pts[:, 1])))
    for lp in outline.loops:
        for i, v in enumerate(lp):
            w = lp[(i + 1) % len(lp)]
            on = v.through is None and abs(v.x) <= tol and abs(w.x) <= tol
            ends = f"from ({v.x:.6g}, {v.y:.6g}) to ({w.x:.6g}, {w.y:.6g}) m"
            if on and v.name != "axis":
                raise CaseError(
                    WHERE,
                    f"{outline.source} {v.label}: the edge {ends} lies on the axis x = 0 but is "
                    f"named {v.name!r}",
                    "draw a line on layer 'axis' along x = 0 over it (a centre line of the axis "
                    "longer than the part names every edge on it)",
                )
            if v.name == "axis" and not on:
                raise CaseError(
                    WHERE,
                    f"{outline.source} {v.label}: the edge {ends} is named 'axis' (its layer) but "
                    "does not lie on x = 0",
                    "put only the edges on x = 0 on layer 'axis' (x is the radius: move the "
                    "part so that its axis is x = 0)",
                )
