"""Linear solves with A = K + diag(d): K fixed (the unit-conductivity stiffness), d changing.

A is symmetric positive definite. Each solve runs preconditioned conjugate gradients on the
current A with a preconditioner built for an earlier diagonal d0 and kept:

* ``"pardiso"``: a sparse Cholesky factorisation of K + diag(d0) by Intel MKL PARDISO (the
  MKL runtime of the ``mkl`` wheel that ``pypardiso`` depends on; x86-64 Linux and Windows).
  The fill-in reducing ordering and the symbolic analysis are done once (the pattern never
  changes); a rebuild is a numeric refactorisation only. The default for 2D and 3D whenever
  MKL loads and the factor fits in memory (PARDISO reports what it needs after the analysis).
* ``"superlu"``: SciPy's SuperLU with a symmetric minimum-degree ordering (2D, and 3D up to
  `DIRECT_LIMIT_3D` unknowns), when PARDISO is not available.
* ``"multigrid"``: a smoothed-aggregation algebraic multigrid V-cycle (pyamg): large 3D
  without PARDISO, or when the PARDISO factor would not fit in memory.

A solve asks for an accuracy (`SpdSolver.solve`, ``tolerance``), and stops as soon as it is
met: a factorisation for d0 applied once, x0 = P^-1 b, has the error A^-1 (d0 - d) x0, which
is bounded entry by entry without another solve (see `SpdSolver._pcg`), so while d stays near
d0 most solves cost one triangular-solve pair. As d drifts away from d0 (other step sizes,
other temperatures), conjugate gradients need more applications; the preconditioner is rebuilt
once the applications beyond the first since the last build have cost about as much as a build
(a kept factorisation pays while it is close). That cost is counted in applications, never
timed, so that the same case always takes the same path: for PARDISO it is worked out from the
factorisation's operation count and the size of the factor, which the analysis reports.

PARDISO runs on one thread (the same results bit for bit from run to run), except for large
3D systems, which use the cores this process may use (`solver_threads`; results then agree
from run to run to round-off).
"""

from __future__ import annotations

import ctypes
import logging
import math
import os
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

__all__ = [
    "DIRECT_LIMIT_3D",
    "LinearStats",
    "PardisoFactor",
    "SpdSolver",
    "choose_method",
    "pardiso_available",
    "solver_threads",
]

log = logging.getLogger(__name__)

DIRECT_LIMIT_3D = 8000  # unknowns; above this in 3D, without PARDISO, use multigrid
# Threads. In 2D and for small 3D systems one thread: the factor's blocks are small, a second
# thread gained nothing and on one thread PARDISO gives the same result bit for bit from run to
# run. Large 3D factors (from PARALLEL_MIN_3D unknowns) run on every core this process may use:
# on two cores the factorisation and the solves of a 200k-node part took 0.55 to 0.6 times as
# long (2.6 s -> 1.5 s, 78 ms -> 45 ms) when the machine was otherwise idle, though up to 1.4
# times as long when other work kept both cores busy. On several threads the results agree from
# run to run to round-off only (about 1e-15 relative per solve); MKL's reproducible mode
# removes that but made each solve 5 to 15 times slower.
PARALLEL_MIN_3D = 50_000
MEMORY_SHARE = 0.6  # the PARDISO factor may take this share of the available memory
METHODS = ("pardiso", "superlu", "multigrid")
_MAX_SCALING = 2.0  # the balance correction: |c| <= 1 but near fixed nodes


# --- PARDISO ------------------------------------------------------------------------------------

_MKL: list = []  # [CDLL or None], loaded once


def _mkl_candidates() -> list[str]:
    """Places of the MKL runtime: ``PYPARDISO_MKL_RT``, then the library folders of this
    Python and of the user's site (where the ``mkl`` wheel puts it)."""
    import glob
    import site
    import sys

    out = [os.environ["PYPARDISO_MKL_RT"]] if os.environ.get("PYPARDISO_MKL_RT") else []
    for base in dict.fromkeys((sys.prefix, sys.base_prefix, site.USER_BASE or "")):
        if base:
            found = glob.glob(os.path.join(base, "lib", "libmkl_rt.so*"))
            found += glob.glob(os.path.join(base, "Library", "bin", "mkl_rt*.dll"))
            out += sorted(found, key=len)
    return out


def _load_mkl():
    for path in _mkl_candidates():
        try:
            return ctypes.CDLL(path)
        except OSError:
            continue
    # pypardiso's own search (slower: it walks the environment's folders when importing)
    import pypardiso

    # a separate CDLL object keeps our calls free of the argument types pypardiso sets
    return ctypes.CDLL(pypardiso.PyPardisoSolver(mtype=2).libmkl._name)


def _mkl():
    """The MKL runtime library (ctypes.CDLL) with PARDISO, or None."""
    if not _MKL:
        lib = None
        try:
            lib = _load_mkl()
            lib.pardiso.restype = None
            lib.MKL_Set_Num_Threads_Local.restype = ctypes.c_int
        except (ImportError, OSError, AttributeError) as exc:
            log.info("PARDISO not available (%s); using SuperLU or multigrid", exc)
            lib = None
        _MKL.append(lib)
    return _MKL[0]


def pardiso_available() -> bool:
    """Whether the MKL PARDISO solver can be loaded here."""
    return _mkl() is not None


def solver_threads(n: int = PARALLEL_MIN_3D, dim: int = 3) -> int:
    """Threads PARDISO runs on for n unknowns in `dim` dimensions: 1, or for large 3D systems
    the cores this process may use (fewer when ``MKL_NUM_THREADS`` or ``OMP_NUM_THREADS``
    asks for fewer)."""
    if dim != 3 or n < PARALLEL_MIN_3D:
        return 1
    try:
        cores = len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        cores = os.cpu_count() or 1
    for var in ("MKL_NUM_THREADS", "OMP_NUM_THREADS"):
        text = os.environ.get(var, "").split(",")[0].strip()
        if text.isdigit() and int(text) > 0:
            cores = min(cores, int(text))
    return max(1, cores)


_IOMP: list = []  # [the Intel OpenMP runtime's kmp_set_blocktime, or None]


def _no_spin() -> None:
    """Let PARDISO's OpenMP threads sleep as soon as a call ends (Intel OpenMP spins for
    200 ms by default, keeping a core busy that the rest of the march, or other work on the
    machine, could use). Applies to the calling thread's team."""
    if not _IOMP:
        func = None
        for name in ("libiomp5.so", "libiomp5md.dll", "libiomp5.dylib"):
            try:
                func = ctypes.CDLL(name).kmp_set_blocktime
                break
            except (OSError, AttributeError):
                continue
        _IOMP.append(func)
    if _IOMP[0] is not None:
        _IOMP[0](ctypes.c_int(0))


class PardisoError(RuntimeError):
    """PARDISO reported an error (code in `code`)."""

    def __init__(self, code: int, phase: int):
        self.code = code
        super().__init__(f"PARDISO error {code} in phase {phase}")


class PardisoFactor:
    """Cholesky factorisation of an SPD matrix by MKL PARDISO: analyse once, refactorise often.

    Args:
        upper: the upper triangle (diagonal included) in CSR form with sorted indices; its
            pattern is fixed for the life of the factor, its values are those of `factor`.
        threads: OpenMP threads for PARDISO (default 1; see `solver_threads`). Fixed at the
            analysis: every later phase runs on the same number.

    After construction the symbolic analysis is done and `memory_bytes`, `factor_nonzeros`
    and `factor_mflop` are known; `factor(values)` then does the numeric factorisation.

    Raises:
        RuntimeError: MKL is not available. PardisoError: the analysis failed.
    """

    _SPD = 2  # PARDISO matrix type: real symmetric positive definite

    def __init__(self, upper: sp.csr_matrix, threads: int | None = None):
        lib = _mkl()
        if lib is None:
            raise RuntimeError("MKL PARDISO is not available")
        self._lib = lib
        self.n = upper.shape[0]
        self._ia = np.ascontiguousarray(upper.indptr, dtype=np.int32)
        self._ja = np.ascontiguousarray(upper.indices, dtype=np.int32)
        self._a = np.ascontiguousarray(upper.data, dtype=np.float64).copy()
        self.threads = max(1, int(threads or 1))
        self._pt = np.zeros(64, dtype=np.int64)  # PARDISO's internal handle
        ip = np.zeros(64, dtype=np.int32)
        ip[0] = 1  # values below are set, not defaults
        ip[1] = 2  # nested dissection ordering (METIS), sequential: reproducible
        ip[9] = 13  # pivot perturbation 1e-13 (not used for SPD)
        ip[17] = -1  # report the nonzeros of the factor
        ip[18] = -1  # report the operation count of the factorisation
        ip[34] = 1  # zero-based indices
        self._iparm = ip
        self._dummy = np.zeros(1)
        self._ready = False
        self._analysed = True  # from here on PARDISO may hold memory: free() releases it
        self._call(11, self._dummy, self._dummy)  # ordering and symbolic analysis
        self.factor_nonzeros = int(ip[17])
        self.factor_mflop = float(ip[18])
        # peak memory of the analysis, and of the factorisation with what the analysis keeps
        self.memory_bytes = 1024.0 * max(float(ip[14]), float(ip[15]) + float(ip[16]))

    def _call(self, phase: int, b: np.ndarray, x: np.ndarray) -> None:
        c = ctypes
        i32 = c.c_int32
        err = i32(0)
        lib = self._lib
        old = lib.MKL_Set_Num_Threads_Local(c.c_int(self.threads))
        if self.threads > 1:
            _no_spin()
        try:
            lib.pardiso(
                c.c_void_p(self._pt.ctypes.data),
                c.byref(i32(1)),  # maxfct
                c.byref(i32(1)),  # mnum
                c.byref(i32(self._SPD)),
                c.byref(i32(phase)),
                c.byref(i32(self.n)),
                c.c_void_p(self._a.ctypes.data),
                c.c_void_p(self._ia.ctypes.data),
                c.c_void_p(self._ja.ctypes.data),
                c.c_void_p(None),  # perm
                c.byref(i32(1)),  # nrhs
                c.c_void_p(self._iparm.ctypes.data),
                c.byref(i32(0)),  # msglvl
                c.c_void_p(b.ctypes.data),
                c.c_void_p(x.ctypes.data),
                c.byref(err),
            )
        finally:
            lib.MKL_Set_Num_Threads_Local(c.c_int(old))
        if err.value != 0:
            raise PardisoError(int(err.value), phase)

    def factor(self, values: np.ndarray) -> None:
        """Numeric factorisation with new values on the fixed pattern.

        Raises:
            numpy.linalg.LinAlgError: the matrix is not positive definite (or PARDISO failed).
        """
        self._a[:] = values
        try:
            self._call(22, self._dummy, self._dummy)
        except PardisoError as exc:
            self._ready = False
            raise np.linalg.LinAlgError(str(exc)) from None
        self._ready = True

    def solve(self, b: np.ndarray) -> np.ndarray:
        """x with A x = b for the last factorised A (one forward and backward solve)."""
        if not self._ready:
            raise RuntimeError("PARDISO: solve before a successful factorisation")
        b = np.ascontiguousarray(b, dtype=np.float64)
        x = np.empty_like(b)
        self._call(33, b, x)
        return x

    def free(self) -> None:
        """Release PARDISO's memory (the factor and the analysis)."""
        if getattr(self, "_analysed", False):
            self._analysed = self._ready = False
            try:
                self._call(-1, self._dummy, self._dummy)
            except Exception:  # noqa: BLE001 - nothing more to do while releasing
                pass

    def __del__(self):
        self.free()

    def build_cost(self) -> int:
        """A numeric factorisation's cost in triangular-solve pairs, from the analysis.

        A solve pair does about 4 flop per factor nonzero at memory speed; the factorisation
        does `factor_mflop` at the higher speed of dense blocks. Measured on 2D and 3D meshes
        of 30k to 200k nodes (2 cores): the time ratio is about 2.5 sqrt(flop ratio), 10 to
        40 solves.
        """
        ratio = 1e6 * self.factor_mflop / max(4.0 * self.factor_nonzeros, 1.0)
        return int(min(max(2.5 * math.sqrt(max(ratio, 0.0)), 4.0), 200.0))


# --- choosing and using a method ----------------------------------------------------------------


def choose_method(n: int, dim: int) -> str:
    """The preconditioner for n unknowns in `dim` dimensions.

    "pardiso" when MKL PARDISO loads (the memory check follows its analysis, in
    `SpdSolver`), else "superlu" for 2D and small 3D systems and "multigrid" above.
    """
    if pardiso_available():
        return "pardiso"
    return _fallback(n, dim)


def _fallback(n: int, dim: int) -> str:
    return "superlu" if dim == 2 or n <= DIRECT_LIMIT_3D else "multigrid"


@dataclass
class LinearStats:
    """Counters: preconditioner builds, solves, preconditioner applications (CG iterations)."""

    builds: int = 0
    solves: int = 0
    iterations: int = 0


class SpdSolver:
    """Solve (K + diag(d)) x = b repeatedly for changing d.

    Args:
        stiffness: K, sparse SPD (or semi-definite) matrix.
        method: "pardiso", "superlu" (also "direct") or "multigrid".
        rtol: relative residual tolerance of each solve.
        dim: 2 or 3, for the fallback when PARDISO cannot be used.
        memory_limit: bytes the PARDISO factor may take (default: `MEMORY_SHARE` of the
            memory available); above it the solver falls back to SuperLU (2D, small 3D) or
            multigrid.
    """

    def __init__(
        self,
        stiffness: sp.spmatrix,
        method: str = "pardiso",
        rtol: float = 1e-4,
        dim: int = 3,
        memory_limit: float | None = None,
    ):
        if method == "direct":
            method = "superlu"
        if method not in METHODS:
            raise ValueError(f"unknown method {method!r}; use one of {', '.join(METHODS)}")
        self.k = stiffness.tocsr()
        self.dim = dim
        self.method = method
        self.rtol = rtol
        self.memory_limit = memory_limit
        self.stats = LinearStats()
        self.note = ""  # why the method differs from the one asked for, if it does
        self._apply = None
        self._pardiso: PardisoFactor | None = None
        self._upper = None
        self._diag_pos = None
        # a build costs about this many preconditioner applications (measured on 2D and 3D
        # meshes of 10k-200k nodes); counted, not timed, so that runs are reproducible
        self._build_cost = {"superlu": 25, "multigrid": 15, "pardiso": 15}[method]
        self._excess = 0  # applications beyond the first per solve, since the last build
        self._stale = False  # the preconditioner has drifted: rebuild at the next new d
        self._last_d = None
        self._d0 = None  # the diagonal the factorisation was built for
        self._pending = None  # the diagonal to rebuild for after a restore
        self.last_error = 0.0
        if method == "pardiso" and not pardiso_available():
            self._fall_back("PARDISO is not available")

    # -- building ------------------------------------------------------------------------------
    def _fall_back(self, why: str) -> None:
        self.method = _fallback(self.k.shape[0], self.dim)
        self._build_cost = {"superlu": 25, "multigrid": 15}[self.method]
        self.note = why
        log.info("%s; using %s", why, self.method)

    def _pardiso_setup(self) -> None:
        """Pattern, analysis and memory check; falls back when the factor would not fit."""
        n = self.k.shape[0]
        # the upper triangle of K with every diagonal entry present (explicit zeros kept)
        tri = sp.triu(self.k, format="coo")
        every = np.arange(n)
        upper = sp.coo_matrix(
            (
                np.concatenate([tri.data, np.zeros(n)]),
                (np.concatenate([tri.row, every]), np.concatenate([tri.col, every])),
            ),
            shape=(n, n),
        ).tocsr()
        upper.sum_duplicates()
        upper.sort_indices()
        rows = np.repeat(every, np.diff(upper.indptr))
        diag_pos = np.flatnonzero(rows == upper.indices)
        values = upper.data.copy()
        try:
            factor = PardisoFactor(upper, solver_threads(n, self.dim))
        except (RuntimeError, OSError) as exc:
            self._fall_back(f"PARDISO analysis failed ({exc})")
            return
        limit = self.memory_limit
        if limit is None:
            from .resources import available_memory

            free = available_memory()
            limit = None if free is None else MEMORY_SHARE * free
        if limit is not None and factor.memory_bytes > limit:
            need = factor.memory_bytes
            factor.free()
            self._fall_back(
                f"the PARDISO factor would need {need / 1e9:.3g} GB, more than the "
                f"{limit / 1e9:.3g} GB allowed"
            )
            return
        self._pardiso = factor
        self._values = values
        self._diag_pos = diag_pos
        self._build_cost = factor.build_cost()

    def _build(self, d: np.ndarray) -> None:
        """Build the preconditioner for K + diag(d).

        Raises:
            numpy.linalg.LinAlgError: the matrix is not positive definite (the next solve
                tries again).
        """
        self._apply = None
        if self.method == "pardiso" and self._pardiso is None:
            self._pardiso_setup()
        if self.method == "pardiso":
            values = self._values.copy()
            values[self._diag_pos] += d
            self._pardiso.factor(values)
            self._apply = self._pardiso.solve
        elif self.method == "superlu":
            from scipy.sparse.linalg import splu

            a = (self.k + sp.diags(d)).tocsc()
            try:
                lu = splu(
                    a,
                    permc_spec="MMD_AT_PLUS_A",
                    diag_pivot_thresh=0.0,
                    options={"SymmetricMode": True},
                )
            except RuntimeError as exc:  # exactly singular
                raise np.linalg.LinAlgError(str(exc)) from None
            self._apply = lu.solve
        else:
            import pyamg

            a = (self.k + sp.diags(d)).tocsr()
            ml = pyamg.smoothed_aggregation_solver(
                a, symmetry="hermitian", strength="symmetric", max_coarse=500
            )
            prec = ml.aspreconditioner(cycle="V")
            self._apply = prec.matvec
        self.stats.builds += 1
        self._d0 = d.copy()
        self._excess = 0
        self._stale = False
        self._pending = None

    def invalidate(self) -> None:
        """Force a rebuild of the preconditioner at the next solve."""
        self._apply = None
        self._pending = None

    def state(self) -> dict:
        """What a later `restore` needs to continue with the same preconditioner: the
        diagonal it was built for and the drift counters (plain values, for a checkpoint)."""
        return {
            "diagonal": None if self._d0 is None else self._d0.copy(),
            "excess": int(self._excess),
            "stale": bool(self._stale),
        }

    def restore(self, state: dict) -> None:
        """Continue from `state()`: the preconditioner is rebuilt for the same diagonal at the
        next solve (unless it was due for a rebuild anyway), so the solves, and the run, go
        on exactly as they would have."""
        d0 = state.get("diagonal")
        self._pending = None if d0 is None else np.asarray(d0, dtype=float).copy()
        self._apply = None
        self._excess = int(state.get("excess", 0))
        self._stale = bool(state.get("stale", False))

    # -- solving -------------------------------------------------------------------------------
    def _pcg(self, d, b, maxiter, weights, allowed):
        """Preconditioned CG from x0 = P^-1 b, with two cheap corrections of x0.

        Returns (x, applications of P, converged, estimated error). Converged: with `allowed`
        (a function of max |weights * x| giving the weighted error allowed), the estimated
        weighted error is within it (or the residual is at round-off); without, the residual
        is below `rtol` times b.

        * The error of x0 is bounded without another application: r = b - A x0 = (d0 - d) x0
          exactly (P x0 = b), and A being an M-matrix with A 1 >= d (K with no positive
          off-diagonal entries and row sums >= 0, as for P1 elements on Delaunay meshes),
          |A^-1 r| <= max |r / d| at every entry.
        * x0 is first scaled by the best factor in the A-norm, 1 + x0.r / x0.A x0 (A x0 =
          b - r: no product needed), when that factor is between 0.5 and 2 (every sign
          kept). A drift of d by a common factor s where d dominates (a change of step size,
          a part heating evenly) leaves the error of x0 mostly along x0: the answer there is
          x0 / s.
        * Every x returned is then corrected to x + c |r| / d, c = sum(r) / sum(A |r| / d),
          so that its residual sums to zero: that sum is the balance of heat of the
          correction, which the storage and face terms then keep as an exact solve would
          (K's columns sum to zero away from fixed nodes). |c| <= 1 there (sum(A |r| / d)
          >= sum |r|), so no entry moves by more than the bound on its error above, and
          entries without residual stay as they are (no new under- or overshoot). One
          product with K.
        * Later errors are estimated by z = P^-1 r, and x + z (corrected) is returned.

        Both corrections are left out without `allowed`: the solve then is a fixed linear
        map, as GMRES needs of a preconditioner.
        """
        bnorm = float(np.linalg.norm(b))
        if bnorm == 0.0:
            return np.zeros_like(b), 0, True, 0.0
        # with a tolerance asked for, the residual only stops at round-off
        tol = (self.rtol if allowed is None else 1e-13) * bnorm
        apply, k = self._apply, self.k
        positive = float(d.min()) > 0.0

        def balanced(x, r):
            """x + c |r| / d with its residual summing to zero (see above); r with it."""
            if allowed is None or not positive:
                return x, r
            v = np.abs(r) / d
            av = k @ v + d * v
            net = float(av.sum())
            c = float(r.sum()) / net if net > 0.0 else math.inf
            if abs(c) > _MAX_SCALING:
                return x, r
            return x + c * v, r - c * av

        x = apply(b)
        exact = self.method != "multigrid"  # P = K + diag(d0) exactly
        if exact:
            r = (self._d0 - d) * x
        else:
            r = b - (k @ x + d * x)
        if allowed is not None:
            ax = b - r  # A x0
            xax = float(x @ ax)
            if xax > 0.0:
                c = float(x @ r) / xax
                if -0.5 <= c <= 1.0:
                    x, r = x * (1.0 + c), r - c * ax
        x, r = balanced(x, r)
        if allowed is not None:
            wmax = float(np.max(weights))
            if exact and positive:
                bound = wmax * float(np.max(np.abs(r) / d))
                if bound <= allowed(float(np.max(np.abs(weights * x)))):
                    return x, 1, True, bound
        if float(np.linalg.norm(r)) <= tol:
            return x, 1, True, 0.0
        z = apply(r)
        uses = 2
        # the error left after x + z, relative to z: max |1 - d / d0| (same M-matrix bound)
        shrink = 1.0
        if exact and float(self._d0.min()) > 0.0:
            q = float(np.max(np.abs(1.0 - d / self._d0)))
            shrink = min(1.0, q / (1.0 - q)) if q < 1.0 else 1.0

        def corrected(x, r, z):
            return balanced(x + z, r - (k @ z + d * z))[0]

        if allowed is not None:
            err = float(np.max(np.abs(weights * z)))
            if err <= allowed(float(np.max(np.abs(weights * x)))):
                return corrected(x, r, z), uses, True, err * shrink
        p = z.copy()
        rz = float(r @ z)
        while True:
            ap = k @ p + d * p
            alpha = rz / float(p @ ap)
            x += alpha * p
            r -= alpha * ap
            if float(np.linalg.norm(r)) <= tol:
                return balanced(x, r)[0], uses, True, 0.0
            if uses >= maxiter:
                return x, uses, False, math.inf
            z = apply(r)
            uses += 1
            if allowed is not None:
                err = float(np.max(np.abs(weights * z)))
                if err <= allowed(float(np.max(np.abs(weights * x)))):
                    return corrected(x, r, z), uses, True, err * shrink
            rz_new = float(r @ z)
            p = z + (rz_new / rz) * p
            rz = rz_new

    def solve(
        self,
        d: np.ndarray,
        b: np.ndarray,
        *,
        weights: np.ndarray | None = None,
        tolerance=None,
    ) -> np.ndarray:
        """x with (K + diag(d)) x = b.

        Args:
            d: the diagonal. b: the right-hand side.
            weights: the error is measured as max |weights * (x - x_exact)| (default 1).
            tolerance: the weighted error allowed: a number, or a function of
                max |weights * x| returning one (so that it may be relative to the
                solution). Without it, the residual must fall below `rtol` times b.

        After the solve `last_error` holds the estimated weighted error of x (0 when the
        residual test ended it).

        The preconditioner is rebuilt when the applications spent beyond the first of each
        solve since the last build have cost as much as a build; the rebuild waits for the
        next solve with another diagonal (a solve with the same d as the last one, such as
        the error estimate after a Newton iteration, keeps the preconditioner).

        Raises:
            numpy.linalg.LinAlgError: no convergence even with a fresh preconditioner, or the
                matrix is not positive definite.
        """
        self.stats.solves += 1
        self.last_error = 0.0
        if b.size == 0:
            return b.copy()
        allowed = None
        if tolerance is not None:
            allowed = tolerance if callable(tolerance) else (lambda _x, t=float(tolerance): t)
            weights = np.ones_like(b) if weights is None else np.asarray(weights, dtype=float)
        if self._apply is None and self._pending is not None and not self._stale:
            excess, pending = self._excess, self._pending
            self._build(pending)  # as before a restore
            self._excess, self._pending = excess, None
        elif self._apply is None or (self._stale and d is not self._last_d):
            self._build(d)
        self._last_d = d
        x, uses, ok, err = self._pcg(d, b, 200, weights, allowed)
        self.stats.iterations += uses
        if not ok:
            self._build(d)
            x, uses, ok, err = self._pcg(d, b, 400, weights, allowed)
            self.stats.iterations += uses
            if not ok:
                raise np.linalg.LinAlgError("conjugate gradients did not converge")
            self.last_error = err
            return x
        self.last_error = err
        self._excess += uses - 1
        self._stale = self._excess > self._build_cost  # drifted: rebuild for the next d
        return x
        self._excess += uses - 1
        self._stale = self._excess > self._build_cost  # drifted: rebuild for the next d
        return x
        self._excess += uses - 1
        if self._excess > self._build_cost:
            self._apply = None  # drifted: rebuild at the next solve
        return x
