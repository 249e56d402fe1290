"""Characteristic lengths of a meshed part for the hand estimates: V/A and depth below the skin.

Measured on the mesh and its face conditions, so they hold for every shape:

* the volume ``V`` is the sum of the model's lumped nodal volumes (planar: per metre of depth;
  axisymmetric: the whole body of revolution);
* the exposed area ``A`` is the sum of the lumped face weights of every face heat can cross
  (not insulated or a symmetry plane, nor a face whose coefficients are all zero), with the
  same weights;
* the depth of a point is its distance to the nearest boundary segment (2D) or triangle (3D)
  of an exposed face. In the axisymmetric model the distance within the r-z section is the
  true distance, since the nearest point of a body of revolution lies in the same section.

:func:`box_sides` recognises a mesh that fills an axis-aligned rectangle (2D) or box (3D),
whatever shape produced it, by comparing its measure with that of its bounding box, and sorts
the faces onto the sides they lie on; the exact product solutions need that.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from .furnace import Contact, Exposure, Insulated

if TYPE_CHECKING:  # pragma: no cover
    from .model import FaceGroup, Model

__all__ = [
    "PartLengths",
    "BoxSides",
    "crosses",
    "exposed_faces",
    "exposed_area",
    "depth_below_exposed",
    "part_lengths",
    "box_sides",
]


def crosses(condition) -> bool:
    """Whether heat can cross a face with this condition: not insulated or symmetry, and not
    a furnace, convection or contact face whose coefficients are all zero."""
    if isinstance(condition, Insulated):
        return False
    if isinstance(condition, Exposure):
        return condition.htc > 0.0 or condition.emissivity > 0.0
    if isinstance(condition, Contact):
        return condition.conductance > 0.0
    return True


def exposed_faces(model: Model) -> list[FaceGroup]:
    """The faces of the model that heat can cross (:func:`crosses`)."""
    return [g for g in model.faces if crosses(g.condition)]


def exposed_area(model: Model) -> float:
    """Area of the exposed faces, m2 (planar: m2 per m of depth)."""
    return float(sum(g.area for g in exposed_faces(model)))


def _dot(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    return np.einsum("ij,ij->i", a, b)


def _segment_distance(p: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Distance from point ``p`` to each segment ``a[i] b[i]`` (any dimension), m."""
    ab = b - a
    length2 = _dot(ab, ab)
    s = _dot(p - a, ab) / np.where(length2 > 0.0, length2, 1.0)
    s = np.clip(s, 0.0, 1.0)
    return np.linalg.norm(a + s[:, None] * ab - p, axis=1)


def _triangle_distance(p: np.ndarray, a: np.ndarray, b: np.ndarray, c: np.ndarray) -> np.ndarray:
    """Distance from point ``p`` to each triangle ``a[i] b[i] c[i]`` in 3D, m.

    The distance to the plane where the projection falls inside the triangle (barycentric
    coordinates), else the distance to the nearest edge.
    """
    e0, e1 = b - a, c - a
    normal = np.cross(e0, e1)
    nn = _dot(normal, normal)
    ok = nn > 0.0
    height = _dot(p - a, normal) / np.where(ok, nn, 1.0)
    v = p - height[:, None] * normal - a
    d00, d01, d11 = _dot(e0, e0), _dot(e0, e1), _dot(e1, e1)
    d20, d21 = _dot(v, e0), _dot(v, e1)
    den = np.where(ok, d00 * d11 - d01 * d01, 1.0)
    beta = (d11 * d20 - d01 * d21) / den
    gamma = (d00 * d21 - d01 * d20) / den
    inside = ok & (beta >= 0.0) & (gamma >= 0.0) & (beta + gamma <= 1.0)
    edges = np.minimum(
        np.minimum(_segment_distance(p, a, b), _segment_distance(p, b, c)),
        _segment_distance(p, c, a),
    )
    return np.where(inside, np.abs(height) * np.sqrt(nn), edges)


def depth_below_exposed(model: Model, point) -> tuple[float, str]:
    """Distance from a point to the nearest exposed face, and that face's name.

    Args:
        model: the assembled model (its mesh and face conditions).
        point: coordinates, m: (x, y), (r, z) or (x, y, z).

    Returns:
        (depth in m, face name); ``(nan, "")`` when no face is exposed.
    """
    mesh = model.mesh
    p = np.asarray(point, dtype=float)
    best, name = math.inf, ""
    for g in exposed_faces(model):
        facets = mesh.faces[g.name]
        if facets.size == 0:
            continue
        corners = [mesh.points[facets[:, j]] for j in range(facets.shape[1])]
        if mesh.dim == 2:
            d = float(_segment_distance(p, *corners).min())
        else:
            d = float(_triangle_distance(p, *corners).min())
        if d < best:
            best, name = d, g.name
    return (best, name) if name else (math.nan, "")


@dataclass(frozen=True)
class PartLengths:
    """Characteristic lengths measured on the mesh.

    Attributes:
        volume_m3: volume, m3 (planar: m3 per m of depth).
        exposed_area_m2: area of the exposed faces, m2 (planar: m2 per m).
        volume_over_area_m: V/A, m (nan when nothing is exposed).
        point: the point the depth is measured from (the last point), m.
        depth_m: its distance to the nearest exposed face, m.
        nearest_face: the name of that face.
    """

    volume_m3: float
    exposed_area_m2: float
    volume_over_area_m: float
    point: tuple[float, ...]
    depth_m: float
    nearest_face: str


def part_lengths(model: Model, point) -> PartLengths:
    """Volume, exposed area, V/A and the depth of ``point`` below the nearest exposed face.

    Args:
        model: the assembled model. point: coordinates of the point, m.
    """
    volume, area = model.volume, exposed_area(model)
    depth, face = depth_below_exposed(model, point)
    return PartLengths(
        volume_m3=volume,
        exposed_area_m2=area,
        volume_over_area_m=volume / area if area > 0.0 else math.nan,
        point=tuple(float(v) for v in point),
        depth_m=depth,
        nearest_face=face,
    )


@dataclass(frozen=True)
class BoxSides:
    """A mesh that fills its axis-aligned bounding rectangle or box.

    Attributes:
        lower: smallest coordinates, m. upper: largest coordinates, m.
        sides: ``(axis, 0 or 1)`` (lower or upper side along that axis) -> the faces on it.
    """

    lower: tuple[float, ...]
    upper: tuple[float, ...]
    sides: dict[tuple[int, int], tuple[FaceGroup, ...]]

    @property
    def extents(self) -> tuple[float, ...]:
        return tuple(b - a for a, b in zip(self.lower, self.upper, strict=True))


def _cell_measure(points: np.ndarray, cells: np.ndarray) -> float:
    """Unweighted area (triangles) or volume (tetrahedra) of the cells, m2 or m3."""
    p = points[cells]
    if points.shape[1] == 2:
        a, b = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]
        return float(0.5 * np.abs(a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0]).sum())
    a, b, c = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0], p[:, 3] - p[:, 0]
    return float(np.abs(np.einsum("ij,ij->i", a, np.cross(b, c))).sum() / 6.0)


def box_sides(model: Model, rtol: float = 1e-9) -> BoxSides | None:
    """The sides of an axis-aligned rectangle or box mesh and the faces on each, else None.

    The mesh fills its bounding box when the cell measure equals the box's to ``rtol``. Every
    face must lie on one side (all its nodes on that plane), and every side must carry at least
    one face; otherwise None.

    Args:
        model: the assembled model (its mesh and faces).
        rtol: relative tolerance on the measure and on the positions of face nodes.
    """
    mesh = model.mesh
    lo, hi = mesh.points.min(axis=0), mesh.points.max(axis=0)
    ext = hi - lo
    if np.any(ext <= 0.0):
        return None
    box = float(np.prod(ext))
    if abs(_cell_measure(mesh.points, mesh.cells) - box) > rtol * box:
        return None
    tol = rtol * float(ext.max())
    sides: dict[tuple[int, int], list] = {}
    for g in model.faces:
        x = mesh.points[g.nodes]
        for axis in range(mesh.dim):
            if np.all(np.abs(x[:, axis] - lo[axis]) <= tol):
                sides.setdefault((axis, 0), []).append(g)
                break
            if np.all(np.abs(x[:, axis] - hi[axis]) <= tol):
                sides.setdefault((axis, 1), []).append(g)
                break
        else:
            return None
    if len(sides) != 2 * mesh.dim:
        return None
    return BoxSides(
        tuple(float(v) for v in lo),
        tuple(float(v) for v in hi),
        {k: tuple(v) for k, v in sides.items()},
    )
