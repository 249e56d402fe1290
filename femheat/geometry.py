"""Built-in part shapes as gmsh OpenCASCADE models with named faces.

Rectangle (planar or axisymmetric, x = radius and y = axis in the latter) and box (solid)
span 0..size in each direction; their faces are named by the coordinate plane they lie on:
``xmin xmax ymin ymax zmin zmax``.
"""

from __future__ import annotations

import numpy as np

__all__ = ["SHAPES", "face_names", "build_shape"]

SHAPES = {
    "rectangle": {"dim": 2, "faces": ("xmin", "xmax", "ymin", "ymax")},
    "box": {"dim": 3, "faces": ("xmin", "xmax", "ymin", "ymax", "zmin", "zmax")},
}


def face_names(shape: str) -> tuple[str, ...]:
    """Names of the faces of a built-in shape."""
    return SHAPES[shape]["faces"]


def _plane_name(bbox, size, tol) -> str | None:
    lo, hi = np.asarray(bbox[:3]), np.asarray(bbox[3:])
    for axis, letter in enumerate("xyz"[: len(size)]):
        if abs(hi[axis] - lo[axis]) < tol:
            if abs(lo[axis]) < tol:
                return f"{letter}min"
            if abs(lo[axis] - size[axis]) < tol:
                return f"{letter}max"
    return None


def build_shape(gmsh, shape: str, size) -> tuple[str, ...]:
    """Create the shape in the current gmsh model and tag its faces as physical groups.

    Args:
        gmsh: the initialised gmsh module.
        shape: "rectangle" or "box".
        size: extents in m, 2 or 3 numbers.

    Returns:
        The face names created.
    """
    occ = gmsh.model.occ
    if shape == "rectangle":
        tag = occ.addRectangle(0.0, 0.0, 0.0, size[0], size[1])
        dim = 2
    elif shape == "box":
        tag = occ.addBox(0.0, 0.0, 0.0, size[0], size[1], size[2])
        dim = 3
    else:  # the case loader only lets known shapes through
        raise ValueError(f"unknown shape {shape!r}")
    occ.synchronize()
    gmsh.model.addPhysicalGroup(dim, [tag], name="part")
    tol = max(1e-6 * max(size), 1e-6)  # OCC pads bounding boxes by about 1e-7
    groups: dict[str, list[int]] = {}
    for _, btag in gmsh.model.getBoundary([(dim, tag)], oriented=False):
        name = _plane_name(gmsh.model.getBoundingBox(dim - 1, btag), size, tol)
        if name is None:
            raise ValueError(f"face {btag} of {shape} lies on no coordinate plane")
        groups.setdefault(name, []).append(btag)
    for name in face_names(shape):
        gmsh.model.addPhysicalGroup(dim - 1, groups[name], name=name)
    return face_names(shape)
