"""Starting fields: the final field of an earlier run, or a field from a VTK file, on this mesh.

An earlier run's results folder holds ``fields.pvd`` (the frame collection written by
`femheat.output.vtk`) with point data ``temperature_C``; the frame with the latest time is
its final field. Any VTK file meshio reads (.vtu, .vtk) works the same way, and a ``.pvd``
given directly picks its latest frame.

The field is moved onto the new mesh node by node: copied when the nodes are the same;
otherwise interpolated linearly inside the source cell (triangle or tetrahedron) that holds
the node, and, for nodes outside every source cell (a boundary discretised differently), taken
from the nearest source node. Coordinates in m; temperatures in C.
"""

from __future__ import annotations

import logging
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np

from .errors import CaseError

__all__ = ["latest_frame", "read_point_field", "map_to_nodes", "initial_from_case"]

log = logging.getLogger(__name__)


def latest_frame(pvd: Path, where: str) -> Path:
    """The data file of the frame with the largest time in a ParaView collection."""
    try:
        root = ET.parse(pvd).getroot()
    except (OSError, ET.ParseError) as exc:
        raise CaseError(
            where, f"cannot read {str(pvd)!r} ({exc})", "give a .pvd written by femheat"
        ) from None
    frames = []
    for ds in root.iter("DataSet"):
        try:
            frames.append((float(ds.get("timestep", "0")), ds.get("file")))
        except ValueError:
            continue
    frames = [f for f in frames if f[1]]
    if not frames:
        raise CaseError(
            where,
            f"{str(pvd)!r} lists no frames",
            "run the earlier case with [output] fields = true, or give a .vtu file",
        )
    _, name = max(frames, key=lambda f: f[0])
    return pvd.parent / name


def _source_path(base_dir: Path, text: str, from_run: bool, where: str) -> Path:
    path = Path(text).expanduser()
    if not path.is_absolute():
        path = Path(base_dir) / path
    if from_run:
        if not path.is_dir():
            raise CaseError(
                where,
                f"no results folder {str(path)!r}",
                "give the --out folder of the earlier run, relative to this case file",
            )
        pvd = path / "fields.pvd"
        if not pvd.is_file():
            raise CaseError(
                where,
                f"{str(path)!r} holds no fields.pvd (the earlier run saved no fields)",
                "run the earlier case with [output] fields = true",
            )
        return latest_frame(pvd, where)
    if not path.is_file():
        raise CaseError(
            where, f"no such file {str(path)!r}", "check the path (relative to the case file)"
        )
    if path.suffix.lower() == ".pvd":
        return latest_frame(path, where)
    return path


def read_point_field(path: Path, name: str, dim: int, where: str):
    """Points (n, dim) in m, cells (m, dim + 1) and the point data `name` from a VTK file."""
    import meshio

    try:
        mesh = meshio.read(path)
    except Exception as exc:  # meshio raises many kinds for unreadable files
        raise CaseError(
            where,
            f"cannot read {str(path)!r} ({type(exc).__name__}: {exc})",
            "give a .vtu or .vtk file with point data",
        ) from None
    if name not in mesh.point_data:
        have = ", ".join(mesh.point_data) or "none"
        raise CaseError(
            where,
            f"{str(path)!r} has no point data {name!r} (it has: {have})",
            "set [initial] field to the name of the temperature data (in C)",
        )
    values = np.asarray(mesh.point_data[name], dtype=float).reshape(-1)
    points = np.asarray(mesh.points, dtype=float)
    if dim == 2 and points.shape[1] == 3:
        if np.max(np.abs(points[:, 2]), initial=0.0) > 1e-9 * max(np.ptp(points[:, :2]), 1e-300):
            raise CaseError(
                where,
                f"{str(path)!r} is a 3D field but the part is 2D",
                "start from a field of the same model (planar or axisymmetric section)",
            )
        points = points[:, :2]
    kind = "triangle" if dim == 2 else "tetra"
    blocks = [c.data for c in mesh.cells if c.type == kind]
    cells = np.concatenate(blocks) if blocks else np.zeros((0, dim + 1), dtype=int)
    if not np.all(np.isfinite(values)):
        raise CaseError(
            where,
            f"{name!r} in {str(path)!r} holds NaN or infinite values",
            "give a complete field",
        )
    return points[:, :dim], cells, values


def map_to_nodes(points, cells, values, targets, candidates: int = 12):
    """Values at `targets` from a P1 field on (points, cells).

    Returns:
        (values at targets, distance of each target from the source mesh: 0 inside a cell,
        else the distance to the nearest source node), both arrays.
    """
    from scipy.spatial import cKDTree

    targets = np.asarray(targets, dtype=float)
    n, dim = targets.shape
    if points.shape == targets.shape and np.allclose(points, targets, rtol=0, atol=1e-12):
        return values.copy(), np.zeros(n)
    out = np.full(n, np.nan)
    gap = np.zeros(n)
    if cells.shape[0]:
        corners = points[cells]  # (m, dim + 1, dim)
        centroid = corners.mean(axis=1)
        k = min(candidates, cells.shape[0])
        _, near = cKDTree(centroid).query(targets, k=k)
        near = near.reshape(n, k)
        for j in range(k):
            todo = np.isnan(out)
            if not np.any(todo):
                break
            cell = near[todo, j]
            c = corners[cell]  # (t, dim + 1, dim)
            edges = np.transpose(c[:, 1:, :] - c[:, :1, :], (0, 2, 1))  # (t, dim, dim)
            rhs = targets[todo] - c[:, 0, :]
            ok = np.abs(np.linalg.det(edges)) > 0
            lam = np.zeros((cell.size, dim))
            lam[ok] = np.linalg.solve(edges[ok], rhs[ok][..., None])[..., 0]
            bary = np.column_stack([1.0 - lam.sum(axis=1), lam])
            inside = ok & np.all(bary >= -1e-9, axis=1)
            idx = np.flatnonzero(todo)[inside]
            out[idx] = np.einsum("ij,ij->i", bary[inside], values[cells[cell[inside]]])
    lost = np.isnan(out)
    if np.any(lost):
        dist, node = cKDTree(points).query(targets[lost])
        out[lost] = values[node]
        gap[lost] = dist
    return out, gap


def initial_from_case(initial, base_dir, mesh) -> tuple[np.ndarray, list[str]]:
    """The starting field (C per node) for `case.Initial` on a `PartMesh`, and warnings.

    Raises:
        CaseError: missing or unreadable source, no such point data, wrong dimension.
    """
    if initial.temperature is not None:
        return np.full(mesh.nodes, float(initial.temperature)), []
    from_run = initial.from_run is not None
    key = "from_run" if from_run else "from_file"
    where = f"initial.{key}"
    path = _source_path(base_dir, getattr(initial, key), from_run, where)
    points, cells, values = read_point_field(path, initial.field, mesh.dim, where)
    field, gap = map_to_nodes(points, cells, values, mesh.points)
    warnings = []
    size = float(np.ptp(mesh.points, axis=0).max())
    far = gap > 1e-3 * size
    if np.any(far):
        warnings.append(
            f"initial field from {path.name}: {int(far.sum())} of {mesh.nodes} nodes lie outside "
            f"the earlier mesh (up to {1000 * gap.max():.3g} mm) and took the nearest value"
        )
    if field.min() <= -273.15:
        raise CaseError(
            where,
            f"the field in {path.name} goes below absolute zero",
            f"check that {initial.field!r} is in C",
        )
    log.info("initial field from %s: %.4g..%.4g C", path, field.min(), field.max())
    return field, warnings
