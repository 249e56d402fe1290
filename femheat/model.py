"""The discrete heat balance: operators assembled once with scikit-fem, boundary terms by node.

Semi-discrete equations for nodal temperatures T (C), P1 or P2 elements (femheat.quadratic),
lumped capacity:

    m_i dH(T_i)/dt + sum_j K_ij phi(T_j) = F_i(T_i, t)

* H(T) = rho int c dT is the volumetric enthalpy (J/m3) and m_i = int N_i w dV the lumped
  volume of node i; storing enthalpy (not c(T) dT/dt) conserves energy across peaks in c(T).
  P2 elements keep the consistent capacity matrix instead: sum_j M_ij dH(T_j)/dt with
  M_ij = int N_i N_j w dV (lumping would cost them their higher order).
* phi(T) = int k dT is the Kirchhoff potential; K_ij = int grad N_i . grad N_j w dV is the
  constant unit-conductivity stiffness, so conduction with k(T) costs no re-assembly.
* F_i = sum over exposed faces of b_i q(T_i, t): b_i = int N_i w dS (lumped, nodal quadrature)
  and q the face's heat flux law (convection + radiation in kelvin, contact with a hearth,
  or a prescribed flux).
* w = 1 (planar, per metre depth; solid) or 2 pi r (axisymmetric, the whole body of revolution).

Fixed-temperature faces prescribe T at their nodes; those rows are removed from the system and
their reactions give the heat through them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from .furnace import (
    Contact,
    Exposure,
    FaceCondition,
    FixedTemperature,
    HeatFlux,
    Insulated,
    contact_flux,
    exposure_flux,
)
from .materials import Material
from .mesh import PartMesh

__all__ = ["FaceGroup", "Model", "build_model", "weighted_forms"]


@dataclass(frozen=True)
class FaceGroup:
    """A named face, its condition, its nodes and their lumped face weights (m2)."""

    name: str
    condition: FaceCondition
    nodes: np.ndarray
    weights: np.ndarray

    @property
    def area(self) -> float:
        return float(self.weights.sum())


def weighted_forms(axisymmetric: bool):
    """scikit-fem forms with the weight w (1, or 2 pi r for a body of revolution):
    conduction int grad u . grad v w, capacity int u v w, volume int v w."""
    from skfem import BilinearForm, LinearForm
    from skfem.helpers import dot, grad

    def weight(w):
        return 2.0 * np.pi * w.x[0] if axisymmetric else 1.0

    @BilinearForm
    def conduction(u, v, w):
        return dot(grad(u), grad(v)) * weight(w)

    @BilinearForm
    def capacity(u, v, w):
        return u * v * weight(w)

    @LinearForm
    def volume(v, w):
        return v * weight(w)

    return conduction, capacity, volume


def _stiffness_and_volumes(mesh: PartMesh):
    from skfem import Basis, ElementTetP1, ElementTriP1, asm

    axisym = mesh.axisymmetric
    conduction, _, volume = weighted_forms(axisym)
    elem = ElementTriP1() if mesh.dim == 2 else ElementTetP1()
    basis = Basis(mesh.skfem(), elem, intorder=2 if axisym else 1)
    stiffness = asm(conduction, basis).tocsr()
    volumes = asm(volume, basis)
    return stiffness, volumes


def face_weights(mesh: PartMesh, facets: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Lumped face weights b_i = int N_i w dS (m2) of the nodes of boundary elements.

    Args:
        facets: (F, dim) node indices of segments (2D) or triangles (3D).

    Returns:
        (nodes, weights): unique nodes and their weights.
    """
    p = mesh.points[facets]  # (F, k, dim)
    if mesh.dim == 2:
        length = np.linalg.norm(p[:, 1] - p[:, 0], axis=1)
        if mesh.axisymmetric:
            ra, rb = p[:, 0, 0], p[:, 1, 0]
            wa = 2.0 * np.pi * length * (2.0 * ra + rb) / 6.0
            wb = 2.0 * np.pi * length * (ra + 2.0 * rb) / 6.0
            local = np.stack([wa, wb], axis=1)
        else:
            local = np.repeat(0.5 * length[:, None], 2, axis=1)
    else:
        area = 0.5 * np.linalg.norm(np.cross(p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]), axis=1)
        local = np.repeat(area[:, None] / 3.0, 3, axis=1)
    nodes, inverse = np.unique(facets.ravel(), return_inverse=True)
    weights = np.bincount(inverse, weights=local.ravel(), minlength=nodes.size)
    return nodes, weights


@dataclass(frozen=True)
class Model:
    """Assembled operators and face data for one part, material and set of face conditions."""

    mesh: PartMesh
    material: Material
    stiffness: sp.csr_matrix  # K, m (planar: per m depth), unit conductivity
    volumes: np.ndarray  # m_i, m3 (planar: m3 per m depth)
    faces: tuple[FaceGroup, ...]
    fixed_nodes: np.ndarray
    free_nodes: np.ndarray
    element: str = "P1"  # "P2": `mesh` is the node mesh of the quadratic elements
    # consistent capacity matrix int N_i N_j w dV (m3); None: lumped (`volumes`)
    capacity: sp.csr_matrix | None = None
    linear_mesh: PartMesh | None = None  # P2: the mesh the elements were built on

    @property
    def geometry(self) -> PartMesh:
        """The mesh of the elements (for P1 the same as `mesh`): what a checkpoint keeps."""
        return self.mesh if self.linear_mesh is None else self.linear_mesh

    @property
    def n(self) -> int:
        return self.volumes.size

    @property
    def volume(self) -> float:
        return float(self.volumes.sum())

    def store(self, density: np.ndarray) -> np.ndarray:
        """Nodal integrals int N_i u w dV of a nodal field u (per m3), e.g. u = dH/dt in W/m3.

        Lumped (`volumes * u`) unless the model carries a consistent capacity matrix.
        """
        if self.capacity is None:
            return self.volumes * density
        return self.capacity @ density

    def fixed_values(self, t: float) -> np.ndarray:
        """Prescribed temperatures (C) at `fixed_nodes` at time t (s); first face listed wins."""
        out = np.empty(self.fixed_nodes.size)
        seen = np.zeros(self.n, dtype=bool)
        pos = np.full(self.n, -1)
        pos[self.fixed_nodes] = np.arange(self.fixed_nodes.size)
        for g in self.faces:
            if isinstance(g.condition, FixedTemperature):
                nodes = g.nodes[~seen[g.nodes]]
                out[pos[nodes]] = g.condition.temperature(t)
                seen[nodes] = True
        return out

    def boundary_flow(self, temperature: np.ndarray, t: float):
        """Nodal heat flow into the part through exposed and flux faces.

        Returns:
            (F, dF_dT): W per node and its derivative, W/K (planar: per m depth).
        """
        flow = np.zeros(self.n)
        dflow = np.zeros(self.n)
        for g in self.faces:
            c = g.condition
            if isinstance(c, Exposure):
                q, dq = exposure_flux(
                    temperature[g.nodes], c.gas(t), c.wall(t), c.htc, c.emissivity
                )
                flow[g.nodes] += g.weights * q
                dflow[g.nodes] += g.weights * dq
            elif isinstance(c, HeatFlux):
                flow[g.nodes] += g.weights * c.flux(t)
            elif isinstance(c, Contact):
                q, dq = contact_flux(temperature[g.nodes], c.temperature(t), c.conductance)
                flow[g.nodes] += g.weights * q
                dflow[g.nodes] += g.weights * dq
        return flow, dflow

    def face_flows(self, temperature: np.ndarray, t: float, enthalpy_rate: np.ndarray):
        """Heat flow into the part through each named face, W (planar: per m depth).

        Fixed faces report their reaction m dH/dt + K phi - F at their nodes.
        """
        out: dict[str, float] = {}
        fixed = [g for g in self.faces if isinstance(g.condition, FixedTemperature)]
        for g in self.faces:
            c = g.condition
            if isinstance(c, Exposure):
                q, _ = exposure_flux(temperature[g.nodes], c.gas(t), c.wall(t), c.htc, c.emissivity)
                out[g.name] = float(g.weights @ q)
            elif isinstance(c, HeatFlux):
                out[g.name] = float(g.weights.sum() * c.flux(t))
            elif isinstance(c, Contact):
                q, _ = contact_flux(temperature[g.nodes], c.temperature(t), c.conductance)
                out[g.name] = float(g.weights @ q)
            elif isinstance(c, Insulated):
                out[g.name] = 0.0
        if fixed:
            nodes = self.fixed_nodes
            flow, _ = self.boundary_flow(temperature, t)
            phi = self.material.kirchhoff(temperature)
            reaction = (
                self.store(enthalpy_rate)[nodes]
                + self.stiffness[nodes] @ phi
                - flow[nodes]
            )
            owner = np.full(self.n, -1)
            for k, g in reversed(list(enumerate(fixed))):
                owner[g.nodes] = k
            for k, g in enumerate(fixed):
                out[g.name] = float(reaction[owner[nodes] == k].sum())
        return out

    def stored_energy(self, temperature: np.ndarray) -> float:
        """Enthalpy content sum m_i H(T_i), J (planar: per m depth), relative to 0 C."""
        return float(self.store(self.material.enthalpy(temperature)).sum())

    def mean_temperature(self, temperature: np.ndarray) -> float:
        """Volume-weighted mean temperature, C."""
        return float(self.volumes @ temperature / self.volumes.sum())


def build_model(
    mesh: PartMesh,
    material: Material,
    conditions: dict[str, FaceCondition],
    element: str = "P1",
) -> Model:
    """Assemble the operators and attach a condition to every face of the mesh.

    Args:
        mesh: the linear mesh of the part.
        conditions: face name -> condition; every mesh face must be present.
        element: "P1" (linear) or "P2" (quadratic). For P2 the model's `mesh` is the node
            mesh of `femheat.quadratic` (the elements split at their edge midpoints), so nodal
            fields match its points.
    """
    linear_mesh = None
    if element == "P2":
        from .quadratic import quadratic_space

        linear_mesh = mesh
        space = quadratic_space(mesh)
        stiffness, volumes, capacity = space.stiffness, space.volumes, space.capacity
        weights_of = space.face_weights
        mesh = space.nodes
    elif element == "P1":
        stiffness, volumes = _stiffness_and_volumes(mesh)
        capacity = None

        def weights_of(name):
            return face_weights(mesh, mesh.faces[name])
    else:
        raise ValueError(f"unknown element {element!r}; use 'P1' or 'P2'")
    groups = []
    fixed = []
    for name in mesh.face_names:
        nodes, weights = weights_of(name)
        cond = conditions[name]
        groups.append(FaceGroup(name, cond, nodes, weights))
        if isinstance(cond, FixedTemperature):
            fixed.append(nodes)
    fixed_nodes = np.unique(np.concatenate(fixed)) if fixed else np.zeros(0, dtype=np.int64)
    free = np.setdiff1d(np.arange(volumes.size), fixed_nodes)
    return Model(
        mesh,
        material,
        stiffness,
        volumes,
        tuple(groups),
        fixed_nodes,
        free,
        element,
        capacity,
        linear_mesh,
    )
