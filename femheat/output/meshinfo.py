"""Mesh figures for the user: counts, shape quality and the worst angles.

Triangles: the interior angles (60 degrees each when equilateral). Tetrahedra: the dihedral
angles between faces (70.53 degrees each when regular). Very small or very large angles make
poor elements.
"""

from __future__ import annotations

import numpy as np

from ..mesh import PartMesh

__all__ = ["angle_range", "mesh_figures", "face_labels"]


def _triangle_angles(p: np.ndarray) -> np.ndarray:
    """(E, 3) interior angles in degrees of triangles with corners p (E, 3, dim)."""
    out = []
    for i in range(3):
        a = p[:, (i + 1) % 3] - p[:, i]
        b = p[:, (i + 2) % 3] - p[:, i]
        cos = np.einsum("ij,ij->i", a, b) / (np.linalg.norm(a, axis=1) * np.linalg.norm(b, axis=1))
        out.append(np.degrees(np.arccos(np.clip(cos, -1.0, 1.0))))
    return np.column_stack(out)


def _dihedral_angles(p: np.ndarray) -> np.ndarray:
    """(E, 6) dihedral angles in degrees of tetrahedra with corners p (E, 4, 3)."""
    out = []
    for i, j in ((0, 1), (0, 2), (0, 3), (1, 2), (1, 3), (2, 3)):
        k, m = (v for v in range(4) if v not in (i, j))
        e = p[:, j] - p[:, i]
        # normals of the two faces sharing edge (i, j), each oriented away from the edge
        n1 = np.cross(e, p[:, k] - p[:, i])
        n2 = np.cross(e, p[:, m] - p[:, i])
        cos = np.einsum("ij,ij->i", n1, n2) / (
            np.linalg.norm(n1, axis=1) * np.linalg.norm(n2, axis=1)
        )
        out.append(np.degrees(np.arccos(np.clip(cos, -1.0, 1.0))))
    return np.column_stack(out)


def angle_range(mesh: PartMesh) -> tuple[float, float]:
    """Smallest and largest element angle over the mesh, degrees.

    Interior angles of triangles (2D) or dihedral angles of tetrahedra (3D).
    """
    p = np.asarray(mesh.points, dtype=float)[mesh.cells]
    ang = _triangle_angles(p) if mesh.dim == 2 else _dihedral_angles(p)
    return float(ang.min()), float(ang.max())


def mesh_figures(mesh: PartMesh) -> dict:
    """Nodes, cells, element size, smallest quality and the angle range (degrees)."""
    lo, hi = angle_range(mesh)
    return {
        "nodes": int(mesh.nodes),
        "cells": int(mesh.cells.shape[0]),
        "element": "triangle" if mesh.dim == 2 else "tetrahedron",
        "size_m": float(mesh.size),
        "min_quality": float(mesh.quality().min()),
        "min_angle_deg": lo,
        "max_angle_deg": hi,
        "angle_kind": "interior" if mesh.dim == 2 else "dihedral",
    }


def face_labels(problem) -> dict[str, str]:
    """Face name -> "name (condition)" for legends; the axis of a body of revolution says so."""
    from ..errors import FemheatError
    from ..geometry import get_shape

    given = getattr(
        problem, "face_labels", None
    )  # the case file's words, when the problem has them
    if given:
        return {g.name: f"{g.name} ({given.get(g.name, '?')})" for g in problem.model.faces}
    axis: set[str] = set()
    if problem.part_model == "axisymmetric":
        try:
            axis = set(get_shape(problem.shape).axis_faces)
        except (FemheatError, AttributeError, KeyError):
            axis = set()
    return {
        g.name: f"{g.name} ({'axis' if g.name in axis else type(g.condition).__name__.lower()})"
        for g in problem.model.faces
    }
