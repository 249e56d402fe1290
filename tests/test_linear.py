"""The linear solver paths (femheat.linear), the fast material tables (femheat.lookup) and the
halved meshes of large sections (femheat.mesh).

References: SciPy's sparse direct solver (``scipy.sparse.linalg.spsolve``, SuperLU) for the
solutions; numpy.interp and scipy.integrate.quad for the tables; the exact area and perimeter
of a circular annulus for the meshes.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.integrate import quad
from scipy.sparse.linalg import spsolve

from femheat.linear import DIRECT_LIMIT_3D, PardisoFactor, SpdSolver, pardiso_available
from femheat.lookup import MaterialLookup, TableLookup
from femheat.materials import Material, Table

needs_pardiso = pytest.mark.skipif(not pardiso_available(), reason="MKL PARDISO not installed")
METHODS = (["pardiso"] if pardiso_available() else []) + ["superlu", "multigrid"]


def stiffness(n: int = 60, dim: int = 2):
    """P1 unit-conductivity stiffness and lumped volumes on a structured unit square (right
    triangles: no obtuse angle, so K has no positive off-diagonal entry) or cube."""
    import skfem
    from skfem.models.poisson import laplace

    x = np.linspace(0.0, 1.0, n)
    mesh = skfem.MeshTri.init_tensor(x, x) if dim == 2 else skfem.MeshTet.init_tensor(x, x, x)
    elem = skfem.ElementTriP1() if dim == 2 else skfem.ElementTetP1()
    basis = skfem.Basis(mesh, elem)
    k = laplace.assemble(basis).tocsr()

    @skfem.LinearForm
    def volume(v, w):
        return v

    return k, volume.assemble(basis), mesh.p


def diagonals(volumes, points):
    """A diagonal d0 of a time step (m a rho c / k with a = 1/(10 s), steel-like 3.6e6 / 45
    J/(m3 K) per W/(m K)) and a drifted one, d0 times 0.75..1.3 varying smoothly in space."""
    d0 = volumes * 0.1 * 3.6e6 / 45.0
    drift = 1.0 + 0.3 * np.sin(3.0 * points[0]) - 0.25 * points[1] ** 2
    return d0, d0 * drift


@needs_pardiso
def test_pardiso_matches_a_reference_direct_solve():
    k, vol, pts = stiffness()
    d0, _ = diagonals(vol, pts)
    a = (k + sp.diags(d0)).tocsr()
    upper = sp.triu(a, format="csr")
    upper.sort_indices()
    factor = PardisoFactor(upper)
    factor.factor(upper.data)
    b = np.random.default_rng(1).standard_normal(a.shape[0])
    x = factor.solve(b)
    reference = spsolve(a.tocsc(), b)
    assert np.max(np.abs(x - reference)) <= 1e-10 * np.max(np.abs(reference))
    # memory reported by the analysis holds at least the factor's values (8 bytes each)
    assert factor.memory_bytes >= 8.0 * factor.factor_nonzeros > 0
    assert 4 <= factor.build_cost() <= 200


@needs_pardiso
def test_pardiso_repeats_bit_for_bit():
    # one thread (femheat.linear.PARDISO_THREADS): the same matrix gives the same solution
    k, vol, pts = stiffness()
    d0, _ = diagonals(vol, pts)
    upper = sp.triu(k + sp.diags(d0), format="csr")
    upper.sort_indices()
    b = np.random.default_rng(2).standard_normal(k.shape[0])
    answers = []
    for _ in range(2):
        factor = PardisoFactor(upper)
        factor.factor(upper.data)
        answers.append(factor.solve(b))
        factor.free()
    np.testing.assert_array_equal(answers[0], answers[1])


@pytest.mark.parametrize("method", METHODS)
def test_every_method_delivers_the_accuracy_asked(method):
    k, vol, pts = stiffness()
    d0, d1 = diagonals(vol, pts)
    solver = SpdSolver(k, method, dim=2)
    rng = np.random.default_rng(3)
    solver.solve(d0, rng.standard_normal(k.shape[0]))  # builds for d0
    b = rng.standard_normal(k.shape[0])
    reference = spsolve((k + sp.diags(d1)).tocsc(), b)
    scale = float(np.max(np.abs(reference)))
    for tolerance in (1e-3 * scale, 1e-6 * scale):
        x = solver.solve(d1, b, tolerance=tolerance)
        assert np.max(np.abs(x - reference)) <= tolerance
    # relative to the solution (a function of its largest entry), as Newton asks for
    x = solver.solve(d1, b, tolerance=lambda largest: 0.01 * largest)
    assert np.max(np.abs(x - reference)) <= 0.011 * scale
    # without a tolerance: the residual criterion
    x = solver.solve(d1, b)
    residual = b - (k @ x + d1 * x)
    assert np.linalg.norm(residual) <= solver.rtol * np.linalg.norm(b) * (1 + 1e-9)


def test_error_of_a_kept_factorisation_is_bounded_without_solving():
    # For A = K + diag(d), K with no positive off-diagonal entry and zero row sums (P1 on
    # non-obtuse triangles; discrete maximum principle, Ciarlet & Raviart, Comput. Methods
    # Appl. Mech. Eng. 2 (1973) 17-31 [memory]), A^-1 >= 0 and A 1 = d, so
    # |A^-1 r| <= max |r / d| [derived]. The solver accepts x0 = P^-1 b on this bound.
    k, vol, pts = stiffness(40)
    d0, d1 = diagonals(vol, pts)
    a = (k + sp.diags(d1)).tocsc()
    rng = np.random.default_rng(4)
    for _ in range(5):
        r = rng.standard_normal(k.shape[0]) * d1 * rng.uniform(0.1, 10.0)
        e = spsolve(a, r)
        assert np.max(np.abs(e)) <= np.max(np.abs(r / d1)) * (1 + 1e-9)


def test_memory_limit_falls_back():
    k2, vol2, pts2 = stiffness(30)
    solver = SpdSolver(k2, "pardiso", dim=2, memory_limit=1.0)
    solver.solve(diagonals(vol2, pts2)[0], np.ones(k2.shape[0]))
    assert solver.method == "superlu"
    if pardiso_available():
        assert "GB" in solver.note
    k3, vol3, pts3 = stiffness(22, dim=3)
    assert k3.shape[0] > DIRECT_LIMIT_3D
    solver = SpdSolver(k3, "pardiso", dim=3, memory_limit=1.0)
    b = np.ones(k3.shape[0])
    d = diagonals(vol3, pts3)[0]
    x = solver.solve(d, b)
    assert solver.method == "multigrid"
    reference = spsolve((k3 + sp.diags(d)).tocsc(), b)
    assert np.linalg.norm(x - reference) <= 1e-3 * np.linalg.norm(reference)


@pytest.mark.parametrize("method", [m for m in METHODS if m != "multigrid"])
def test_restored_solver_continues_bit_for_bit(method):
    # a resumed run rebuilds the kept factorisation for the same diagonal: same solutions
    k, vol, pts = stiffness(40)
    d0, d1 = diagonals(vol, pts)
    rng = np.random.default_rng(5)
    first = SpdSolver(k, method, dim=2)
    first.solve(d0, rng.standard_normal(k.shape[0]))
    first.solve(d1, rng.standard_normal(k.shape[0]), tolerance=1e-3)
    second = SpdSolver(k, method, dim=2)
    second.restore(first.state())
    b, d2 = rng.standard_normal(k.shape[0]), d1 * 1.1
    np.testing.assert_array_equal(
        first.solve(d2, b, tolerance=1e-4), second.solve(d2, b, tolerance=1e-4)
    )


def steel_like() -> Material:
    """A steel-like material with a sharp capacity peak and knots 0.05 K apart."""
    c = Table(
        np.array([20.0, 600.0, 734.95, 735.0, 735.05, 900.0]),
        np.array([440.0, 760.0, 4000.0, 5000.0, 4000.0, 650.0]),
    )
    k = Table(np.array([20.0, 800.0]), np.array([54.0, 27.3]))
    return Material(7850.0, k, c)


def test_lookup_tables_agree_with_interpolation_and_quadrature():
    mat = steel_like()
    look = MaterialLookup(mat)
    temps = np.concatenate(
        [
            np.linspace(-50.0, 1000.0, 2001),
            mat.specific_heat.temperatures,
            np.array([734.97, 735.0, 735.01, 0.0]),
        ]
    )
    enthalpy, capacity = look.enthalpy_capacity(temps)
    phi, k = look.kirchhoff_conductivity(temps)
    c_t, c_v = mat.specific_heat.temperatures, mat.specific_heat.values
    np.testing.assert_allclose(capacity, 7850.0 * np.interp(temps, c_t, c_v), rtol=1e-12)
    np.testing.assert_allclose(
        k, np.interp(temps, *(mat.conductivity.temperatures, mat.conductivity.values)), rtol=1e-12
    )
    # the integrals from 0 C, by adaptive quadrature of the interpolated values
    kt, kv = mat.conductivity.temperatures, mat.conductivity.values
    for t in (-50.0, 20.0, 300.0, 734.99, 735.03, 1000.0):
        i = int(np.argmin(np.abs(temps - t)))
        pts = [p for p in c_t if min(0.0, t) < p < max(0.0, t)]
        ref, _ = quad(lambda x: np.interp(x, c_t, c_v), 0.0, temps[i], points=pts, limit=200)
        assert enthalpy[i] == pytest.approx(7850.0 * ref, rel=1e-9, abs=1e-6)
        ref_k, _ = quad(lambda x: np.interp(x, kt, kv), 0.0, temps[i], limit=200)
        assert phi[i] == pytest.approx(ref_k, rel=1e-9, abs=1e-9)
    # a constant table
    const = TableLookup(Table.constant(5.0))
    value, integral = const.both(np.array([2.0, -3.0]))
    np.testing.assert_array_equal(value, [5.0, 5.0])
    np.testing.assert_array_equal(integral, [10.0, -15.0])


def test_halved_mesh_of_a_large_section_keeps_the_geometry():
    # a tube section of 100 mm outside radius, 20 mm wall at 0.8 mm elements: about 20k
    # nodes, meshed at 1.6 mm and split once (femheat.mesh._halvings)
    from femheat import mesh as meshing
    from femheat.model import face_weights

    outer, wall, size = 0.1, 0.02, 0.0008
    params = {"outer_diameter": 2 * outer, "wall": wall}
    m = meshing.mesh_part("tube", params, "planar", size)
    assert m.nodes > 15_000
    inner = outer - wall
    p = m.points[m.cells]
    area = 0.5 * np.abs(
        (p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
        - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1])
    )
    # exact annulus pi (R^2 - r^2); inscribed polygons of about 800 sides lose ~1e-5 [derived]
    assert area.sum() == pytest.approx(math.pi * (outer**2 - inner**2), rel=1e-4)
    for name, radius in (("outer", outer), ("inner", inner)):
        nodes = m.face_nodes(name)
        r = np.hypot(m.points[nodes, 0], m.points[nodes, 1])
        np.testing.assert_allclose(r, radius, rtol=1e-9)  # new nodes on the circle
        _, weights = face_weights(m, m.faces[name])
        assert weights.sum() == pytest.approx(2 * math.pi * radius, rel=1e-4)
    assert m.quality().min() > 0.6
    again = meshing.mesh_part("tube", params, "planar", size)
    np.testing.assert_array_equal(again.points, m.points)  # the same mesh every time
