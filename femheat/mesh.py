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

from .errors import CaseError, FemheatError

__all__ = [
    "PartMesh",
    "gmsh_session",
    "default_size",
    "from_gmsh",
    "mesh_part",
    "estimated_nodes",
]

log = logging.getLogger(__name__)

# gmsh element type ids: 2 = 3-node triangle, 4 = 4-node tetrahedron, 1 = 2-node line
_CELL_TYPE = {2: 2, 3: 4}
_FACET_TYPE = {2: 1, 3: 2}
# second order: 6-node triangle, 10-node tetrahedron; 3-node line, 6-node triangle
_QUADRATIC_CELL_TYPE = {2: 9, 3: 11}
_QUADRATIC_FACET_TYPE = {2: 8, 3: 9}
# corner pairs of the edge nodes of gmsh's 6-node triangle and 10-node tetrahedron, in order
_GMSH_EDGES = {
    2: ((0, 1), (1, 2), (2, 0)),
    3: ((0, 1), (1, 2), (2, 0), (3, 0), (3, 2), (3, 1)),
}


@dataclass(frozen=True)
class PartMesh:
    """A simplex mesh with named boundary faces.

    Args:
        points: (N, dim) node coordinates, m.
        cells: (E, dim+1) node indices of the triangles or tetrahedra.
        faces: name -> (F, dim) node indices of the boundary segments or triangles.
        axisymmetric: x is the radius, y the axis; integrals carry the weight r.
        size: nominal element size, m.
        zones: name -> indices into `cells` of named volume groups (from mesh files; kept
            for material zones, not used by the solver yet).
    """

    points: np.ndarray
    cells: np.ndarray
    faces: dict[str, np.ndarray]
    axisymmetric: bool = False
    size: float = 0.0
    zones: dict[str, np.ndarray] = field(default_factory=dict)
    _cache: dict = field(default_factory=dict, repr=False, compare=False)
    # second-order meshes from gmsh: ((M, 2) corner nodes of each edge, (M, dim) position of
    # its middle node, on the curved geometry); None for linear meshes
    curved_edges: tuple | None = field(default=None, repr=False, compare=False)

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
MAX_NODES = 3_000_000
ELEMENTS_ACROSS = {2: 20, 3: 12}  # default elements across the thinnest section


def default_size(thickness: float, dim: int) -> float:
    """Default element size (m): the thinnest section over 20 elements (2D) or 12 (3D)."""
    return float(thickness) / ELEMENTS_ACROSS[dim]


def estimated_nodes(measure: float, size: float, dim: int) -> float:
    """Rough node count of a simplex mesh of given area/volume and element size."""
    return measure / size**dim * (1.2 if dim == 2 else 0.75)


def from_gmsh(gmsh, dim: int, axisymmetric: bool = False, size: float = 0.0) -> PartMesh:
    """Convert the current gmsh mesh into a PartMesh, faces from the named physical groups."""
    tags, coords, _ = gmsh.model.mesh.getNodes()
    coords = coords.reshape(-1, 3)[:, :dim]
    index = np.full(int(tags.max()) + 1, -1, dtype=np.int64)
    index[tags.astype(np.int64)] = np.arange(tags.size)

    cell_type = _CELL_TYPE[dim]
    blocks = []
    curved = []  # second-order meshes: (corner a, corner b, edge node) per cell edge
    for _, ent in gmsh.model.getEntities(dim):
        types, _, nodes = gmsh.model.mesh.getElements(dim, ent)
        for et, nt in zip(types, nodes, strict=True):
            if et == cell_type:
                blocks.append(nt.reshape(-1, dim + 1))
            elif et == _QUADRATIC_CELL_TYPE[dim]:
                full = index[nt.reshape(-1, len(_GMSH_EDGES[dim]) + dim + 1).astype(np.int64)]
                blocks.append(nt.reshape(full.shape)[:, : dim + 1])
                for k, (i, j) in enumerate(_GMSH_EDGES[dim]):
                    curved.append(full[:, [i, j, dim + 1 + k]])
            else:
                raise FemheatError(f"unexpected gmsh element type {et}; only simplices")
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
                elif et == _QUADRATIC_FACET_TYPE[dim]:
                    parts.append(nt.reshape(-1, 3 if dim == 2 else 6)[:, :dim])
        faces[name] = index[np.concatenate(parts).astype(np.int64)]

    # keep only nodes used by cells, renumbered
    mark = np.zeros(coords.shape[0], dtype=bool)
    mark[cells.ravel()] = True
    used = np.flatnonzero(mark)
    renumber = np.full(coords.shape[0], -1, dtype=np.int64)
    renumber[used] = np.arange(used.size)
    cells = renumber[cells]
    faces = {k: renumber[v] for k, v in faces.items()}
    for k, v in faces.items():
        if np.any(v < 0):
            raise FemheatError(f"face {k!r} has nodes that belong to no cell")
    edges = None
    if curved:
        e = np.concatenate(curved)
        edges = (renumber[e[:, :2]], coords[e[:, 2]].copy())
    return PartMesh(coords[used].copy(), cells, faces, axisymmetric, size, curved_edges=edges)


COARSE_NODES = 4000  # the refined (surface) mesh starts from at least this many nodes
COARSE_ACROSS = 4  # and at least this many elements across the thinnest section
MAX_HALVINGS = 3


def _halvings(gmsh, thickness: float | None, h: float, dim: int) -> int:
    """How many times to halve a coarser mesh instead of meshing at size h directly.

    gmsh builds a large 2D mesh (and the surface mesh of a solid) much faster by meshing at
    2^k h and splitting every element k times (new nodes placed on the curved geometry; each
    triangle becomes four of its own shape): 115k nodes of the angle section took 7 s
    directly and 1.2 s so (k = 2). Only for shapes whose thinnest section is known, so that
    the coarse mesh still has `COARSE_ACROSS` elements across it; never for the volume of a
    solid (split tetrahedra lose quality, HXT meshes the volume fast anyway).
    """
    if thickness is None or thickness <= 0 or h <= 0:
        return 0
    area = sum(gmsh.model.occ.getMass(2, t) for _, t in gmsh.model.getEntities(2))
    nodes = estimated_nodes(area, h, 2)
    k = 0
    while (
        k < MAX_HALVINGS
        and nodes / 4 ** (k + 1) >= COARSE_NODES
        and 2 ** (k + 1) * h * COARSE_ACROSS <= thickness
    ):
        k += 1
    return k


def _generate(gmsh, dim: int, halvings: int) -> None:
    """Mesh the model: the 2D mesh (of the part, or of a solid's faces) at 2^halvings times
    the size, split `halvings` times; then a solid's volume at the full size."""
    if halvings:
        factor = gmsh.option.getNumber("Mesh.MeshSizeFactor")
        gmsh.option.setNumber("Mesh.MeshSizeFactor", factor * 2.0**halvings)
        try:
            gmsh.model.mesh.generate(2)
            for _ in range(halvings):
                gmsh.model.mesh.refine()
        finally:
            gmsh.option.setNumber("Mesh.MeshSizeFactor", factor)
        if dim == 2:
            return
    gmsh.model.mesh.generate(dim)


def _refinement_fields(gmsh, built, dim: int, h: float, refine, corner_size) -> float:
    """Set a background size field: finer near named faces and at corners. Returns the finest
    size asked for (m)."""
    field = gmsh.model.mesh.field
    fields = []
    finest = h
    facet_list = "CurvesList" if dim == 2 else "SurfacesList"
    for i, r in enumerate(refine):
        tags = []
        for name in r.faces:
            if name not in built.faces:
                raise CaseError(
                    f"mesh.refine[{i}].faces",
                    f"no face named {name!r} on this part",
                    f"use one of: {', '.join(built.faces)}",
                )
            tags += built.faces[name]
        dist = field.add("Distance")
        field.setNumbers(dist, facet_list, tags)
        field.setNumber(dist, "Sampling", 200)
        thr = field.add("Threshold")
        field.setNumber(thr, "InField", dist)
        field.setNumber(thr, "SizeMin", r.size)
        field.setNumber(thr, "SizeMax", h)
        field.setNumber(thr, "DistMin", 0.0)
        field.setNumber(thr, "DistMax", r.distance or 5.0 * r.size)
        fields.append(thr)
        finest = min(finest, r.size)
    if corner_size is not None:
        points = [t for _, t in gmsh.model.getEntities(0)]
        dist = field.add("Distance")
        field.setNumbers(dist, "PointsList", points)
        thr = field.add("Threshold")
        field.setNumber(thr, "InField", dist)
        field.setNumber(thr, "SizeMin", corner_size)
        field.setNumber(thr, "SizeMax", h)
        field.setNumber(thr, "DistMin", 0.0)
        field.setNumber(thr, "DistMax", 5.0 * corner_size)
        fields.append(thr)
        finest = min(finest, corner_size)
    if fields:
        both = field.add("Min")
        field.setNumbers(both, "FieldsList", fields)
        field.setAsBackgroundMesh(both)
    return finest


def mesh_part(
    shape_name: str,
    params: dict,
    model: str,
    size: float | None,
    base_dir=None,
    refine=(),
    corner_size: float | None = None,
    order: int = 1,
) -> PartMesh:
    """Build a registered shape with gmsh and mesh it; faces become named boundary groups.

    Args:
        shape_name: registered shape. params: its checked parameters. model: part model.
        base_dir: folder that relative file paths in the parameters are taken from.
        refine: `[[mesh.refine]]` records (faces, size, distance): finer near those faces.
        corner_size: finer elements (m) at every corner of the geometry.
        size: element size in m (None: from the thinnest section, enlarged if the mesh would
            exceed `DEFAULT_NODES_LIMIT` nodes).
        order: element order the mesh is for; the default size of order 2 is twice that of
            order 1 (about as many nodes across, once the edge midpoints are added).

    Raises:
        CaseError: the requested size would exceed `MAX_NODES`; the geometry failed to build.
    """
    from pathlib import Path

    from .geometry import get_shape, resolve_paths

    shape = get_shape(shape_name)
    params = resolve_paths(shape_name, params, base_dir or Path.cwd())
    if shape.load is not None:
        return shape.load(params, model)
    with gmsh_session() as gmsh:
        try:
            built = shape.build(gmsh, params, model)
        except FemheatError:
            raise
        except Exception as exc:
            raise CaseError(
                "part", f"the {shape_name} could not be built ({exc})", "check the shape parameters"
            ) from None
        dim = built.dim
        measure = sum(gmsh.model.occ.getMass(dim, t) for _, t in gmsh.model.getEntities(dim))
        if size is None:
            bbox = gmsh.model.getBoundingBox(-1, -1)
            span = max(bbox[3] - bbox[0], bbox[4] - bbox[1], bbox[5] - bbox[2])
            thick = shape.thickness(params) if shape.thickness else None
            thick = span / 10.0 if thick is None else thick
            h = default_size(thick, dim) * order
            nodes = estimated_nodes(measure, h, dim)
            if nodes > DEFAULT_NODES_LIMIT:
                h *= (nodes / DEFAULT_NODES_LIMIT) ** (1.0 / dim)
        else:
            h = float(size)
            nodes = estimated_nodes(measure, h, dim)
            if nodes > MAX_NODES:
                raise CaseError(
                    "mesh.size",
                    f"{h:g} m would give about {nodes:.3g} nodes, more than {MAX_NODES:.0e}",
                    "use a larger mesh.size",
                )
        vols = [t for _, t in gmsh.model.getEntities(dim)]
        gmsh.model.addPhysicalGroup(dim, vols, name="part")
        for name, tags in built.faces.items():
            gmsh.model.addPhysicalGroup(dim - 1, tags, name=name)
        finest = _refinement_fields(gmsh, built, dim, h, refine, corner_size)
        gmsh.option.setNumber("Mesh.MeshSizeMax", h)
        gmsh.option.setNumber("Mesh.MeshSizeMin", 0.2 * finest)
        gmsh.option.setNumber("Mesh.MeshSizeFromPoints", 0)
        gmsh.option.setNumber("Mesh.MeshSizeExtendFromBoundary", 0)
        # 2D: Frontal-Delaunay (6) for its regular triangles; plain Delaunay (5) for large
        # meshes, about twice as fast. 3D: HXT (10), on one thread so that the same case
        # always gives the same mesh (its threaded runs differ from run to run).
        big = estimated_nodes(measure, finest, dim) > 20_000
        halvings = _halvings(gmsh, shape.thickness(params) if shape.thickness else None, h, dim)
        gmsh.option.setNumber("Mesh.Algorithm", 5 if big and not halvings else 6)
        gmsh.option.setNumber("Mesh.Algorithm3D", 10 if dim == 3 else 1)
        gmsh.option.setNumber("General.NumThreads", 1)
        try:
            _generate(gmsh, dim, halvings)
        except Exception as exc:
            raise CaseError(
                "mesh",
                f"gmsh could not mesh the part ({exc})",
                "try a different mesh.size or check the geometry",
            ) from None
        if order == 2:
            # edge nodes on the curved geometry, for second-order elements
            gmsh.model.mesh.setOrder(2)
        mesh = from_gmsh(gmsh, dim, model == "axisymmetric", h)
    log.info("meshed %s: %d nodes, %d cells", shape_name, mesh.nodes, mesh.cells.shape[0])
    return mesh
