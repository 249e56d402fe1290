"""Named face selections for 3D parts: pick boundary surfaces by plane, box, normal or id.

A selection is one table of ``[[part.select]]``::

    [[part.select]]
    name = "hearth"          # the face name, used as [faces.hearth]
    plane = "z = 0"          # the surface lies in this coordinate plane (m)
    # box = [x0, y0, z0, x1, y1, z1]    the surface lies inside this box (m)
    # normal = [0, 0, -1]               its outward normal points this way ...
    # angle = 5                          ... within this many degrees (default 5)
    # surfaces = [3, 5]                  CAD surface ids (as listed by femheat check)

A selection may combine several criteria; a surface is picked when it meets all of them.
Surfaces picked by no selection keep their default names. A selection that picks nothing, or
a surface picked by two selections, is an error naming the selection. Coordinates are in
metres, after any ``scale`` of a CAD file.

How the criteria are judged, with ``tol`` = 1e-5 of the part's largest dimension (at least
1 um):

* plane ``x = c``: the surface's bounding box is flat in x within ``tol`` and lies at ``c``.
* box: the surface's bounding box lies inside the box, widened by ``tol``.
* normal: at every sample point of the surface (a 5 x 5 grid in its parameters, kept where it
  falls on the trimmed face) the outward normal is within ``angle`` degrees of the direction.
  Outward is decided by testing which side of the surface lies inside the solid.
* surfaces: the gmsh surface tag, the id shown in the default face name ``surface_<id>``.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from ..errors import CaseError
from .base import ShapeParamError

__all__ = [
    "Selection",
    "SurfaceInfo",
    "parse_selections",
    "surface_info",
    "surface_samples",
    "apply_selections",
    "DEFAULT_ANGLE",
]

DEFAULT_ANGLE = 5.0  # degrees, normal tolerance
_NAME = re.compile(r"[A-Za-z0-9_-]+")
_PLANE = re.compile(r"^\s*([xyzXYZ])\s*=\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*$")
_KEYS = ("name", "plane", "box", "normal", "angle", "surfaces")


@dataclass(frozen=True)
class Selection:
    """One checked ``[[part.select]]`` table.

    Args:
        name: face name given to the picked surfaces.
        index: position in the ``[[part.select]]`` list (for error messages).
        plane: (axis 0/1/2, coordinate in m) or None.
        box: (x0, y0, z0, x1, y1, z1) in m, ordered low to high, or None.
        normal: unit direction or None. angle: tolerance on the normal, degrees.
        surfaces: CAD surface ids or None.
    """

    name: str
    index: int
    plane: tuple[int, float] | None = None
    box: tuple[float, ...] | None = None
    normal: tuple[float, float, float] | None = None
    angle: float = DEFAULT_ANGLE
    surfaces: tuple[int, ...] | None = None

    @property
    def where(self) -> str:
        return f"part.select[{self.index}]"


def _num(v) -> bool:
    return isinstance(v, int | float) and not isinstance(v, bool) and math.isfinite(v)


def parse_selections(value, param: str = "select") -> tuple[Selection, ...]:
    """Check the ``[[part.select]]`` list.

    Raises:
        ShapeParamError: on `param` with the index of the bad table.
    """
    if value is None or value == ():
        return ()
    if not isinstance(value, list | tuple):
        raise ShapeParamError(
            param,
            f"expected a list of tables, got {value!r}",
            'write each selection as [[part.select]] with name = "..." and a criterion',
        )
    out: list[Selection] = []
    seen: set[str] = set()
    for i, raw in enumerate(value):
        out.append(_parse_one(raw, i, param, seen))
    return tuple(out)


def _parse_one(raw, i: int, param: str, seen: set[str]) -> Selection:
    def bad(problem: str, fix: str) -> ShapeParamError:
        return ShapeParamError(param, problem, fix, i)

    if not isinstance(raw, dict):
        raise bad(f"expected a table, got {raw!r}", "write it as [[part.select]] with keys")
    for key in raw:
        if key not in _KEYS:
            import difflib

            close = difflib.get_close_matches(str(key), _KEYS, n=1)
            hint = f"did you mean {close[0]!r}? " if close else ""
            raise bad(f"unknown key {key!r}", f"{hint}valid keys here: {', '.join(_KEYS)}")
    name = raw.get("name")
    if not isinstance(name, str) or not _NAME.fullmatch(name):
        raise bad(
            f"name must be letters, digits, _ or -, got {name!r}",
            'give the face a name, e.g. name = "hearth"',
        )
    if name in seen:
        raise bad(f"name {name!r} is used by an earlier selection", "give each selection its own")
    seen.add(name)
    criteria = [k for k in ("plane", "box", "normal", "surfaces") if k in raw]
    if not criteria:
        raise bad(
            f"selection {name!r} has no criterion",
            'add plane = "z = 0", box = [x0, y0, z0, x1, y1, z1], normal = [0, 0, -1] '
            "or surfaces = [ids]",
        )
    kw: dict = {}
    if "plane" in raw:
        m = _PLANE.match(raw["plane"]) if isinstance(raw["plane"], str) else None
        if not m:
            raise bad(
                f'plane: expected text like "z = 0", got {raw["plane"]!r}',
                'write plane = "x = 0.05" (a coordinate plane, value in m)',
            )
        kw["plane"] = ("xyz".index(m.group(1).lower()), float(m.group(2)))
    if "box" in raw:
        b = raw["box"]
        if not isinstance(b, list | tuple) or len(b) != 6 or not all(_num(x) for x in b):
            raise bad(f"box: expected 6 numbers, got {b!r}", "write box = [x0, y0, z0, x1, y1, z1]")
        lo, hi = np.minimum(b[:3], b[3:]), np.maximum(b[:3], b[3:])
        kw["box"] = tuple(float(x) for x in (*lo, *hi))
    if "normal" in raw:
        n = raw["normal"]
        if not isinstance(n, list | tuple) or len(n) != 3 or not all(_num(x) for x in n):
            raise bad(f"normal: expected 3 numbers, got {n!r}", "write normal = [0, 0, -1]")
        length = math.sqrt(sum(float(x) ** 2 for x in n))
        if length == 0:
            raise bad("normal: the direction is zero", "write normal = [0, 0, -1]")
        kw["normal"] = tuple(float(x) / length for x in n)
    if "angle" in raw:
        a = raw["angle"]
        if not _num(a) or not 0 < a < 90:
            raise bad(
                f"angle: expected degrees between 0 and 90, got {a!r}",
                f"give the normal tolerance in degrees (default {DEFAULT_ANGLE:g})",
            )
        if "normal" not in raw:
            raise bad("angle is given without normal", "add normal = [nx, ny, nz] or drop angle")
        kw["angle"] = float(a)
    if "surfaces" in raw:
        s = raw["surfaces"]
        ok = isinstance(s, list | tuple) and s
        ok = ok and all(isinstance(x, int) and not isinstance(x, bool) and x >= 1 for x in s)
        if not ok:
            raise bad(
                f"surfaces: expected a list of whole numbers >= 1, got {s!r}",
                "give CAD surface ids as listed by femheat check, e.g. surfaces = [3, 5]",
            )
        kw["surfaces"] = tuple(int(x) for x in s)
    return Selection(name=name, index=i, **kw)


@dataclass(frozen=True)
class SurfaceInfo:
    """Geometry of one boundary surface of a solid.

    Args:
        tag: gmsh surface tag. volume: a volume it bounds.
        bbox: (x0, y0, z0, x1, y1, z1) in m. area: m2.
        points: (k, 3) sample points on the face; normals: (k, 3) outward unit normals
            (rows of NaN where the side could not be decided).
    """

    tag: int
    volume: int
    bbox: tuple[float, ...]
    area: float
    points: np.ndarray
    normals: np.ndarray


def surface_samples(gmsh, tag: int) -> np.ndarray:
    """(k, 2) parametric (u, v) points that fall on the trimmed surface (k >= 1)."""
    lo, hi = gmsh.model.getParametrizationBounds(2, tag)
    for n in (5, 15):
        s = np.linspace(0.02, 0.98, n)
        uv = np.array(
            [[lo[0] + a * (hi[0] - lo[0]), lo[1] + b * (hi[1] - lo[1])] for a in s for b in s]
        )
        keep = [gmsh.model.isInside(2, tag, list(q), parametric=True) > 0 for q in uv]
        if any(keep):
            return uv[np.array(keep)]
    com = gmsh.model.occ.getCenterOfMass(2, tag)
    _, uv = gmsh.model.getClosestPoint(2, tag, list(com))
    return np.asarray(uv, dtype=float).reshape(1, 2)


def surface_info(gmsh, tag: int, span: float, normals: bool = True) -> SurfaceInfo:
    """Bounding box, area, sample points and outward normals of a boundary surface."""
    up, _ = gmsh.model.getAdjacencies(2, tag)
    volume = int(up[0]) if len(up) else -1
    bbox = tuple(float(x) for x in gmsh.model.getBoundingBox(2, tag))
    area = float(gmsh.model.occ.getMass(2, tag))
    if not normals:
        empty = np.zeros((0, 3))
        return SurfaceInfo(tag, volume, bbox, area, empty, empty)
    uv = surface_samples(gmsh, tag)
    pts = np.asarray(gmsh.model.getValue(2, tag, uv.ravel().tolist()), dtype=float).reshape(-1, 3)
    nrm = np.asarray(gmsh.model.getNormal(tag, uv.ravel().tolist()), dtype=float).reshape(-1, 3)
    nrm /= np.maximum(np.linalg.norm(nrm, axis=1), 1e-300)[:, None]
    sign = _outward_sign(gmsh, volume, pts, nrm, span)
    return SurfaceInfo(tag, volume, bbox, area, pts, nrm * sign)


def _outward_sign(gmsh, volume: int, pts, nrm, span: float) -> float:
    """+1 if the surface normals point out of the volume, -1 if in, NaN if undecided."""
    if volume < 0:
        return math.nan
    for k in range(min(len(pts), 5)):
        for eps in (1e-6 * span, 1e-5 * span, 1e-4 * span, 1e-3 * span):
            plus = gmsh.model.isInside(3, volume, list(pts[k] + eps * nrm[k])) > 0
            minus = gmsh.model.isInside(3, volume, list(pts[k] - eps * nrm[k])) > 0
            if plus != minus:
                return -1.0 if plus else 1.0
    return math.nan


def _tolerance(span: float) -> float:
    return max(1e-5 * span, 1e-6)


def _picks(sel: Selection, info: SurfaceInfo, tol: float) -> bool:
    lo, hi = np.array(info.bbox[:3]), np.array(info.bbox[3:])
    if sel.surfaces is not None and info.tag not in sel.surfaces:
        return False
    if sel.plane is not None:
        axis, c = sel.plane
        if hi[axis] - lo[axis] > 2 * tol or abs(0.5 * (lo[axis] + hi[axis]) - c) > tol:
            return False
    if sel.box is not None:
        blo, bhi = np.array(sel.box[:3]), np.array(sel.box[3:])
        if np.any(lo < blo - tol) or np.any(hi > bhi + tol):
            return False
    if sel.normal is not None:
        n = info.normals
        if n.size == 0 or np.isnan(n).any():
            return False
        cos = n @ np.asarray(sel.normal)
        if np.any(cos < math.cos(math.radians(sel.angle))):
            return False
    return True


def _nothing_picked(sel: Selection, infos: list[SurfaceInfo], span_box) -> CaseError:
    lo, hi = np.round(span_box[0], 6) + 0.0, np.round(span_box[1], 6) + 0.0  # OCC pads boxes
    extent = ", ".join(f"{a} {lo[i]:.6g}..{hi[i]:.6g}" for i, a in enumerate("xyz"))
    fix = f"the part spans {extent} m"
    if sel.surfaces is not None:
        ids = sorted(i.tag for i in infos)
        missing = [s for s in sel.surfaces if s not in ids]
        if missing:
            return CaseError(
                f"{sel.where}.surfaces",
                f"selection {sel.name!r}: no boundary surface {missing[0]} on the part",
                f"use ids {ids[0]}..{ids[-1]} (listed as surface_<id> by femheat check)",
            )
    if sel.normal is not None and sel.plane is None and sel.box is None:
        fix = (
            f"no surface faces [{', '.join(f'{v:.3g}' for v in sel.normal)}] within "
            f"{sel.angle:g} degrees; check the "
            "direction (outward from the part) or raise angle"
        )
    return CaseError(f"{sel.where}", f"selection {sel.name!r} picks no face of the part", fix)


def apply_selections(
    gmsh, volumes: list[int], defaults: dict[str, list[int]], selections
) -> dict[str, list[int]]:
    """Re-group the boundary surfaces of `volumes` by the selections.

    Args:
        gmsh: the gmsh module with the built model (synchronised).
        volumes: volume tags of the part.
        defaults: face name -> surface tags before selection (every boundary surface once).
        selections: checked `Selection` records.

    Returns:
        Face name -> surface tags: default groups minus the picked surfaces (emptied groups
        dropped), then one group per selection.

    Raises:
        CaseError: a selection picks nothing, a surface is picked twice, or a selection's name
            is that of a default face that still has surfaces.
    """
    if not selections:
        return defaults
    boundary = [abs(t) for _, t in gmsh.model.getBoundary([(3, v) for v in volumes], combined=True)]
    bbox = gmsh.model.getBoundingBox(-1, -1)
    lo, hi = np.array(bbox[:3]), np.array(bbox[3:])
    span = float(max(hi - lo))
    tol = _tolerance(span)
    need_normals = any(s.normal is not None for s in selections)
    infos = [surface_info(gmsh, t, span, normals=need_normals) for t in boundary]
    owner: dict[int, Selection] = {}
    picked: dict[str, list[int]] = {}
    for sel in selections:
        tags = [i.tag for i in infos if _picks(sel, i, tol)]
        if not tags:
            raise _nothing_picked(sel, infos, (lo, hi))
        for t in tags:
            if t in owner:
                raise CaseError(
                    sel.where,
                    f"selection {sel.name!r} picks surface {t}, already picked by "
                    f"{owner[t].name!r}",
                    "narrow one of the two selections so each surface is picked once",
                )
            owner[t] = sel
        picked[sel.name] = tags
    out: dict[str, list[int]] = {}
    for name, tags in defaults.items():
        rest = [t for t in tags if t not in owner]
        if rest:
            out[name] = rest
    for sel in selections:
        if sel.name in out:
            raise CaseError(
                f"{sel.where}.name",
                f"{sel.name!r} is already the name of other faces of the part",
                "choose another name",
            )
        out[sel.name] = picked[sel.name]
    return out
