"""Rectangle (planar or axisymmetric) and box (solid), spanning 0..size in each direction.

Faces are named by the coordinate plane they lie on: ``xmin xmax ymin ymax zmin zmax``. In the
axisymmetric model x is the radius and y the axis, so ``xmin`` is the axis.
"""

from __future__ import annotations

import numpy as np

from .base import Built, Param, ShapeDef, ShapeParamError, register

__all__ = ["plane_name", "faces_by_plane"]


def plane_name(bbox, size, tol) -> str | None:
    """'xmin', 'ymax', ... for an entity whose bounding box is flat on a side of 0..size."""
    lo, hi = np.asarray(bbox[:3]), np.asarray(bbox[3:])
    for axis, letter in enumerate("xyz"[: len(size)]):
        if abs(hi[axis] - lo[axis]) < tol:
            if abs(lo[axis]) < tol:
                return f"{letter}min"
            if abs(lo[axis] - size[axis]) < tol:
                return f"{letter}max"
    return None


def faces_by_plane(gmsh, dim: int, tag: int, size) -> dict[str, list[int]]:
    """Group the boundary entities of (dim, tag) by the coordinate plane they lie on."""
    tol = max(1e-6 * max(size), 1e-6)  # OCC pads bounding boxes by about 1e-7
    groups: dict[str, list[int]] = {}
    for _, btag in gmsh.model.getBoundary([(dim, tag)], oriented=False):
        name = plane_name(gmsh.model.getBoundingBox(dim - 1, btag), size, tol)
        if name is None:
            raise ValueError(f"boundary entity {btag} lies on no coordinate plane")
        groups.setdefault(name, []).append(abs(btag))
    return groups


def _check_size(count: int, label: str):
    def check(params: dict, model: str) -> None:
        if len(params["size"]) != count:
            raise ShapeParamError(
                "size",
                f"needs {count} numbers {label}, got {len(params['size'])}",
                f"give size = {label} in m",
            )

    return check


def _build_rectangle(gmsh, params: dict, model: str) -> Built:
    size = params["size"]
    tag = gmsh.model.occ.addRectangle(0.0, 0.0, 0.0, size[0], size[1])
    gmsh.model.occ.synchronize()
    return Built(2, faces_by_plane(gmsh, 2, tag, size), [tag])


def _build_box(gmsh, params: dict, model: str) -> Built:
    size = params["size"]
    tag = gmsh.model.occ.addBox(0.0, 0.0, 0.0, *size)
    gmsh.model.occ.synchronize()
    return Built(3, faces_by_plane(gmsh, 3, tag, size), [tag])


register(
    ShapeDef(
        name="rectangle",
        models=("planar", "axisymmetric"),
        params=(Param("size", "lengths", "[width, height] in m; x is the radius if axisymmetric"),),
        faces=("xmin", "xmax", "ymin", "ymax"),
        doc="Rectangle spanning 0..size; faces named by the plane they lie on. Axisymmetric: "
        "a solid cylinder of radius size[0] and height size[1]; xmin is the axis.",
        build=_build_rectangle,
        check=_check_size(2, "[width, height]"),
        thickness=lambda p: min(p["size"]),
        axis_faces=("xmin",),
    )
)

register(
    ShapeDef(
        name="box",
        models=("solid",),
        params=(Param("size", "lengths", "[x, y, z] extents in m"),),
        faces=("xmin", "xmax", "ymin", "ymax", "zmin", "zmax"),
        doc="Rectangular block spanning 0..size; faces named by the plane they lie on.",
        build=_build_box,
        check=_check_size(3, "[x, y, z]"),
        thickness=lambda p: min(p["size"]),
    )
)
