"""Meshes made elsewhere: ``[part] mesh = "part.msh"`` (shape "mesh"), for any model.

::

    [part]
    model = "solid"            # or "planar" / "axisymmetric": the mesh must match
    mesh = "bracket.msh"       # relative to the case file's folder

Formats. gmsh ``.msh`` files (any version gmsh reads) are read with gmsh itself; other formats
through meshio (Abaqus ``.inp``, MED ``.med`` when h5py is installed, VTK ``.vtu``, ...).

Faces. Named groups of boundary elements become faces: gmsh physical groups of lines (2D) or
surfaces (3D), Abaqus element sets, MED groups, and integer cell data written by meshio from
cell sets (key ``"a-b-c"`` holding 0, 1, 2). A gmsh group without a name is called
``group_<tag>``. Boundary elements in no group form the face ``unnamed`` (exposed to the
furnace unless set otherwise); group elements that are not on the boundary are left out.

Cells. Triangles (planar, axisymmetric: in the x-y plane, x >= 0 the radius) or tetrahedra
(solid). Quadratic (or higher) elements are converted to linear ones by dropping their
mid-side nodes, as the solver uses linear elements; the node count then falls. Quadrilaterals,
hexahedra, prisms and pyramids are refused. Named groups of cells are kept as
``PartMesh.zones`` (for material zones later).
"""

from __future__ import annotations

import contextlib
import io
import logging
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from ..errors import CaseError
from .base import Built, Param, ShapeDef, register

if TYPE_CHECKING:
    from ..mesh import PartMesh

__all__ = ["load_mesh_file", "UNNAMED"]

log = logging.getLogger(__name__)

UNNAMED = "unnamed"
_WHERE = "part.mesh"
_TRI_EDGES = np.array([[0, 1], [1, 2], [2, 0]])
_TET_FACES = np.array([[0, 2, 1], [0, 1, 3], [0, 3, 2], [1, 2, 3]])

# meshio cell type prefix -> (dimension, vertices of a simplex, None if not a simplex)
_MESHIO_TYPES = {
    "vertex": (0, 1),
    "line": (1, 2),
    "triangle": (2, 3),
    "quad": (2, None),
    "polygon": (2, None),
    "tetra": (3, 4),
    "hexahedron": (3, None),
    "wedge": (3, None),
    "pyramid": (3, None),
}


@dataclass
class _Block:
    """Elements of one type: dimension, vertex connectivity (indices into points), its name."""

    dim: int
    conn: np.ndarray | None  # None: not a simplex
    kind: str
    quadratic: bool


def load_mesh_file(path: str | Path, model: str) -> PartMesh:
    """Read a mesh file into a PartMesh with named faces (and zones).

    Args:
        path: the mesh file. model: "planar", "axisymmetric" or "solid".

    Raises:
        CaseError: at ``part.mesh``: missing or unreadable file, wrong cell types or
            dimension for the model, a 2D mesh off the x-y plane, negative radius, overlapping
            face groups, degenerate cells.
    """
    path = Path(path)
    if not path.is_file():
        where = "is a folder" if path.is_dir() else "no such file"
        raise CaseError(
            _WHERE,
            f"{str(path)!r}: {where}",
            "check the path; a relative path is taken from the case file's folder",
        )
    if path.suffix.lower() == ".msh":
        points, blocks, sets = _read_gmsh(path)
    else:
        points, blocks, sets = _read_meshio(path)
    return _assemble(points, blocks, sets, model, path.name)


# --- readers: points (N, 3), blocks, sets: name -> [(block index, element indices)] ----------


def _read_gmsh(path: Path):
    from ..mesh import gmsh_session
    from .cad import quiet_output

    with gmsh_session() as gmsh:
        try:
            with quiet_output():
                gmsh.merge(str(path))
        except Exception as exc:
            raise CaseError(
                _WHERE, f"{path.name} could not be read as a gmsh mesh ({exc})", _fix_format()
            ) from None
        tags, coords, _ = gmsh.model.mesh.getNodes()
        if tags.size == 0:
            raise CaseError(_WHERE, f"{path.name} holds no mesh nodes", _fix_format())
        order = np.argsort(tags)
        tags = tags[order].astype(np.int64)
        points = coords.reshape(-1, 3)[order]

        def index(node_tags):
            return np.searchsorted(tags, node_tags.astype(np.int64))

        blocks: list[_Block] = []
        where: dict[tuple[int, int], list[int]] = {}  # (dim, entity) -> block indices
        for dim, ent in gmsh.model.getEntities():
            types, _, nodes = gmsh.model.mesh.getElements(dim, ent)
            for et, nt in zip(types, nodes, strict=True):
                name, edim, order_, nnodes, _, nprim = gmsh.model.mesh.getElementProperties(et)
                conn = nt.reshape(-1, nnodes)[:, :nprim]
                simplex = nprim == edim + 1
                where.setdefault((dim, ent), []).append(len(blocks))
                blocks.append(_Block(edim, index(conn) if simplex else None, name, order_ > 1))
        sets: dict[str, list[tuple[int, np.ndarray]]] = {}
        for gdim, gtag in gmsh.model.getPhysicalGroups():
            name = gmsh.model.getPhysicalName(gdim, gtag) or f"group_{gtag}"
            members = sets.setdefault(name, [])
            for ent in gmsh.model.getEntitiesForPhysicalGroup(gdim, gtag):
                for b in where.get((gdim, int(ent)), []):
                    n = 0 if blocks[b].conn is None else blocks[b].conn.shape[0]
                    members.append((b, np.arange(n)))
    return points, blocks, sets


def _fix_format() -> str:
    return "give a gmsh .msh file or another format meshio reads (.inp, .med, .vtu, ...)"


def _read_meshio(path: Path):
    import meshio

    sink = io.StringIO()
    try:
        with contextlib.redirect_stdout(sink), contextlib.redirect_stderr(sink):
            m = meshio.read(str(path))
    except (Exception, SystemExit) as exc:  # some meshio readers call sys.exit on bad input
        text = sink.getvalue() if isinstance(exc, SystemExit) else str(exc)
        text = (text.strip().splitlines() or [type(exc).__name__])[0].strip()
        raise CaseError(_WHERE, f"{path.name} could not be read ({text})", _fix_format()) from None
    if sink.getvalue().strip():
        log.debug("mesh reader output: %s", sink.getvalue().strip())
    points = np.zeros((m.points.shape[0], 3))
    points[:, : m.points.shape[1]] = m.points
    blocks: list[_Block] = []
    for cb in m.cells:
        prefix = next(
            (p for p in sorted(_MESHIO_TYPES, key=len, reverse=True) if cb.type.startswith(p)), None
        )
        if prefix is None:
            blocks.append(_Block(-1, None, cb.type, False))
            continue
        dim, nv = _MESHIO_TYPES[prefix]
        data = np.asarray(cb.data, dtype=np.int64)
        conn = data[:, :nv] if nv is not None else None
        blocks.append(_Block(dim, conn, cb.type, nv is not None and data.shape[1] > nv))
    sets: dict[str, list[tuple[int, np.ndarray]]] = {}
    for name, per_block in (m.cell_sets or {}).items():
        if name.startswith("gmsh:"):
            continue
        sets[name] = [
            (b, np.asarray(idx, dtype=np.int64))
            for b, idx in enumerate(per_block)
            if idx is not None and len(idx)
        ]
    tags = getattr(m, "cell_tags", None) or {}
    if tags and "cell_tags" in m.cell_data:  # MED families: tag -> group names
        for b, data in enumerate(m.cell_data["cell_tags"]):
            for tag, names in tags.items():
                idx = np.flatnonzero(np.asarray(data) == tag)
                for name in names if idx.size else ():
                    sets.setdefault(name, []).append((b, idx))
    for key, data in m.cell_data.items():
        names = list(dict.fromkeys(key.split("-")))
        if key in ("cell_tags",) or ":" in key or len(data) != len(blocks):
            continue
        if not all(np.asarray(d).dtype.kind in "iu" for d in data):
            continue
        values = np.unique(np.concatenate([np.asarray(d).ravel() for d in data]))
        values = values[values >= 0]
        if values.size and values.max() < len(names) and any(n not in sets for n in names):
            for i, name in enumerate(names):
                sets[name] = [(b, np.flatnonzero(np.asarray(d) == i)) for b, d in enumerate(data)]
    return points, blocks, sets


# --- checks and conversion ------------------------------------------------------------------


def _assemble(points, blocks: list[_Block], sets, model: str, name: str):
    from ..mesh import PartMesh

    dim = 3 if model == "solid" else 2
    cell_type = "tetrahedra" if dim == 3 else "triangles"
    mine = [i for i, b in enumerate(blocks) if b.dim == dim]
    bad = [blocks[i].kind for i in mine if blocks[i].conn is None]
    if bad:
        raise CaseError(
            _WHERE,
            f"{name} holds {bad[0]} elements; only {cell_type} can be used",
            "mesh the part with simplices (in gmsh: no recombination)",
        )
    top = max((b.dim for b in blocks), default=-1)
    if not mine or top > dim:
        if top != dim and top in (2, 3):
            kind = "solid" if top == 3 else "2D (planar or axisymmetric)"
            raise CaseError(
                _WHERE,
                f"{name} is a {kind} mesh but the case model is {model!r}",
                'set model = "solid"' if top == 3 else 'set model = "planar" or "axisymmetric"',
            )
        raise CaseError(
            _WHERE,
            f"{name} holds no {cell_type}",
            "save the volume elements too (in gmsh: a physical group on the part, or "
            "Mesh.SaveAll = 1)",
        )
    if any(b.quadratic for b in blocks if b.dim in (dim, dim - 1)):
        log.warning("%s: quadratic elements converted to linear (mid-side nodes dropped)", name)
    offsets = np.cumsum([0] + [blocks[i].conn.shape[0] for i in mine])
    cells = np.concatenate([blocks[i].conn for i in mine])

    span = float(np.ptp(points[np.unique(cells)], axis=0).max())
    if dim == 2:
        z = points[np.unique(cells), 2]
        if np.ptp(z) > 1e-9 * max(span, 1e-300) or abs(z).max() > 1e-9 * max(span, 1e-300):
            raise CaseError(
                _WHERE,
                f"{name}: the 2D mesh is not in the x-y plane (z from {z.min():g} to {z.max():g})",
                "place the section in the x-y plane, z = 0",
            )
        if model == "axisymmetric":
            xmin = points[np.unique(cells), 0].min()
            if xmin < -1e-9 * span:
                raise CaseError(
                    _WHERE,
                    f"{name}: points at negative radius (x = {xmin:g} m)",
                    "in the axisymmetric model x is the radius: put the section at x >= 0",
                )

    used = np.unique(cells)
    renumber = np.full(points.shape[0], -1, dtype=np.int64)
    renumber[used] = np.arange(used.size)
    pts = points[used, :dim].copy()
    cells = renumber[cells]
    _check_cells(pts, cells, name)

    facets: dict[str, np.ndarray] = {}
    zones: dict[str, np.ndarray] = {}
    for set_name, members in sets.items():
        f = [
            renumber[blocks[b].conn[idx]]
            for b, idx in members
            if blocks[b].dim == dim - 1 and blocks[b].conn is not None
        ]
        z = [offsets[mine.index(b)] + idx for b, idx in members if b in mine]
        if f:
            rows = np.concatenate(f)
            if np.any(rows < 0):
                rows = rows[np.all(rows >= 0, axis=1)]
            facets[set_name] = rows
        if z and sum(len(i) for i in z):
            zones[set_name] = np.unique(np.concatenate(z))
    faces = _boundary_faces(cells, dim, facets, name)
    edges = pts[cells[:, [0, 1]]]
    size = float(np.median(np.linalg.norm(edges[:, 1] - edges[:, 0], axis=1)))
    return PartMesh(pts, cells, faces, model == "axisymmetric", size, zones)


def _check_cells(pts: np.ndarray, cells: np.ndarray, name: str) -> None:
    p = pts[cells]
    if pts.shape[1] == 2:
        a, b = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]
        measure = np.abs(a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0]) / 2
        scale = np.linalg.norm(a, axis=1) ** 2
    else:
        a, b, c = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0], p[:, 3] - p[:, 0]
        measure = np.abs(np.einsum("ij,ij->i", a, np.cross(b, c))) / 6
        scale = np.linalg.norm(a, axis=1) ** 3
    flat = np.flatnonzero(measure <= 1e-12 * scale)
    if flat.size:
        raise CaseError(
            _WHERE,
            f"{name}: {flat.size} element(s) of zero size (first: cell {flat[0]})",
            "repair the mesh (remove duplicate or collapsed elements) and save it again",
        )


def _boundary_faces(cells, dim: int, facets: dict[str, np.ndarray], name: str) -> dict:
    """Named faces restricted to the boundary; uncovered boundary elements form `UNNAMED`."""
    local = _TRI_EDGES if dim == 2 else _TET_FACES
    allf = cells[:, local].reshape(-1, dim)
    key_all = np.sort(allf, axis=1)
    uniq, inv, counts = np.unique(key_all, axis=0, return_inverse=True, return_counts=True)
    inv = inv.ravel()
    on_boundary = counts[inv] == 1
    boundary = allf[on_boundary]  # original orientation
    bkeys = key_all[on_boundary]
    names = list(facets)
    stacked = [bkeys] + [np.sort(facets[n], axis=1) for n in names]
    _, ids = np.unique(np.concatenate(stacked), axis=0, return_inverse=True)
    ids = ids.ravel()
    split = np.cumsum([len(s) for s in stacked])[:-1]
    bid, *gids = np.split(ids, split)
    slot = np.full(ids.max() + 1 if ids.size else 0, -1, dtype=np.int64)
    slot[bid] = np.arange(bid.size)
    owner = np.full(bid.size, -1, dtype=np.int64)
    faces: dict[str, np.ndarray] = {}
    for k, (n, g) in enumerate(zip(names, gids, strict=True)):
        pos = np.unique(slot[g][slot[g] >= 0])
        dropped = g.size - np.count_nonzero(slot[g] >= 0)
        if dropped:
            log.info("%s: group %r has %d elements inside the part, left out", name, n, dropped)
        if pos.size == 0:
            continue
        clash = owner[pos]
        if np.any(clash >= 0):
            other = names[int(clash[clash >= 0][0])]
            raise CaseError(
                _WHERE,
                f"{name}: groups {other!r} and {n!r} share boundary elements",
                "give each boundary element one group (a face takes one condition)",
            )
        owner[pos] = k
        faces[n] = boundary[pos]
    rest = np.flatnonzero(owner < 0)
    if rest.size:
        label = UNNAMED if UNNAMED not in faces else f"{UNNAMED}_boundary"
        faces[label] = boundary[rest]
    return faces


def _no_build(gmsh, params: dict, model: str) -> Built:  # pragma: no cover - load is used
    raise RuntimeError("a mesh file is loaded, not built")


register(
    ShapeDef(
        name="mesh",
        models=("planar", "axisymmetric", "solid"),
        params=(Param("mesh", "path", "mesh file (.msh, or a format meshio reads)"),),
        faces=(),
        doc="A mesh made elsewhere: gmsh .msh or a format meshio reads. Faces: its named "
        "groups of boundary elements; boundary elements in no group form the face unnamed.",
        build=_no_build,
        face_names=lambda p: (),
        load=lambda params, model: load_mesh_file(params["mesh"], model),
    )
)
