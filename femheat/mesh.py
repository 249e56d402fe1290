"""Meshing with gmsh and the mesh record the solver uses.

`PartMesh` holds linear simplices (triangles in 2D, tetrahedra in 3D), the boundary elements
of every named face, and builds the scikit-fem mesh on demand. Conversion from gmsh is
vectorised; no per-element Python loops.
"""

from __future__ import annotations

import contextlib
import logging
from dataclasses import dataclass, field

import numpy as np

from .errors import FemheatError

__all__ = ["PartMesh", "gmsh_session", "mesh_shape", "default_size", "from_gmsh"]

log = logging.getLogger(__name__)

# gmsh element type ids: 2 = 3-node triangle, 4 = 4-node tetrahedron, 1 = 2-node line
_CELL_TYPE = {2: 2, 3: 4}
_FACET_TYPE = {2: 1, 3: 2}


@dataclass(frozen=True)
class PartMesh:
    """A simplex mesh with named boundary faces.

    Args:
        points: (N, dim) node coordinates, m.
        cells: (E, dim+1) node indices of the triangles or tetrahedra.
        faces: name -> (F, dim) node indices of the boundary segments or triangles.
        axisymmetric: x is the radius, y the axis; integrals carry the weight r.
        size: nominal element size, m.
    """

    points: np.ndarray
    cells: np.ndarray
    faces: dict[str, np.ndarray]
    axisymmetric: bool = False
    size: float = 0.0
    _cache: dict = field(default_factory=dict, repr=False, compare=False)

    @property
    def dim(self) -> int:
        return self.points.shape[1]

    @property
    def nodes(self) -> int:
        return self.points.shape[0]

    @property
    def face_names(self) -> tuple[str, ...]:
        return tuple(self.faces)

    def skfem(self):
        """The scikit-fem mesh (MeshTri or MeshTet), built once."""
        if "skfem" not in self._cache:
            from skfem import MeshTet, MeshTri

            cls = MeshTri if self.dim == 2 else MeshTet
            self._cache["skfem"] = cls(
                np.ascontiguousarray(self.points.T), np.ascontiguousarray(self.cells.T)
            )
        return self._cache["skfem"]

    def face_nodes(self, name: str) -> np.ndarray:
        """Sorted unique node indices on a face."""
        return np.unique(self.faces[name])

    def quality(self) -> np.ndarray:
        """Shape quality per cell in (0, 1]; 1 for an equilateral simplex.

        Triangles: 4 sqrt(3) A / sum(l^2). Tetrahedra: 6 sqrt(2) V / l_rms^3.
        """
        p = self.points[self.cells]
        if self.dim == 2:
            e = [p[:, 1] - p[:, 0], p[:, 2] - p[:, 1], p[:, 0] - p[:, 2]]
            area = 0.5 * np.abs(e[0][:, 0] * (-e[2][:, 1]) - e[0][:, 1] * (-e[2][:, 0]))
            l2 = sum((v**2).sum(1) for v in e)
            return 4.0 * np.sqrt(3.0) * area / l2
        a, b, c = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0], p[:, 3] - p[:, 0]
        vol = np.abs(np.einsum("ij,ij->i", a, np.cross(b, c))) / 6.0
        pairs = [(0, 1), (0, 2), (0, 3), (1, 2), (1, 3), (2, 3)]
        l2 = sum(((p[:, i] - p[:, j]) ** 2).sum(1) for i, j in pairs) / 6.0
        return 6.0 * np.sqrt(2.0) * vol / l2**1.5


@contextlib.contextmanager
def gmsh_session():
    """An initialised, quiet gmsh with a fresh model; finalised on exit."""
    try:
        import gmsh
    except ImportError as exc:  # pragma: no cover - gmsh is a dependency
        raise FemheatError("gmsh is not installed; fix: pip install gmsh") from exc
    started = not gmsh.isInitialized()
    if started:
        gmsh.initialize(interruptible=False)
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        gmsh.clear()
        gmsh.model.add("femheat")
        yield gmsh
    finally:
        gmsh.clear()
        if started:
            gmsh.finalize()


DEFAULT_NODES_LIMIT = 200_000


def default_size(extents) -> float:
    """Default element size (m): 1/20 of the smallest extent in 2D, 1/8 in 3D.

    Enlarged if the mesh would exceed about `DEFAULT_NODES_LIMIT` nodes.
    """
    dim = len(extents)
    h = float(min(extents)) / (20.0 if dim == 2 else 8.0)
    nodes = float(np.prod(extents)) / h**dim
    if nodes > DEFAULT_NODES_LIMIT:
        h *= (nodes / DEFAULT_NODES_LIMIT) ** (1.0 / dim)
    return h


def from_gmsh(gmsh, dim: int, axisymmetric: bool = False, size: float = 0.0) -> PartMesh:
    """Convert the current gmsh mesh into a PartMesh, faces from the named physical groups."""
    tags, coords, _ = gmsh.model.mesh.getNodes()
    coords = coords.reshape(-1, 3)[:, :dim]
    index = np.full(int(tags.max()) + 1, -1, dtype=np.int64)
    index[tags.astype(np.int64)] = np.arange(tags.size)

    cell_type = _CELL_TYPE[dim]
    blocks = []
    for _, ent in gmsh.model.getEntities(dim):
        types, _, nodes = gmsh.model.mesh.getElements(dim, ent)
        for et, nt in zip(types, nodes, strict=True):
            if et != cell_type:
                raise FemheatError(f"unexpected gmsh element type {et}; only linear simplices")
            blocks.append(nt.reshape(-1, dim + 1))
    if not blocks:
        raise FemheatError("gmsh produced no cells; fix: check the geometry and mesh size")
    cells = index[np.concatenate(blocks).astype(np.int64)]

    faces: dict[str, np.ndarray] = {}
    facet_type = _FACET_TYPE[dim]
    for gdim, gtag in gmsh.model.getPhysicalGroups(dim - 1):
        name = gmsh.model.getPhysicalName(gdim, gtag)
        parts = []
        for ent in gmsh.model.getEntitiesForPhysicalGroup(gdim, gtag):
            types, _, nodes = gmsh.model.mesh.getElements(gdim, ent)
            for et, nt in zip(types, nodes, strict=True):
                if et == facet_type:
                    parts.append(nt.reshape(-1, dim))
        faces[name] = index[np.concatenate(parts).astype(np.int64)]

    # keep only nodes used by cells, renumbered
    used = np.unique(cells)
    renumber = np.full(coords.shape[0], -1, dtype=np.int64)
    renumber[used] = np.arange(used.size)
    cells = renumber[cells]
    faces = {k: renumber[v] for k, v in faces.items()}
    for k, v in faces.items():
        if np.any(v < 0):
            raise FemheatError(f"face {k!r} has nodes that belong to no cell")
    return PartMesh(coords[used].copy(), cells, faces, axisymmetric, size)


def mesh_shape(shape: str, extents, size: float | None, axisymmetric: bool = False) -> PartMesh:
    """Mesh a built-in shape with gmsh.

    Args:
        shape: "rectangle" or "box".
        extents: dimensions in m.
        size: element size in m (None: `default_size`).
        axisymmetric: mark the mesh as an r-z section.
    """
    from .geometry import SHAPES, build_shape

    h = default_size(extents) if size is None else float(size)
    dim = SHAPES[shape]["dim"]
    with gmsh_session() as gmsh:
        build_shape(gmsh, shape, extents)
        gmsh.option.setNumber("Mesh.MeshSizeMax", h)
        gmsh.option.setNumber("Mesh.MeshSizeMin", 0.5 * h)
        gmsh.option.setNumber("Mesh.MeshSizeFromPoints", 0)
        gmsh.option.setNumber("Mesh.MeshSizeExtendFromBoundary", 0)
        gmsh.option.setNumber("Mesh.Algorithm", 6)
        gmsh.option.setNumber("Mesh.Algorithm3D", 10 if dim == 3 else 1)
        gmsh.model.mesh.generate(dim)
        mesh = from_gmsh(gmsh, dim, axisymmetric, h)
    log.info("meshed %s: %d nodes, %d cells", shape, mesh.nodes, mesh.cells.shape[0])
    return mesh
