"""Adaptive implicit time marching of the heat balance: a generator of accepted steps.

Scheme: one backward Euler step, then TR-BDF2 (trapezoidal stage to t + gamma h, BDF2 stage
to t + h, gamma = 2 - sqrt 2; L-stable, second order; Bank et al. 1985, Hosea & Shampine 1996).
Both TR-BDF2 stages and the Euler step solve the same kind of equation for T:

    m a (H(T) - H*) + K phi(T) - F(T, t) = 0,

with a = 1/h (Euler) or a = 2/(gamma h) (both TR-BDF2 stages) and H* from earlier values.
The local error of a step is estimated from the enthalpy rates at t, t + gamma h and t + h,
filtered through (I - gamma h/2 J)^-1 (Shampine's filter) and measured in kelvin against
``tolerance * span``. Each stage is solved by Newton's method on the Kirchhoff form, whose
Jacobian is (K + diag(d)) diag(k) with K the constant unit-conductivity stiffness; every Newton
correction is an exact solve by conjugate gradients preconditioned with a kept factorisation or
multigrid hierarchy (`femheat.linear`), rebuilt only when the iteration count shows it has
drifted. Steps never cross a schedule breakpoint.

Nothing here opens a file or draws: consumers iterate over `Marcher` and observe the `Step`s.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp

from .errors import SolverError
from .linear import SpdSolver, choose_method
from .lookup import MaterialLookup
from .model import Model

__all__ = ["StepSettings", "Step", "SolverStats", "Marcher", "GAMMA"]

GAMMA = 2.0 - math.sqrt(2.0)
_ERR_CONST = abs((-3.0 * GAMMA**2 + 4.0 * GAMMA - 2.0) / (12.0 * (2.0 - GAMMA)))
_W0 = 1.0 / (2.0 * (2.0 - GAMMA))  # TR-BDF2 quadrature weights of the face heat flow
_W1 = GAMMA / 2.0


@dataclass(frozen=True)
class StepSettings:
    """Time-step control.

    Args:
        span: temperature range of the problem, K; tolerances are fractions of it.
        tolerance: allowed local error per step as a fraction of `span`.
        first_step: s, size of the first (backward Euler) step.
        max_step: s, upper bound on the step (None: none).
        breakpoints: s, times the march must land on (schedule corners).
        end_time: s, stop here (None: until the consumer stops).
        max_steps: safety limit on accepted steps.
        fixed_step: s, march with this constant step and no error control (for studies of
            the order of accuracy); the first step is backward Euler of the same size.
    """

    span: float
    tolerance: float = 2e-5
    first_step: float = 1e-3
    max_step: float | None = None
    breakpoints: tuple[float, ...] = ()
    end_time: float | None = None
    max_steps: int = 200_000
    fixed_step: float | None = None


@dataclass(frozen=True)
class Step:
    """One accepted step.

    Attributes:
        times: (t0, t1) or (t0, t0 + gamma h, t1), s.
        states: nodal temperatures (C) at `times`.
        rate: dT/dt at t1 per node, K/s.
        heat_in: face name -> heat into the part during the step, J (planar: per m depth).
        scheme: "euler" or "trbdf2".
    """

    index: int
    times: tuple[float, ...]
    states: tuple[np.ndarray, ...]
    rate: np.ndarray
    heat_in: dict[str, float]
    scheme: str

    @property
    def t0(self) -> float:
        return self.times[0]

    @property
    def t1(self) -> float:
        return self.times[-1]

    @property
    def start(self) -> np.ndarray:
        return self.states[0]

    @property
    def end(self) -> np.ndarray:
        return self.states[-1]

    def interpolate(self, t: float) -> np.ndarray:
        """Temperatures at t inside the step (quadratic through the stage values)."""
        return interpolate_states(self.times, self.states, t)


def interpolate_states(times, states, t):
    """Lagrange interpolation through 2 or 3 (time, field) pairs."""
    out = np.zeros_like(states[0])
    for i, (ti, yi) in enumerate(zip(times, states, strict=True)):
        w = 1.0
        for j, tj in enumerate(times):
            if j != i:
                w *= (t - tj) / (ti - tj)
        out = out + w * yi
    return out


@dataclass
class SolverStats:
    """Counters of the work done by the march."""

    steps: int = 0
    rejected: int = 0
    newton_iterations: int = 0
    factorizations: int = 0
    linear_solves: int = 0
    linear_iterations: int = 0
    linear_method: str = ""
    largest_final_newton_correction_K: float = 0.0


class _NewtonFailed(Exception):
    pass


_HEAP_PAD = 64 * 2**20  # bytes
# linear solves are accurate to this share of what their result is judged by: a tenth of the
# Newton tolerance for Newton corrections, of the step tolerance for the error estimate
_LINEAR_SHARE = 0.1


def _keep_heap() -> None:
    """Ask glibc's malloc to keep 64 MB of freed heap rather than hand it back at once.

    The march makes many short-lived node vectors; without this, each one of 100k nodes is
    mapped afresh from the system and costs its page faults (measured: 0.5 ms per vector,
    more than the arithmetic on it). Only the heap's slack changes; nothing else. Other C
    libraries and systems are left alone.
    """
    import ctypes

    try:
        ctypes.CDLL(None).mallopt(-2, _HEAP_PAD)  # M_TOP_PAD
    except (OSError, AttributeError):
        pass


class _ConsistentJacobian:
    """Newton's matrix with a consistent capacity matrix M (P2 elements), scaled by 1/k:

        A = K + diag(d) + (M - diag(m)) diag(s),   s = a rho c / k,  d = m s - (dF/dT) / k,

    which is not symmetric when s varies. Solved by GMRES, preconditioned by the lumped
    matrix K + diag(d) (the symmetric solver); the two are spectrally close, so a few
    iterations suffice.
    """

    def __init__(self, kff, mff, mlumped):
        self.k = kff
        self.excess = (mff - sp.diags(mlumped)).tocsr()

    def solve(self, diag, store_k, rhs, precondition):
        from scipy.sparse.linalg import LinearOperator, gmres

        n = rhs.size
        if n == 0:
            return rhs.copy()

        def matvec(y):
            return self.k @ y + diag * y + self.excess @ (store_k * y)

        op = LinearOperator((n, n), matvec=matvec, dtype=float)
        prec = LinearOperator((n, n), matvec=precondition, dtype=float)
        x, info = gmres(op, rhs, rtol=1e-6, atol=0.0, restart=40, maxiter=20, M=prec)
        if info != 0 or not np.all(np.isfinite(x)):
            raise _NewtonFailed(f"GMRES did not converge (info {info})")
        return x


@dataclass
class Marcher:
    """Iterate to march `model` from `initial` (C per node) under `settings`.

    The consumer may change `end_time` while iterating (e.g. to add a hold after the target).
    `snapshot()` after any step gives a state that `resume=` continues from exactly.
    """

    model: Model
    initial: np.ndarray
    settings: StepSettings
    stats: SolverStats = field(default_factory=SolverStats)
    resume: dict | None = None

    def __post_init__(self):
        self.end_time = self.settings.end_time
        m = self.model
        self._free = m.free_nodes
        kff = m.stiffness[self._free][:, self._free]
        # consistent capacity (P2): Newton's matrix is no longer K + diag(d)
        self._jacobian = None
        if m.capacity is not None:
            self._jacobian = _ConsistentJacobian(
                kff, m.capacity[self._free][:, self._free], m.volumes[self._free]
            )
        method = choose_method(self._free.size, m.mesh.dim)
        self._linear = SpdSolver(kff, method, dim=m.mesh.dim)
        self.stats.linear_method = self._linear.method
        self._mat = MaterialLookup(m.material)  # the material tables, fast, for the march
        # every node free (no fixed-temperature face): a slice instead of an index array
        self._f = slice(None) if self._free.size == m.n else self._free
        self._atol = self.settings.tolerance * self.settings.span
        self._newton_tol = 0.1 * self._atol
        self._diag = None
        self._eta = 1.0  # last observed Newton contraction rate (1: none yet)
        self._accepted: tuple[float, float] | None = None  # (error, size) of the last step
        self._state: dict | None = None
        if self.resume is not None:
            self._restore(self.resume)

    def _solve(self, diag: np.ndarray, rhs: np.ndarray, accuracy=None) -> np.ndarray:
        """Solve (K + diag(d)) x = rhs; `accuracy` = (weights, tolerance) for
        `SpdSolver.solve`, or None for its residual tolerance."""
        if accuracy is None:
            x = self._linear.solve(diag, rhs)
        else:
            weights, tolerance = accuracy
            x = self._linear.solve(diag, rhs, weights=weights, tolerance=tolerance)
        ls = self._linear.stats
        self.stats.linear_method = self._linear.method
        self.stats.factorizations = ls.builds
        self.stats.linear_solves = ls.solves
        self.stats.linear_iterations = ls.iterations
        return x

    def _solve_jacobian(
        self, diag: np.ndarray, store_k: np.ndarray, rhs: np.ndarray, accuracy=None
    ):
        """Solve with Newton's matrix (scaled by 1/k): K + diag(d) when the capacity is
        lumped; K + diag(d) + (M - diag(m)) diag(store_k) when it is consistent (P2).

        `accuracy`: (weights, tolerance) wanted of the solution (lumped capacity only; else a
        relative residual of `SpdSolver.rtol`)."""
        if self._jacobian is None:
            return self._solve(diag, rhs, accuracy)
        return self._jacobian.solve(diag, store_k, rhs, lambda r: self._solve(diag, r))

    # -- one implicit stage ------------------------------------------------------------------
    def _stage(self, guess: np.ndarray, t: float, a: float, hstar: np.ndarray) -> np.ndarray:
        """Newton for m a (H(T) - H*) + K phi(T) - F(T, t) = 0; returns T (C).

        With the Kirchhoff form the Jacobian is (K + diag(d)) diag(k), d = (m a rho c - dF/dT)/k.
        """
        m, mat, free = self.model, self._mat, self._f
        temp = guess.copy()
        if m.fixed_nodes.size:
            temp[m.fixed_nodes] = m.fixed_values(t)
        previous = None
        for _ in range(10):
            flow, dflow = m.boundary_flow(temp, t)
            enthalpy, capacity = mat.enthalpy_capacity(temp)
            phi, conductivity = mat.kirchhoff_conductivity(temp)
            resid = m.store(a * (enthalpy - hstar))
            resid += m.stiffness @ phi - flow
            k = conductivity[free]
            store_k = a * capacity[free] / k
            diag = m.volumes[free] * store_k - dflow[free] / k
            self._diag, self._store_k = diag, store_k
            try:
                # x = k * step: its error is measured in K
                accuracy = (1.0 / k, self._newton_accuracy)
                step = self._solve_jacobian(diag, store_k, -resid[free], accuracy) / k
            except np.linalg.LinAlgError as exc:
                raise _NewtonFailed(str(exc)) from None
            linear = self._linear.last_error if self._jacobian is None else 0.0
            temp[free] += step
            self.stats.newton_iterations += 1
            norm = float(np.max(np.abs(step))) if step.size else 0.0
            if not np.isfinite(norm):
                raise _NewtonFailed("non-finite Newton update")
            rate = None if previous is None else norm / previous
            if norm + linear <= self._newton_tol:
                if rate is not None and rate < 1.0:
                    self._eta = max(rate, 1e-2)
                self._note(norm + linear)
                return temp
            if rate is not None:
                if rate >= 1.0:
                    self._eta = 1.0
                    raise _NewtonFailed(f"Newton diverges (contraction {rate:.2f})")
                self._eta = max(rate, 1e-2)
            # the error left: the contraction seen (in earlier stages, for the first
            # correction) times the correction, plus the error of the linear solve
            eta = self._eta if rate is None else rate
            left = eta / (1.0 - eta) * norm + linear if eta < 1.0 else math.inf
            if left <= self._newton_tol:
                self._note(left)
                return temp
            previous = norm
        raise _NewtonFailed(f"Newton did not converge (last correction {norm:.3g} K)")

    def _newton_accuracy(self, largest: float) -> float:
        """Error (K) allowed in a Newton correction whose largest entry is `largest` K.

        Enough room for the correction to end the stage at once when the contraction seen so
        far says it may; otherwise a tenth of the correction: Newton's next iteration
        corrects the rest, and a tighter solve would cost more than it saves.
        """
        tol, eta = self._newton_tol, self._eta
        floor = _LINEAR_SHARE * tol
        if eta < 1.0:
            room = tol - eta / (1.0 - eta) * largest
            if room > floor:
                return room
        return max(floor, _LINEAR_SHARE * largest)

    def _estimate_accuracy(self, largest: float) -> float:
        """Error (K) allowed in the filtered error estimate: a tenth of it, or of the step
        tolerance when it is smaller (accepting or rejecting a step needs no more)."""
        return _LINEAR_SHARE * max(self._atol, largest)

    def _note(self, norm: float) -> None:
        s = self.stats
        s.largest_final_newton_correction_K = max(s.largest_final_newton_correction_K, norm)

    # -- the march ----------------------------------------------------------------------------
    def _next_break(self, t: float) -> float:
        cands = [b for b in self.settings.breakpoints if b > t * (1 + 1e-12) + 1e-12]
        if self.end_time is not None:
            cands.append(self.end_time)
        return min(cands) if cands else math.inf

    def _clip(self, t: float, h: float) -> float:
        if self.settings.max_step is not None:
            h = min(h, self.settings.max_step)
        gap = self._next_break(t) - t
        if gap <= h * (1 + 1e-9):
            return gap
        if gap < 1.5 * h:
            return 0.5 * gap
        return h

    def snapshot(self) -> dict:
        """The march's state after the last accepted step, for a checkpoint.

        Arrays are copies; with `Marcher(..., resume=snapshot)` the march continues exactly
        as it would have (same steps, same results).
        """
        if self._state is None:
            raise SolverError("nothing to snapshot: the march has not started")
        st = self._state
        return {
            "t": st["t"],
            "h": st["h"],
            "temperature": st["temp"].copy(),
            "enthalpy": st["h_enth"].copy(),
            "enthalpy_rate": st["hdot"].copy(),
            "rate": st["rate"].copy(),
            "flows": dict(st["flows"]),
            "end_time": self.end_time,
            "stats": dict(vars(self.stats)),
            "newton_contraction": self._eta,
            "last_error": None if self._accepted is None else self._accepted[0],
            "last_step": None if self._accepted is None else self._accepted[1],
            "linear": self._linear.state(),
        }

    def _restore(self, snap: dict) -> None:
        self._state = {
            "t": float(snap["t"]),
            "h": float(snap["h"]),
            "temp": np.asarray(snap["temperature"], dtype=float).copy(),
            "h_enth": np.asarray(snap["enthalpy"], dtype=float).copy(),
            "hdot": np.asarray(snap["enthalpy_rate"], dtype=float).copy(),
            "rate": np.asarray(snap["rate"], dtype=float).copy(),
            "flows": {k: float(v) for k, v in snap["flows"].items()},
        }
        self.end_time = snap.get("end_time", self.end_time)
        self._eta = float(snap.get("newton_contraction", 1.0))
        if snap.get("last_error") is not None and snap.get("last_step") is not None:
            self._accepted = (float(snap["last_error"]), float(snap["last_step"]))
        for key, value in snap.get("stats", {}).items():
            setattr(self.stats, key, value)
        # the linear solver goes on with the same preconditioner, and counting from the same
        if snap.get("linear") is not None:
            self._linear.restore(snap["linear"])
        ls = self._linear.stats
        ls.builds = self.stats.factorizations
        ls.solves = self.stats.linear_solves
        ls.iterations = self.stats.linear_iterations

    def _first_step(self):
        """Backward Euler from the initial field, retried with a smaller step if Newton fails."""
        m, mat, s = self.model, self.model.material, self.settings
        t = 0.0
        temp = np.asarray(self.initial, dtype=float).copy()
        h_enth = mat.enthalpy(temp)
        h = s.fixed_step or s.first_step
        while True:
            hh = self._clip(t, h)
            try:
                new = self._stage(temp, t + hh, 1.0 / hh, h_enth)
                break
            except _NewtonFailed:
                self.stats.rejected += 1
                h = 0.25 * hh
                if h < 1e-12:
                    raise SolverError("the first step failed to converge") from None
        h_new = mat.enthalpy(new)
        hdot = (h_new - h_enth) / hh
        flows = m.face_flows(new, t + hh, hdot)
        rate = hdot / mat.capacity(new)
        self.stats.steps += 1
        step = Step(
            0, (t, t + hh), (temp, new), rate, {k: v * hh for k, v in flows.items()}, "euler"
        )
        self._state = {
            "t": t + hh,
            "h": s.fixed_step or 4.0 * hh,
            "temp": new,
            "h_enth": h_new,
            "hdot": hdot,
            "rate": rate,
            "flows": flows,
        }
        return step

    def __iter__(self):
        # one BLAS thread: the vectors here are short and threads of several BLAS libraries
        # in one process fight each other (measured 5x slower solves)
        from threadpoolctl import threadpool_limits

        limits = threadpool_limits(limits=1, user_api="blas")
        _keep_heap()
        try:
            yield from self._march()
        finally:
            limits.restore_original_limits()

    def _march(self):
        m, mat = self.model, self._mat
        s = self.settings
        if self._state is None:
            yield self._first_step()
        st = self._state
        t, temp, h_enth, hdot = st["t"], st["temp"], st["h_enth"], st["hdot"]
        rate, flows, h = st["rate"], st["flows"], st["h"]

        while self.stats.steps < s.max_steps:
            if self.end_time is not None and t >= self.end_time * (1 - 1e-12):
                return
            hh = self._clip(t, h)
            a = 2.0 / (GAMMA * hh)
            try:
                hstar = h_enth + 0.5 * GAMMA * hh * hdot
                tg_temp = self._stage(temp + GAMMA * hh * rate, t + GAMMA * hh, a, hstar)
                hg = mat.enthalpy(tg_temp)
                hdot_g = a * (hg - hstar)
                hstar2 = (hg - (1.0 - GAMMA) ** 2 * h_enth) / (GAMMA * (2.0 - GAMMA))
                guess = tg_temp + (1.0 - GAMMA) / GAMMA * (tg_temp - temp)
                new = self._stage(guess, t + hh, a, hstar2)
            except _NewtonFailed:
                self.stats.rejected += 1
                h = 0.25 * hh
                if h < 1e-9 * max(t, 1.0):
                    raise SolverError(f"step size underflow at t = {t:.6g} s") from None
                continue
            h_new = mat.enthalpy(new)
            hdot_new = a * (h_new - hstar2)
            est = (2.0 * _ERR_CONST * hh) * (
                hdot / GAMMA - hdot_g / (GAMMA * (1.0 - GAMMA)) + hdot_new / (1.0 - GAMMA)
            )
            free = self._f
            k = mat.conductivity(new[free])
            accuracy = (1.0 / k, self._estimate_accuracy)
            rhs = m.store(a * est)[free]
            err_t = self._solve_jacobian(self._diag, self._store_k, rhs, accuracy) / k
            err = self._error_norm(err_t)
            factor = self._step_factor(err, hh)
            if s.fixed_step:
                factor = 1.0
            elif err > 1.0:
                self.stats.rejected += 1
                h = hh * min(0.9, max(0.2, factor))
                continue
            flows_g = m.face_flows(tg_temp, t + GAMMA * hh, hdot_g)
            flows_1 = m.face_flows(new, t + hh, hdot_new)
            heat = {k_: hh * (_W0 * (flows[k_] + flows_g[k_]) + _W1 * flows_1[k_]) for k_ in flows}
            rate = hdot_new / mat.capacity(new)
            self.stats.steps += 1
            proposal = hh * min(3.0, max(0.2, factor))
            if s.fixed_step:
                h_next = s.fixed_step
            elif hh < h and factor >= 1.0:
                h_next = max(proposal, h)  # the step was cut short by a breakpoint
            else:
                h_next = proposal
            step = Step(
                self.stats.steps - 1,
                (t, t + GAMMA * hh, t + hh),
                (temp, tg_temp, new),
                rate,
                heat,
                "trbdf2",
            )
            t, temp, h_enth, hdot, flows, h = t + hh, new, h_new, hdot_new, flows_1, h_next
            self._state = {
                "t": t,
                "h": h,
                "temp": temp,
                "h_enth": h_enth,
                "hdot": hdot,
                "rate": rate,
                "flows": flows,
            }
            self._accepted = (max(err, 1e-4), hh)
            yield step
        raise SolverError(f"step limit of {s.max_steps} reached at t = {t:.6g} s")

    def _step_factor(self, err: float, hh: float) -> float:
        """Next step over this one (before the 0.2..3 limits), from this step's error `err`
        (relative to the allowed) and size `hh` (s).

        0.9 err^(-1/3) for a method of order 2 (local error ~ h^3), times, after an accepted
        step, how the error changed from that step to this one: (h / h_last) (err_last /
        err)^(1/3) (Gustafsson's predictive control, Gustafsson 1994, ACM TOMS 20(4)). A
        step grows faster while its error stays flat (the start of a heating, whose
        transients fade) and shrinks earlier while its error climbs (c(T) peaks ahead),
        which saves steps and rejections.
        """
        if err <= 0.0:
            return 3.0
        factor = 0.9 * err ** (-1.0 / 3.0)
        if self._accepted is not None:
            err_last, h_last = self._accepted
            factor *= (hh / h_last) * (err_last / err) ** (1.0 / 3.0)
        return factor

    def _error_norm(self, err_t: np.ndarray) -> float:
        """Size of the estimated local error relative to the allowed one (max norm, K)."""
        return float(np.max(np.abs(err_t))) / self._atol if err_t.size else 0.0
