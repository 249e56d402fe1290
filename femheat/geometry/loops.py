r"""Closed loops of straight edges and circular arcs in the x-y plane, with rounded corners.

The 2D shapes (planar sections, axisymmetric profiles and outlines read from a file) describe
their boundary as loops of `Vertex` records: a corner point (m), the name of the face that the
edge leaving it belongs to, an optional rounding radius at the corner and an optional point the
leaving edge passes through (which makes that edge a circular arc). `segments` turns a loop of
vertices into `Segment`\ s (straight lines and three-point arcs), `check_loops` rejects crossing
edges and holes outside the outline, and `build_surface` creates the gmsh OpenCASCADE surface
with its boundary curves grouped by face name.

Rounding a corner
-----------------
At a corner V between straight edges towards P (previous) and N (next), with unit vectors
u1 = (P - V)/|P - V| and u2 = (N - V)/|N - V| and the angle theta between them, a rounding of
radius r touches both edges at distance d = r / tan(theta/2) from V; its centre lies at
V + r / sin(theta/2) (u1 + u2)/|u1 + u2|. Both edges must be long enough to hold the roundings
at their two ends.

Area
----
Signed area (counter-clockwise positive) of a loop: the shoelace sum over the chords plus, for
each arc of radius r sweeping the signed angle phi (counter-clockwise positive), the circular
segment between arc and chord, r^2 (phi - sin phi) / 2 (Green's theorem).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .base import Built

__all__ = [
    "Vertex",
    "Segment",
    "LoopError",
    "segments",
    "arc_geometry",
    "loop_area",
    "loop_length",
    "sample",
    "check_loops",
    "build_surface",
    "face_names_of",
]

_MAX_PIECE_ANGLE = math.radians(5.0)  # arcs are cut into pieces of at most this for checks


class LoopError(ValueError):
    """A loop cannot be built; `label` names the vertex or edge (e.g. "line 7", "root_radius").

    Args:
        label: where the problem is, as the caller labelled the vertex.
        problem: what is wrong, with the numbers.
        fix: what to do about it.
    """

    def __init__(self, label: str, problem: str, fix: str = ""):
        super().__init__(f"{label}: {problem}" if label else problem)
        self.label = label
        self.problem = problem
        self.fix = fix


@dataclass(frozen=True)
class Vertex:
    """A corner of a loop.

    Args:
        x, y: position, m.
        name: face name of the edge that leaves this vertex (towards the next one).
        radius: rounding radius at this corner, m (0: a sharp corner).
        through: a point (m) the leaving edge passes through: the edge is then a circular arc.
        round_name: face name of the rounding (default: `name`).
        label: how messages refer to this vertex (e.g. "line 7"); `radius_label` for its
            rounding radius (e.g. "root_radius"), default `label`.
    """

    x: float
    y: float
    name: str
    radius: float = 0.0
    through: tuple[float, float] | None = None
    round_name: str | None = None
    label: str = ""
    radius_label: str | None = None


@dataclass(frozen=True)
class Segment:
    """A boundary edge: a straight line, or a circular arc through `mid` when it is given.

    Args:
        start, end: end points, m.
        name: face name.
        mid: a point on the arc strictly between start and end, m (None for a straight line).
        label: where it came from, for messages.
    """

    start: tuple[float, float]
    end: tuple[float, float]
    name: str
    mid: tuple[float, float] | None = None
    label: str = ""

    @property
    def is_arc(self) -> bool:
        return self.mid is not None


def _fmt(v: float) -> str:
    return f"{v:.6g}"


def _pt(p) -> str:
    return f"({_fmt(p[0])}, {_fmt(p[1])})"


def _circle(p0, pm, p1) -> tuple[np.ndarray, float] | None:
    """Centre and radius of the circle through three points; None if they are on a line."""
    a, b, c = (np.asarray(p, dtype=float) for p in (p0, pm, p1))
    d = 2.0 * ((b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0]))
    scale = max(np.ptp([a[0], b[0], c[0]]), np.ptp([a[1], b[1], c[1]]), 1e-300)
    if abs(d) <= 1e-12 * scale**2:
        return None
    ab, ac = b - a, c - a
    nb, nc = ab @ ab, ac @ ac
    centre = a + np.array([ac[1] * nb - ab[1] * nc, ab[0] * nc - ac[0] * nb]) / d
    return centre, float(np.hypot(*(a - centre)))


def arc_geometry(seg: Segment) -> tuple[np.ndarray, float, float, float]:
    """Centre (m), radius (m), start angle and signed sweep (rad, counter-clockwise > 0)."""
    circ = _circle(seg.start, seg.mid, seg.end)
    if circ is None:
        raise LoopError(
            seg.label,
            f"the arc from {_pt(seg.start)} through {_pt(seg.mid)} to {_pt(seg.end)} is a "
            "straight line (the three points are in line)",
            "move the 'through' point off the line, or leave it out for a straight edge",
        )
    centre, r = circ
    ang = [math.atan2(p[1] - centre[1], p[0] - centre[0]) for p in (seg.start, seg.mid, seg.end)]
    ccw = (ang[2] - ang[0]) % (2 * math.pi)
    mid = (ang[1] - ang[0]) % (2 * math.pi)
    sweep = ccw if mid < ccw else ccw - 2 * math.pi
    return centre, r, ang[0], sweep


def _rounding(prev, v: Vertex, nxt):
    """Tangent distance, tangent points, arc middle point of the rounding at v."""
    p = np.array([v.x, v.y])
    u1 = np.asarray(prev, dtype=float) - p
    u2 = np.asarray(nxt, dtype=float) - p
    u1 /= np.linalg.norm(u1)
    u2 /= np.linalg.norm(u2)
    cos_t = float(np.clip(u1 @ u2, -1.0, 1.0))
    theta = math.acos(cos_t)
    label = v.radius_label or v.label
    if theta > math.pi - 1e-9:
        raise LoopError(
            label,
            f"no corner to round at {_pt(p)}: the edges on either side are in line",
            "leave out the rounding radius there",
        )
    if theta < 1e-9:
        raise LoopError(label, f"the edges at {_pt(p)} fold back on each other", "fix the points")
    d = v.radius / math.tan(theta / 2.0)
    bis = (u1 + u2) / np.linalg.norm(u1 + u2)
    centre = p + v.radius / math.sin(theta / 2.0) * bis
    mid = centre - v.radius * bis
    return d, p + d * u1, p + d * u2, mid


def segments(vertices: list[Vertex] | tuple[Vertex, ...]) -> list[Segment]:
    """The edges of one closed loop (the last vertex joins the first), corners rounded.

    Raises:
        LoopError: fewer than two vertices, repeated points, a rounding next to an arc or one
            that does not fit on its edges, an arc whose three points are in line.
    """
    n = len(vertices)
    if n < 2:
        label = vertices[0].label if vertices else ""
        raise LoopError(label, f"a loop needs at least 2 points, got {n}", "add points")
    pts = [np.array([v.x, v.y], dtype=float) for v in vertices]
    span = max(float(np.ptp([p[0] for p in pts])), float(np.ptp([p[1] for p in pts])), 1e-300)
    tol = 1e-9 * span
    for i in range(n):
        j = (i + 1) % n
        if np.linalg.norm(pts[j] - pts[i]) <= tol:
            raise LoopError(
                vertices[j].label,
                f"the point {_pt(pts[j])} repeats the one before it",
                "leave out the repeated point (a loop closes by itself)",
            )
    if n == 2 and vertices[0].through is None and vertices[1].through is None:
        raise LoopError(
            vertices[0].label, "two points with straight edges enclose no area", "add points"
        )
    # rounding at each corner: tangent distance and points
    cut_in = [0.0] * n  # tangent distance on the edge arriving at vertex i
    start = list(pts)  # where the edge leaving vertex i starts
    end = [pts[(i + 1) % n] for i in range(n)]  # where the edge leaving vertex i ends
    fillet_mid: dict[int, np.ndarray] = {}
    for i, v in enumerate(vertices):
        if v.radius <= 0.0:
            continue
        prev_v = vertices[i - 1]
        if prev_v.through is not None or v.through is not None:
            raise LoopError(
                v.radius_label or v.label,
                f"the corner at {_pt(pts[i])} can only be rounded between two straight edges",
                "leave out the rounding, or draw the arc with 'through' points",
            )
        d, t_in, t_out, mid = _rounding(pts[i - 1], v, pts[(i + 1) % n])
        cut_in[i] = d
        end[i - 1] = t_in
        start[i] = t_out
        fillet_mid[i] = mid
    # every straight edge must hold the roundings at both its ends
    for i, v in enumerate(vertices):
        j = (i + 1) % n
        if v.through is not None:
            continue
        length = float(np.linalg.norm(pts[j] - pts[i]))
        need = cut_in[i] + cut_in[j]
        if need > length * (1.0 + 1e-9):
            who = [vertices[k] for k in (i, j) if vertices[k].radius > 0]
            names = " and ".join(
                f"{w.radius_label or w.label} {_fmt(w.radius)} at {_pt((w.x, w.y))}" for w in who
            )
            raise LoopError(
                who[-1].radius_label or who[-1].label,
                f"the rounding {names} needs {_fmt(need)} along the edge from {_pt(pts[i])} to "
                f"{_pt(pts[j])}, which is only {_fmt(length)} long",
                "use a smaller rounding radius",
            )
    out: list[Segment] = []
    for i, v in enumerate(vertices):
        if i in fillet_mid:
            out.append(
                Segment(
                    tuple(end[i - 1]),
                    tuple(start[i]),
                    v.round_name or v.name,
                    tuple(fillet_mid[i]),
                    v.radius_label or v.label,
                )
            )
        a, b = start[i], end[i]
        if v.through is not None:
            seg = Segment(tuple(a), tuple(b), v.name, tuple(map(float, v.through)), v.label)
            arc_geometry(seg)  # raises if the three points are in line
            if (
                np.linalg.norm(np.asarray(v.through) - a) <= tol
                or np.linalg.norm(np.asarray(v.through) - b) <= tol
            ):
                raise LoopError(
                    v.label,
                    f"the 'through' point {_pt(v.through)} is an end of its own edge",
                    "give a point on the arc between its ends",
                )
            out.append(seg)
        elif np.linalg.norm(b - a) > tol:
            out.append(Segment(tuple(a), tuple(b), v.name, None, v.label))
    # the rounding at vertex 0 is built first; keep the loop starting at a corner point
    return out


def loop_area(segs: list[Segment]) -> float:
    """Signed area (m2) enclosed by a loop; counter-clockwise loops are positive."""
    total = 0.0
    for s in segs:
        total += 0.5 * (s.start[0] * s.end[1] - s.end[0] * s.start[1])
        if s.is_arc:
            _, r, _, phi = arc_geometry(s)
            total += 0.5 * r * r * (phi - math.sin(phi))
    return total


def loop_length(segs: list[Segment]) -> float:
    """Length (m) of a loop."""
    total = 0.0
    for s in segs:
        if s.is_arc:
            _, r, _, phi = arc_geometry(s)
            total += r * abs(phi)
        else:
            total += math.dist(s.start, s.end)
    return total


def sample(seg: Segment, max_angle: float = _MAX_PIECE_ANGLE) -> np.ndarray:
    """Points along an edge, start included, end excluded: (k, 2) in m."""
    if not seg.is_arc:
        return np.array([seg.start], dtype=float)
    centre, r, a0, phi = arc_geometry(seg)
    k = max(2, math.ceil(abs(phi) / max_angle))
    ang = a0 + phi * np.arange(k) / k
    return centre + r * np.column_stack([np.cos(ang), np.sin(ang)])


def _polyline(segs: list[Segment]) -> tuple[np.ndarray, np.ndarray]:
    """Closed polyline of a loop: points (k, 2) and the index of the edge of each piece."""
    parts, owner = [], []
    for i, s in enumerate(segs):
        pts = sample(s)
        parts.append(pts)
        owner.append(np.full(len(pts), i))
    return np.concatenate(parts), np.concatenate(owner)


def _orient(a, b, c):
    return (b[..., 0] - a[..., 0]) * (c[..., 1] - a[..., 1]) - (b[..., 1] - a[..., 1]) * (
        c[..., 0] - a[..., 0]
    )


def _crossing(p, q, p_all, q_all, tol, span):
    """Boolean matrix: piece i (p[i] -> q[i]) meets piece j (p_all[j] -> q_all[j]) (closed
    segments, with tolerance)."""
    tol_area = tol * span
    a, b = p[:, None, :], q[:, None, :]
    c, d = p_all[None, :, :], q_all[None, :, :]
    d1, d2 = _orient(a, b, c), _orient(a, b, d)
    d3, d4 = _orient(c, d, a), _orient(c, d, b)
    proper = (d1 * d2 < 0) & (d3 * d4 < 0)

    def on(s0, s1, r, dd):
        lo, hi = np.minimum(s0, s1), np.maximum(s0, s1)
        inside = np.all((r >= lo - tol) & (r <= hi + tol), axis=-1)
        return (np.abs(dd) <= tol_area) & inside

    touch = on(a, b, c, d1) | on(a, b, d, d2) | on(c, d, a, d3) | on(c, d, b, d4)
    return proper | touch


def _inside(point, poly: np.ndarray) -> bool:
    """Whether a point lies inside a closed polygon (even-odd rule)."""
    x, y = point
    x0, y0 = poly[:, 0], poly[:, 1]
    x1, y1 = np.roll(x0, -1), np.roll(y0, -1)
    cross = (y0 > y) != (y1 > y)
    with np.errstate(divide="ignore", invalid="ignore"):
        xs = x0 + (y - y0) * (x1 - x0) / (y1 - y0)
    return bool(np.count_nonzero(cross & (x < xs)) % 2)


def check_loops(loops: list[list[Segment]], names: list[str] | None = None) -> None:
    """Reject loops whose edges cross or touch, and holes not inside the outline.

    Args:
        loops: the outline first, then the holes.
        names: how messages call each loop (default "outline", "hole 1", ...).

    Raises:
        LoopError: labelled with the edge (or the loop) at fault.
    """
    names = names or ["outline"] + [f"hole {i}" for i in range(1, len(loops))]
    polys, pieces_p, pieces_q, who = [], [], [], []
    span = 1e-300
    for li, segs in enumerate(loops):
        pts, owner = _polyline(segs)
        polys.append(pts)
        span = max(span, float(np.ptp(pts[:, 0])), float(np.ptp(pts[:, 1])))
        pieces_p.append(pts)
        pieces_q.append(np.roll(pts, -1, axis=0))
        who.extend((li, int(e), k, len(pts)) for k, e in enumerate(owner))
    p = np.concatenate(pieces_p)
    q = np.concatenate(pieces_q)
    loop_of = np.array([w[0] for w in who])
    k_of = np.array([w[2] for w in who])
    n_of = np.array([w[3] for w in who])
    tol = 1e-9 * span
    chunk = 256
    for i0 in range(0, len(p), chunk):
        i1 = min(i0 + chunk, len(p))
        hit = _crossing(p[i0:i1], q[i0:i1], p, q, tol, span)
        rows = np.arange(i0, i1)[:, None]
        cols = np.arange(len(p))[None, :]
        same = loop_of[rows] == loop_of[cols]
        dk = np.abs(k_of[rows] - k_of[cols])
        neighbour = same & ((dk <= 1) | (dk == n_of[rows] - 1))
        hit &= ~neighbour
        hit &= cols > rows  # each pair once
        if np.any(hit):
            r, c = np.argwhere(hit)[0]
            a, b = who[i0 + r], who[c]
            ea, eb = loops[a[0]][a[1]], loops[b[0]][b[1]]
            where_a = f"{names[a[0]]} edge {ea.label}" if ea.label else names[a[0]]
            where_b = f"{names[b[0]]} edge {eb.label}" if eb.label else names[b[0]]
            if a[0] == b[0]:
                problem = (
                    f"the {names[a[0]]} crosses itself: its edge from {_pt(ea.start)} "
                    f"({ea.label or 'edge'}) meets its edge from {_pt(eb.start)} "
                    f"({eb.label or 'edge'})"
                )
                fix = "reorder the points so that the edges do not cross"
            else:
                problem = f"the {where_a} meets the {where_b}"
                fix = "holes must lie inside the outline without touching it or each other"
            raise LoopError(ea.label or eb.label, problem, fix)
    for li, segs in enumerate(loops):
        if abs(loop_area(segs)) <= 1e-12 * span * span:
            raise LoopError(segs[0].label, f"the {names[li]} encloses no area", "check its points")
    for li in range(1, len(loops)):
        if not _inside(polys[li][0], polys[0]):
            raise LoopError(
                loops[li][0].label,
                f"the {names[li]} is not inside the outline",
                "move the hole inside the outline, or leave it out",
            )
        for lj in range(1, len(loops)):
            if lj != li and _inside(polys[li][0], polys[lj]):
                raise LoopError(
                    loops[li][0].label,
                    f"the {names[li]} lies inside the {names[lj]}",
                    "a hole cannot lie in another hole; leave it out",
                )


def face_names_of(loops: list[list[Segment]]) -> tuple[str, ...]:
    """Face names in order of first appearance."""
    return tuple(dict.fromkeys(s.name for segs in loops for s in segs))


def build_surface(gmsh, loops: list[list[Segment]]) -> Built:
    """Create the plane surface (outline first, then holes) in the current gmsh OCC model.

    Returns:
        Built with dim 2 and each face name -> its boundary curve tags.
    """
    occ = gmsh.model.occ
    name_of: dict[int, str] = {}
    wires = []
    for segs in loops:
        # every loop counter-clockwise: gmsh turns the holes round itself, and a hole drawn
        # clockwise would be added to the area OpenCASCADE reports instead of taken from it
        if loop_area(segs) < 0:
            segs = [Segment(s.end, s.start, s.name, s.mid, s.label) for s in reversed(segs)]
        pts = [occ.addPoint(s.start[0], s.start[1], 0.0) for s in segs]
        curves = []
        for i, s in enumerate(segs):
            a, b = pts[i], pts[(i + 1) % len(segs)]
            if s.is_arc:
                m = occ.addPoint(s.mid[0], s.mid[1], 0.0)
                c = occ.addCircleArc(a, m, b, center=False)
                occ.remove([(0, m)])
            else:
                c = occ.addLine(a, b)
            curves.append(c)
            name_of[c] = s.name
        wires.append(occ.addCurveLoop(curves))
    surface = occ.addPlaneSurface(wires)
    occ.synchronize()
    faces: dict[str, list[int]] = {name: [] for name in face_names_of(loops)}
    for _, c in gmsh.model.getBoundary([(2, surface)], oriented=False):
        name = name_of.get(abs(c))
        if name is None:  # OpenCASCADE made a curve we did not: a bug, not bad input
            raise RuntimeError(f"boundary curve {c} was not created by the loop builder")
        faces[name].append(abs(c))
    return Built(2, {k: v for k, v in faces.items() if v}, [surface])
