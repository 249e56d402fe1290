"""Second-order (P2) elements: their nodes as a mesh, and their lumped operators.

A P2 triangle has 6 nodes (3 corners, 3 edge midpoints), a P2 tetrahedron 10. Everything
after the model (watchers, probes, VTK, pictures, starting fields) works on nodal values of
a linear mesh; for P2 that mesh is the *node mesh*: every element split at its edge
midpoints (a triangle into 4, a tetrahedron into 8), whose points are exactly the P2 nodes.
Nodal fields therefore pass through unchanged and are shown as their piecewise-linear
interpolant on the split elements.

Capacity and face weights are lumped by diagonal scaling (Hinton, Rock & Zienkiewicz, "A
note on mass lumping and related processes in the finite element method", Earthquake Eng.
Struct. Dyn. 4 (1976) 245-249): each element's diagonal of the consistent matrix, scaled so
the element's total is kept. For P2 this gives positive weights (row sums would give zero or
negative corner weights), e.g. a triangle's corners A/19 and midpoints 16A/57.
"""

from __future__ import annotations

import numpy as np

from .mesh import PartMesh

__all__ = ["QuadraticSpace", "quadratic_space"]

# local (corner, corner) pairs of the edges of a triangle and a tetrahedron
_EDGES = {
    2: ((0, 1), (1, 2), (0, 2)),
    3: ((0, 1), (1, 2), (0, 2), (0, 3), (1, 3), (2, 3)),
}
# sub-elements in local node numbers: corners 0..dim, then the edges above as dim+1...
_SPLIT = {
    2: ((0, 3, 5), (3, 1, 4), (5, 4, 2), (3, 4, 5)),
    # four corner tetrahedra, then the inner octahedron cut along the e02-e13 diagonal
    3: (
        (0, 4, 6, 7),
        (4, 1, 5, 8),
        (6, 5, 2, 9),
        (7, 8, 9, 3),
        (6, 8, 4, 5),
        (6, 8, 5, 9),
        (6, 8, 9, 7),
        (6, 8, 7, 4),
    ),
}


class _EdgeIndex:
    """Look up the midpoint node of an edge given by its two corner nodes."""

    def __init__(self, a: np.ndarray, b: np.ndarray, node: np.ndarray, n: int):
        key = np.minimum(a, b) * n + np.maximum(a, b)
        self._keys, first = np.unique(key, return_index=True)
        self._nodes = node[first]
        self._n = n

    def __call__(self, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        key = np.minimum(a, b) * self._n + np.maximum(a, b)
        pos = np.searchsorted(self._keys, key)
        pos = np.minimum(pos, self._keys.size - 1)
        if not np.array_equal(self._keys[pos], key):
            raise ValueError("an edge of a face is not an edge of the mesh")
        return self._nodes[pos]


def _orient(points: np.ndarray, cells: np.ndarray) -> np.ndarray:
    """Swap two nodes of negatively oriented simplices so all have positive measure."""
    p = points[cells]
    if points.shape[1] == 2:
        a, b = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]
        det = a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0]
    else:
        det = np.einsum(
            "ij,ij->i", p[:, 1] - p[:, 0], np.cross(p[:, 2] - p[:, 0], p[:, 3] - p[:, 0])
        )
    cells = cells.copy()
    neg = det < 0
    cells[neg, 0], cells[neg, 1] = cells[neg, 1], cells[neg, 0].copy()
    return cells


def _gauss_line(order: int):
    s, w = np.polynomial.legendre.leggauss(order)
    return 0.5 * (s + 1.0), 0.5 * w


def _scaled_diagonal(shape: np.ndarray, jw: np.ndarray) -> np.ndarray:
    """Diagonal scaling: (F, nloc) weights from shape values (nloc, q) and jacobian x
    quadrature weight x w (F, q)."""
    diag = np.einsum("iq,fq->fi", shape**2, jw)
    total = jw.sum(axis=1)
    scale = np.divide(total, diag.sum(axis=1), out=np.zeros_like(total), where=total > 0)
    return diag * scale[:, None]  # facets on the axis (r = 0 throughout) carry nothing


def _edge_weights(p: np.ndarray, axisymmetric: bool) -> np.ndarray:
    """Lumped weights (m2; planar per m depth) of the nodes of quadratic boundary edges.

    Args:
        p: (F, 3, 2) coordinates of (corner a, edge node, corner b), m; the edge is the
            parabola through them (a straight edge when the edge node is the midpoint).
    """
    s, w = _gauss_line(6)
    shape = np.stack([(1 - s) * (1 - 2 * s), 4 * s * (1 - s), s * (2 * s - 1)])  # (3, q)
    dshape = np.stack([4 * s - 3, 4 - 8 * s, 4 * s - 1])
    x = np.einsum("iq,fid->fqd", shape, p)
    dx = np.einsum("iq,fid->fqd", dshape, p)
    jw = np.linalg.norm(dx, axis=2) * w  # (F, q)
    if axisymmetric:
        jw = jw * 2.0 * np.pi * x[:, :, 0]
    return _scaled_diagonal(shape, jw)


# 6-point rule of degree 4 on the triangle (Dunavant 1985, Int. J. Numer. Meth. Eng. 21)
_A, _B = 0.445948490915965, 0.091576213509771
_TRI_POINTS = np.array(
    [[_A, _A], [1 - 2 * _A, _A], [_A, 1 - 2 * _A], [_B, _B], [1 - 2 * _B, _B], [_B, 1 - 2 * _B]]
)
_TRI_WEIGHTS = 0.5 * np.array([0.223381589678011] * 3 + [0.109951743655322] * 3)


def _triangle_weights(p: np.ndarray) -> np.ndarray:
    """Lumped weights (m2) of the nodes of quadratic boundary triangles.

    Args:
        p: (F, 6, 3) coordinates of corners 0, 1, 2 and edge nodes 01, 12, 02, m.
    """
    u, v = _TRI_POINTS[:, 0], _TRI_POINTS[:, 1]
    l0, l1, l2 = 1 - u - v, u, v
    shape = np.stack(
        [
            l0 * (2 * l0 - 1),
            l1 * (2 * l1 - 1),
            l2 * (2 * l2 - 1),
            4 * l0 * l1,
            4 * l1 * l2,
            4 * l0 * l2,
        ]
    )
    du = np.stack([1 - 4 * l0, 4 * l1 - 1, 0 * u, 4 * (l0 - l1), 4 * l2, -4 * l2])
    dv = np.stack([1 - 4 * l0, 0 * u, 4 * l2 - 1, -4 * l1, 4 * l1, 4 * (l0 - l2)])
    xu = np.einsum("iq,fid->fqd", du, p)
    xv = np.einsum("iq,fid->fqd", dv, p)
    jw = np.linalg.norm(np.cross(xu, xv), axis=2) * _TRI_WEIGHTS
    return _scaled_diagonal(shape, jw)


class QuadraticSpace:
    """P2 nodes, operators and lumped weights on a linear simplex mesh.

    Args:
        mesh: the linear (geometric) mesh from gmsh.

    Attributes:
        nodes: the node mesh (see module docstring); its faces are the split boundary elements.
        stiffness: K_ij = int grad N_i . grad N_j w dV over P2 shape functions, m (planar: per
            m depth).
        capacity: M_ij = int N_i N_j w dV, the consistent capacity matrix, m3 (planar: per m
            depth). The march stores heat with it; lumped volumes would lose the order.
        volumes: lumped volumes of the nodes (diagonal scaling of M), m3 (planar: per m
            depth): positive weights for means and for the preconditioner.
    """

    def __init__(self, mesh: PartMesh):
        from skfem import Basis, ElementTetP2, ElementTriP2, asm

        from .model import weighted_forms

        self.geometry = mesh
        dim = mesh.dim
        axisym = mesh.axisymmetric
        m = mesh.skfem()
        elem = ElementTriP2() if dim == 2 else ElementTetP2()
        # exact for the consistent diagonal: P2 x P2 (x r when axisymmetric)
        order = 5 if axisym else 4
        basis = Basis(m, elem, intorder=order)
        dofs = basis.element_dofs  # (nloc, E): corners first, then edge midpoints
        if not np.array_equal(dofs[: dim + 1], m.t):
            raise RuntimeError("unexpected P2 node numbering in scikit-fem")
        self._edge = self._edge_index(m.t, dofs, basis.N, dim)
        self.curved = mesh.curved_edges is not None
        if self.curved:
            # isoparametric elements: edge nodes where gmsh put them, on the curved geometry
            from skfem import MeshTet2, MeshTri2

            doflocs = basis.doflocs.copy()
            corners, where = mesh.curved_edges
            doflocs[:, self._edge(corners[:, 0], corners[:, 1])] = where.T
            cls = MeshTri2 if dim == 2 else MeshTet2
            curved = cls(np.ascontiguousarray(doflocs), np.ascontiguousarray(dofs))
            basis = Basis(curved, elem, intorder=order)
            if not np.array_equal(basis.element_dofs, dofs):
                raise RuntimeError("unexpected P2 node numbering of the curved mesh")

        conduction, capacity, _ = weighted_forms(axisym)
        self.stiffness = asm(conduction, basis).tocsr()
        self.capacity = asm(capacity, basis).tocsr()
        self.volumes = self._lumped_volumes(basis, axisym)

        points = basis.doflocs.T.copy()
        split = np.array(_SPLIT[dim])  # (k, dim+1)
        cells = dofs.T[:, split].reshape(-1, dim + 1)
        cells = _orient(points, cells)
        k = split.shape[0]
        faces = {name: self._split_facets(f) for name, f in mesh.faces.items()}
        zones = {
            name: (np.asarray(idx)[:, None] * k + np.arange(k)).ravel()
            for name, idx in mesh.zones.items()
        }
        self.nodes = PartMesh(points, cells, faces, axisym, mesh.size, zones)

    @staticmethod
    def _edge_index(t, dofs, n, dim) -> _EdgeIndex:
        edges = _EDGES[dim]
        a = np.concatenate([t[i] for i, _ in edges])
        b = np.concatenate([t[j] for _, j in edges])
        mid = np.concatenate([dofs[dim + 1 + k] for k in range(len(edges))])
        return _EdgeIndex(a, b, mid, n)

    @staticmethod
    def _lumped_volumes(basis, axisym: bool) -> np.ndarray:
        dx = basis.dx  # (E, q), includes the quadrature weights
        if axisym:
            dx = dx * 2.0 * np.pi * np.asarray(basis.global_coordinates())[0]
        diag = np.stack([np.einsum("eq,eq->e", np.asarray(f[0]) ** 2, dx) for f in basis.basis])
        total = dx.sum(axis=1)
        local = diag * (total / diag.sum(axis=0))[None, :]
        return np.bincount(basis.element_dofs.ravel(), local.ravel(), minlength=basis.N)

    def _midpoints(self, facets: np.ndarray) -> np.ndarray:
        """(F, dim) midpoint nodes of the edges of boundary facets (F, dim corners)."""
        if facets.shape[1] == 2:
            return self._edge(facets[:, 0], facets[:, 1])[:, None]
        pairs = ((0, 1), (1, 2), (0, 2))
        return np.stack([self._edge(facets[:, i], facets[:, j]) for i, j in pairs], axis=1)

    def _split_facets(self, facets: np.ndarray) -> np.ndarray:
        mid = self._midpoints(facets)
        if facets.shape[1] == 2:
            return np.concatenate(
                [np.stack([facets[:, 0], mid[:, 0]], 1), np.stack([mid[:, 0], facets[:, 1]], 1)]
            )
        c, e = facets, mid  # e01, e12, e02
        return np.concatenate(
            [
                np.stack([c[:, 0], e[:, 0], e[:, 2]], 1),
                np.stack([e[:, 0], c[:, 1], e[:, 1]], 1),
                np.stack([e[:, 2], e[:, 1], c[:, 2]], 1),
                np.stack([e[:, 0], e[:, 1], e[:, 2]], 1),
            ]
        )

    def face_weights(self, name: str) -> tuple[np.ndarray, np.ndarray]:
        """Lumped face weights b_i (m2; planar per m depth) of the P2 nodes of a named face.

        Returns:
            (nodes, weights): unique nodes and their weights.
        """
        facets = self.geometry.faces[name]
        mid = self._midpoints(facets)
        if facets.shape[1] == 2:
            nodes = np.stack([facets[:, 0], mid[:, 0], facets[:, 1]], axis=1)
            local = _edge_weights(self.nodes.points[nodes], self.geometry.axisymmetric)
        else:
            nodes = np.concatenate([facets, mid], axis=1)
            local = _triangle_weights(self.nodes.points[nodes])
        unique, inverse = np.unique(nodes.ravel(), return_inverse=True)
        weights = np.bincount(inverse, weights=local.ravel(), minlength=unique.size)
        return unique, weights


def quadratic_space(mesh: PartMesh) -> QuadraticSpace:
    """Build the P2 space of a linear mesh (see `QuadraticSpace`)."""
    return QuadraticSpace(mesh)
