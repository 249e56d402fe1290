"""Linear solves with A = K + diag(d): K fixed (the unit-conductivity stiffness), d changing.

A is symmetric positive definite. Each solve runs preconditioned conjugate gradients on the
current A with a preconditioner built for an earlier diagonal: a sparse LU factorisation
(2D and small 3D; one or two iterations while d is unchanged) or an algebraic multigrid
hierarchy (pyamg; large 3D). The preconditioner is rebuilt only when the iteration count
shows it has drifted, so most time steps cost a few triangular-solve pairs.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

__all__ = ["LinearStats", "SpdSolver", "choose_method"]

DIRECT_LIMIT_3D = 8000  # unknowns; above this in 3D use multigrid


def choose_method(n: int, dim: int) -> str:
    """'direct' for 2D and small 3D systems, 'multigrid' otherwise."""
    return "direct" if dim == 2 or n <= DIRECT_LIMIT_3D else "multigrid"


@dataclass
class LinearStats:
    builds: int = 0
    solves: int = 0
    iterations: int = 0


class SpdSolver:
    """Solve (K + diag(d)) x = b repeatedly for changing d.

    Args:
        stiffness: K, sparse SPD (or semi-definite) matrix.
        method: "direct" or "multigrid".
        rtol: relative residual tolerance of each solve.
    """

    def __init__(self, stiffness: sp.spmatrix, method: str = "direct", rtol: float = 1e-4):
        self.k = stiffness.tocsr()
        self.method = method
        self.rtol = rtol
        self.stats = LinearStats()
        self._apply = None
        # a build costs about this many preconditioned iterations (measured on 2D and 3D
        # meshes of 10k-100k nodes); counted, not timed, so that runs are reproducible
        self._build_cost = 25 if method == "direct" else 15
        self._excess = 0  # iterations beyond the first since the last build

    def _build(self, d: np.ndarray) -> None:
        a = (self.k + sp.diags(d)).tocsc()
        if self.method == "direct":
            from scipy.sparse.linalg import splu

            lu = splu(
                a,
                permc_spec="MMD_AT_PLUS_A",
                diag_pivot_thresh=0.0,
                options={"SymmetricMode": True},
            )
            self._apply = lu.solve
        else:
            import pyamg

            ml = pyamg.smoothed_aggregation_solver(
                a.tocsr(), symmetry="hermitian", strength="symmetric", max_coarse=500
            )
            prec = ml.aspreconditioner(cycle="V")
            self._apply = prec.matvec
        self.stats.builds += 1
        self._excess = 0

    def invalidate(self) -> None:
        """Force a rebuild of the preconditioner at the next solve."""
        self._apply = None

    def _pcg(self, d, b, maxiter):
        x = self._apply(b)
        r = b - (self.k @ x + d * x)
        bnorm = float(np.linalg.norm(b))
        if bnorm == 0.0:
            return np.zeros_like(b), 0, True
        tol = self.rtol * bnorm
        z = self._apply(r)
        p = z.copy()
        rz = float(r @ z)
        for it in range(1, maxiter + 1):
            if float(np.linalg.norm(r)) <= tol:
                return x, it, True
            ap = self.k @ p + d * p
            alpha = rz / float(p @ ap)
            x += alpha * p
            r -= alpha * ap
            z = self._apply(r)
            rz_new = float(r @ z)
            p = z + (rz_new / rz) * p
            rz = rz_new
        return x, maxiter, float(np.linalg.norm(r)) <= tol

    def solve(self, d: np.ndarray, b: np.ndarray) -> np.ndarray:
        """x with (K + diag(d)) x = b.

        The preconditioner is rebuilt when the iterations spent beyond the first since the
        last build have cost as much as a build: a kept factorisation pays while it is close.
        """
        self.stats.solves += 1
        if b.size == 0:
            return b.copy()
        if self._apply is None:
            self._build(d)
        x, its, ok = self._pcg(d, b, 200)
        self.stats.iterations += its
        if not ok:
            self._build(d)
            x, its, ok = self._pcg(d, b, 400)
            self.stats.iterations += its
            if not ok:
                raise np.linalg.LinAlgError("conjugate gradients did not converge")
            return x
        self._excess += its - 1
        if self._excess > self._build_cost:
            self._apply = None  # drifted: rebuild at the next solve
        return x
