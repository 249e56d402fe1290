r"""Exact solutions of transient heat conduction, used to verify the finite-element solver.

Bodies and notation
-------------------
Three one-dimensional bodies, named by the strings ``"slab"`` (plane wall of half-thickness
``L``, both faces exposed), ``"cylinder"`` (infinite cylinder of outer radius ``L``) and
``"sphere"`` (outer radius ``L``). Constant properties, uniform start temperature ``Ti`` and a
surrounding fluid at ``T_inf`` with film coefficient ``h``. Dimensionless groups::

    theta* = (T - T_inf) / (Ti - T_inf)      Fo = alpha t / L**2      Bi = h L / k
    xi = x / L (slab) or r / L (cylinder, sphere), 0 <= xi <= 1

``Bi = math.inf`` means a fixed surface temperature ``T_inf``; ``Bi = 0`` an insulated body.

Series solutions (Carslaw & Jaeger, *Conduction of Heat in Solids*, 2nd ed., 1959, sec. 3.11,
7.7, 9.4 [memory for section numbers]; Incropera, DeWitt, Bergman, Lavine, *Fundamentals of
Heat and Mass Transfer*, 6th ed., sec. 5.5-5.6 [memory for section numbers])::

    theta*(Fo, xi) = sum_n C_n exp(-z_n**2 Fo) X(z_n xi)

    body      eigenvalue equation       C_n                                  X(u)
    slab      z tan z = Bi              4 sin z / (2 z + sin 2z)             cos u
    cylinder  z J1(z) / J0(z) = Bi      (2 / z) J1 / (J0**2 + J1**2)         J0(u)
    sphere    1 - z cot z = Bi          4 (sin z - z cos z) / (2 z - sin 2z) sin(u) / u

Root ``n`` (counting from 1) lies in ``((n-1) pi, (n-1/2) pi)`` for the slab, between the
zeros ``(j1_{n-1}, j0_n)`` of ``J1`` and ``J0`` (with ``j1_0 = 0``) for the cylinder, and in
``((n-1) pi, n pi)`` for the sphere. Each is bracketed there and found with
:func:`scipy.optimize.brentq`. The slab and sphere equations are solved in the well-conditioned
form ``d = atan(...)`` for the offset ``d`` of the root from ``(n-1) pi``.

The one-term form ``C_1 exp(-z_1**2 Fo) X(z_1 xi)`` is the usual approximation for
``Fo > 0.2`` (Incropera sec. 5.5 [memory]). Computed here against the series at ``Fo = 0.2``
and the centre, over ``0.01 <= Bi <= 1000``: at most 1.8 % off (slab, Bi near 2.2), 1.6 %
(cylinder), 1.0 % (sphere); away from the centre the slab's one-term error reaches 3 %.

Product solutions (Incropera sec. 5.8 [memory]): with the same ``T_inf`` on every face, the
theta* of a rectangular bar, a box or a short cylinder is the product of the slab and cylinder
theta* of its directions, each with its own ``Bi`` and ``alpha / L**2``.

Lumped capacitance (Incropera sec. 5.1-5.3)::

    convection:  theta* = exp(-h A t / (rho V c))                      (eq. 5.6 [memory])
    radiation:   t = rho V c / (4 eps A sigma T_sur**3) [ ln|(T_sur + T)/(T_sur - T)|
                     - ln|(T_sur + Ti)/(T_sur - Ti)| + 2 (atan(T/T_sur) - atan(Ti/T_sur)) ]
                                                                   (eq. 5.18 [memory])
    mixed:       rho V c dT/dt = A [h (T_gas - T) + eps sigma (T_wall**4 - T**4)]

The mixed equation has no general closed form. Its right-hand side vanishes at one equilibrium
temperature ``T_eq`` and factors exactly as ``(T_eq - T) q(T)`` with
``q(T) = h + eps sigma (T_eq + T)(T_eq**2 + T**2) > 0``; the time is the quadrature of
``dt/dT`` after the substitution ``u = ln|T_eq - Ti| - ln|T_eq - T|``, which removes the
logarithmic growth near ``T_eq``. No linearisation is made.

Semi-infinite solid with surface convection (Incropera eq. 5.60 [memory])::

    (T - Ti)/(T_inf - Ti) = erfc(eta) - exp(h x/k + h**2 alpha t/k**2) erfc(eta + h sqrt(alpha t)/k)
                          = erfc(eta) - exp(-eta**2) erfcx(eta + h sqrt(alpha t)/k),
    eta = x / (2 sqrt(alpha t)),

where ``erfcx(u) = exp(u**2) erfc(u)``; the second form follows from
``h x/k + beta**2 - (eta + beta)**2 = -eta**2`` with ``beta = h sqrt(alpha t)/k`` and never
overflows.

Temperatures passed to the lumped functions are in Celsius; they are converted to kelvin with
:data:`KELVIN` where radiation needs absolute temperatures. Times are in seconds.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Sequence
from functools import lru_cache

import numpy as np
from numpy.typing import ArrayLike
from scipy import integrate, optimize, special

__all__ = [
    "BODIES",
    "KELVIN",
    "STEFAN_BOLTZMANN",
    "coefficients",
    "fourier_at",
    "lumped_convection_time",
    "lumped_mixed_time",
    "lumped_radiation_time",
    "one_term",
    "product_time",
    "roots",
    "semi_infinite_convection",
    "theta",
]

STEFAN_BOLTZMANN = 5.670374419e-8
"""Stefan-Boltzmann constant [W/(m2 K4)], CODATA 2018 (exact in the 2019 SI)."""

KELVIN = 273.15
"""Offset from Celsius to kelvin [K]."""

BODIES = ("slab", "cylinder", "sphere")
"""Names of the one-dimensional bodies with exact solutions."""

# The first omitted term of the series is below exp(-_TAIL_EXPONENT) (about 1e-13) when
# z_N**2 Fo >= _TAIL_EXPONENT, with z_N the last root kept.
_TAIL_EXPONENT = 30.0


# --------------------------------------------------------------------------------------------
# eigenvalues
# --------------------------------------------------------------------------------------------
def _brentq(f: Callable[[float], float], a: float, b: float) -> float:
    """Root of ``f`` in ``[a, b]`` to full double precision.

    When rounding leaves no sign change (a root at an end of the bracket to within rounding,
    e.g. for ``Bi`` near 1e16), the end with the smaller ``|f|`` is returned.
    """
    fa, fb = f(a), f(b)
    if fa == 0.0:
        return a
    if fb == 0.0:
        return b
    if np.sign(fa) == np.sign(fb):
        return a if abs(fa) < abs(fb) else b
    return optimize.brentq(f, a, b, xtol=1e-15, rtol=4.0 * np.finfo(float).eps, maxiter=200)


def _slab_roots(bi: float, n: int) -> np.ndarray:
    # z tan z = Bi with z = (n-1) pi + d, d in [0, pi/2]:  d = atan(Bi / z).
    if math.isinf(bi):
        return (np.arange(1, n + 1) - 0.5) * np.pi
    out = np.empty(n)
    for i in range(n):
        base = i * np.pi
        d = _brentq(lambda d, base=base: d - math.atan2(bi, base + d), 0.0, 0.5 * np.pi)
        out[i] = base + d
    return out


def _cylinder_roots(bi: float, n: int) -> np.ndarray:
    # z J1(z) = Bi J0(z), root n in (j1_{n-1}, j0_n) with j1_0 = 0.
    j0 = special.jn_zeros(0, n)
    if math.isinf(bi):
        return j0
    j1 = np.concatenate(([0.0], special.jn_zeros(1, n - 1))) if n > 1 else np.zeros(1)
    if bi == 0.0:
        return j1
    if bi <= 1.0:

        def f(z: float) -> float:
            return z * special.j1(z) - bi * special.j0(z)
    else:

        def f(z: float) -> float:
            return (z / bi) * special.j1(z) - special.j0(z)

    return np.array([_brentq(f, lo, hi) for lo, hi in zip(j1, j0, strict=True)])


def _sphere_roots(bi: float, n: int) -> np.ndarray:
    # 1 - z cot z = Bi. Root 1 in (0, pi) from (1 - Bi) sin(z)/z - cos z = 0, which drops the
    # trivial root z = 0; root n >= 2 as z = (n-1) pi + d with cot d = (1 - Bi)/z, d in (0, pi).
    if math.isinf(bi):
        return np.arange(1, n + 1) * np.pi
    out = np.empty(n)
    if bi == 0.0:
        out[0] = 0.0
    else:
        out[0] = _brentq(lambda z: (1.0 - bi) * np.sinc(z / np.pi) - math.cos(z), 0.0, np.pi)
    for i in range(1, n):
        base = i * np.pi
        d = _brentq(lambda d, base=base: d - math.atan2(base + d, 1.0 - bi), 0.0, np.pi)
        out[i] = base + d
    return out


_ROOT_FINDERS: dict[str, Callable[[float, int], np.ndarray]] = {
    "slab": _slab_roots,
    "cylinder": _cylinder_roots,
    "sphere": _sphere_roots,
}


def _check_body(body: str) -> None:
    if body not in BODIES:
        raise ValueError(f"unknown body {body!r}; pick one of {list(BODIES)}")


def _check_bi(bi: float) -> float:
    bi = float(bi)
    if not bi >= 0.0:  # also rejects NaN
        raise ValueError(f"Biot number must be >= 0 (math.inf for a fixed surface); got {bi}")
    return bi


@lru_cache(maxsize=256)
def _roots_cached(body: str, bi: float, n: int) -> np.ndarray:
    z = _ROOT_FINDERS[body](bi, n)
    z.setflags(write=False)
    return z


def roots(body: str, bi: float, n: int) -> np.ndarray:
    """First ``n`` non-negative eigenvalues ``z_n`` of a slab, cylinder or sphere.

    Args:
        body: ``"slab"``, ``"cylinder"`` or ``"sphere"``.
        bi: Biot number ``h L / k`` [-], ``>= 0``; ``math.inf`` for a fixed surface temperature.
        n: number of roots, ``>= 1``.

    Returns:
        Increasing array of shape ``(n,)``: roots of ``z tan z = Bi`` (slab),
        ``z J1(z)/J0(z) = Bi`` (cylinder) or ``1 - z cot z = Bi`` (sphere). For ``Bi = inf``:
        ``(n - 1/2) pi``, the zeros of ``J0``, ``n pi``. For ``Bi = 0`` the first root is 0.

    Raises:
        ValueError: unknown body, negative or NaN ``bi``, or ``n < 1``.
    """
    _check_body(body)
    bi = _check_bi(bi)
    if int(n) != n or n < 1:
        raise ValueError(f"number of roots must be a positive integer; got n={n}")
    return _roots_cached(body, bi, int(n)).copy()


# --------------------------------------------------------------------------------------------
# coefficients and eigenfunctions
# --------------------------------------------------------------------------------------------
def _slab_coefficients(z: np.ndarray) -> np.ndarray:
    # 4 sin z / (2z + sin 2z) -> 1 as z -> 0; no cancellation.
    out = np.ones_like(z)
    nz = z != 0.0
    out[nz] = 4.0 * np.sin(z[nz]) / (2.0 * z[nz] + np.sin(2.0 * z[nz]))
    return out


def _cylinder_coefficients(z: np.ndarray) -> np.ndarray:
    out = np.ones_like(z)
    nz = z != 0.0
    j0, j1 = special.j0(z[nz]), special.j1(z[nz])
    out[nz] = 2.0 / z[nz] * j1 / (j0**2 + j1**2)
    return out


# Taylor series, k = 1..8, of sin z - z cos z and of 2z - sin 2z, each divided by z**3:
# sum (-1)**(k+1) 2k z**(2k-2) / (2k+1)!  and  sum (-1)**(k+1) 2**(2k+1) z**(2k-2) / (2k+1)!.
_K = np.arange(1, 9)
_SIGN_FACT = (-1.0) ** (_K + 1) / special.factorial(2 * _K + 1)
_NUM_SERIES = _SIGN_FACT * 2.0 * _K
_DEN_SERIES = _SIGN_FACT * 2.0 ** (2 * _K + 1)
_SPHERE_SERIES_BELOW = 0.5  # truncation error of the series there is below 1e-17 relative


def _sphere_coefficients(z: np.ndarray) -> np.ndarray:
    # 4 (sin z - z cos z)/(2z - sin 2z): both cancel like z**3 near 0, so use the series there.
    out = np.empty_like(z)
    small = z < _SPHERE_SERIES_BELOW
    powers = z[small, None] ** (2 * _K - 2)
    out[small] = 4.0 * (powers @ _NUM_SERIES) / (powers @ _DEN_SERIES)
    zb = z[~small]
    out[~small] = 4.0 * (np.sin(zb) - zb * np.cos(zb)) / (2.0 * zb - np.sin(2.0 * zb))
    return out


_COEFFICIENTS: dict[str, Callable[[np.ndarray], np.ndarray]] = {
    "slab": _slab_coefficients,
    "cylinder": _cylinder_coefficients,
    "sphere": _sphere_coefficients,
}

_SHAPES: dict[str, Callable[[np.ndarray], np.ndarray]] = {
    "slab": np.cos,
    "cylinder": special.j0,
    "sphere": lambda u: np.sinc(u / np.pi),  # sin(u)/u, equal to 1 at u = 0
}


def coefficients(body: str, z: ArrayLike) -> np.ndarray:
    """Series coefficients ``C_n`` for the eigenvalues ``z``.

    Args:
        body: ``"slab"``, ``"cylinder"`` or ``"sphere"``.
        z: eigenvalues from :func:`roots` [-], ``>= 0``.

    Returns:
        Array like ``z``: ``4 sin z/(2z + sin 2z)`` (slab), ``(2/z) J1/(J0**2 + J1**2)``
        (cylinder), ``4 (sin z - z cos z)/(2z - sin 2z)`` (sphere); the limit 1 at ``z = 0``.
    """
    _check_body(body)
    z = np.asarray(z, dtype=float)
    if np.any(z < 0.0):
        raise ValueError(f"eigenvalues must be >= 0; got min(z)={z.min()}")
    return _COEFFICIENTS[body](np.atleast_1d(z)).reshape(z.shape)


# --------------------------------------------------------------------------------------------
# series
# --------------------------------------------------------------------------------------------
def _prepare(fo: ArrayLike, xi: ArrayLike) -> tuple[np.ndarray, np.ndarray, bool]:
    fo_a = np.asarray(fo, dtype=float)
    xi_a = np.asarray(xi, dtype=float)
    if np.any(~(fo_a >= 0.0)):
        raise ValueError(f"Fourier number must be >= 0; got min(fo)={np.nanmin(fo_a)}")
    if np.any(~((xi_a >= 0.0) & (xi_a <= 1.0))):
        raise ValueError(
            f"xi = x/L must lie in [0, 1]; got values from {np.min(xi_a)} to {np.max(xi_a)}"
        )
    scalar = fo_a.ndim == 0 and xi_a.ndim == 0
    fo_b, xi_b = np.broadcast_arrays(fo_a, xi_a)
    return fo_b, xi_b, scalar


def _series(body: str, bi: float, fo: np.ndarray, xi: np.ndarray, terms: int) -> np.ndarray:
    """Sum of the first ``terms`` terms; exact 1 at ``Fo = 0`` (the initial condition)."""
    z = _roots_cached(body, bi, terms)
    c = _COEFFICIENTS[body](np.array(z))
    fo_e = fo[..., None]
    decay = np.exp(-(z**2) * fo_e)
    shape = _SHAPES[body](z * xi[..., None])
    total = np.sum(c * decay * shape, axis=-1)
    return np.where(fo == 0.0, 1.0, total)


# Largest number of terms the inverse functions take on their own at very small Fo.
_MAX_TERMS = 2**14


def _terms_for(fo: float, terms: int) -> int:
    """At least ``terms``, and enough that ``z_N**2 Fo >= _TAIL_EXPONENT`` (up to a cap).

    Uses ``z_N > (N - 1) pi`` for all three bodies and rounds up to a power of two so that few
    root sets are computed and cached.
    """
    if fo <= 0.0:
        return terms
    needed = 2 + int(math.sqrt(_TAIL_EXPONENT / fo) / math.pi)
    if needed <= terms:
        return terms
    return max(terms, min(_MAX_TERMS, 1 << (needed - 1).bit_length()))


def _point_value(body: str, bi: float, fo: float, xi: np.ndarray, terms: int) -> float:
    """Series at one point with enough terms for ``fo`` (for the inverse functions)."""
    return float(_series(body, bi, np.asarray(fo), xi, _terms_for(fo, terms)))


def _warn_if_short(fo_min: float, body: str, bi: float, terms: int) -> None:
    z_last = _roots_cached(body, bi, terms)[-1]
    if 0.0 < fo_min and z_last**2 * fo_min < _TAIL_EXPONENT:
        warnings.warn(
            f"Fo={fo_min:.3g} is too small for {terms} series terms (need "
            f"Fo >= {_TAIL_EXPONENT / z_last**2:.3g} for 1e-13 truncation); "
            "pass more terms",
            RuntimeWarning,
            stacklevel=3,
        )


def _check_terms(terms: int) -> int:
    if int(terms) != terms or terms < 1:
        raise ValueError(f"terms must be a positive integer; got {terms}")
    return int(terms)


def theta(body: str, bi: float, fo: ArrayLike, xi: ArrayLike = 0.0, terms: int = 200):
    """Exact dimensionless temperature ``theta* = (T - T_inf)/(Ti - T_inf)`` (series).

    With the default 200 terms the truncation error is below 1e-13 for ``Fo >= 1e-3`` (indeed
    for ``Fo >= 30 / z_200**2``, about 8e-5); a ``RuntimeWarning`` is issued below that. At
    ``Fo = 0`` the initial value 1 is returned.

    Args:
        body: ``"slab"``, ``"cylinder"`` or ``"sphere"``.
        bi: Biot number ``h L / k`` [-], ``>= 0`` or ``math.inf``.
        fo: Fourier number ``alpha t / L**2`` [-], scalar or array, ``>= 0``.
        xi: position ``x/L`` or ``r/L`` [-] in ``[0, 1]``, scalar or array; broadcast with ``fo``.
        terms: number of series terms.

    Returns:
        ``float`` when ``fo`` and ``xi`` are scalars, else an array of their broadcast shape.

    Raises:
        ValueError: unknown body, ``bi < 0``, ``fo < 0``, ``xi`` outside ``[0, 1]``.
    """
    _check_body(body)
    bi = _check_bi(bi)
    terms = _check_terms(terms)
    fo_b, xi_b, scalar = _prepare(fo, xi)
    positive = fo_b[fo_b > 0.0]
    if positive.size:
        _warn_if_short(float(positive.min()), body, bi, terms)
    out = _series(body, bi, fo_b, xi_b, terms)
    return float(out) if scalar else out


def one_term(body: str, bi: float, fo: ArrayLike, xi: ArrayLike = 0.0):
    """First term ``C_1 exp(-z_1**2 Fo) X(z_1 xi)`` of the series.

    Within 1.8 % of :func:`theta` at the centre for ``Fo >= 0.2`` (see the module docstring).
    Arguments and return as for :func:`theta`; at ``Fo = 0`` it returns 1 like the series.
    """
    _check_body(body)
    bi = _check_bi(bi)
    fo_b, xi_b, scalar = _prepare(fo, xi)
    out = _series(body, bi, fo_b, xi_b, 1)
    return float(out) if scalar else out


# --------------------------------------------------------------------------------------------
# inverse problems: when does theta fall to a target
# --------------------------------------------------------------------------------------------
def _first_crossing(func: Callable[[float], float], target: float, guess: float) -> float:
    """Smallest ``s > 0`` with ``func(s) = target`` for ``func`` falling from ``func(0) = 1``.

    Brackets by doubling (up) and halving (down) from ``guess``, then refines with brentq to
    about 1e-13 relative.
    """
    hi = guess
    for _ in range(2000):
        if func(hi) <= target:
            break
        hi *= 2.0
    else:  # pragma: no cover - only for a func that never falls
        raise ValueError(f"theta stays above {target} up to {hi:.3g}")
    lo = hi
    for _ in range(200):
        lo *= 0.5
        if func(lo) > target:
            break
    else:
        lo = 0.0  # func(0) = 1 > target by definition
    if func(hi) == target:
        return hi
    return optimize.brentq(lambda s: func(s) - target, lo, hi, xtol=1e-300, rtol=1e-13, maxiter=500)


def _check_target(theta_target: float) -> float:
    theta_target = float(theta_target)
    if not 0.0 < theta_target < 1.0:
        raise ValueError(f"theta_target must lie strictly between 0 and 1; got {theta_target}")
    return theta_target


def _one_term_guess(body: str, bi: float, xi: float) -> tuple[float, float]:
    """Amplitude ``C_1 X(z_1 xi)`` and rate ``z_1**2`` of the first term."""
    z1 = _roots_cached(body, bi, 1)
    amp = float(_COEFFICIENTS[body](np.array(z1))[0] * _SHAPES[body](z1 * xi)[0])
    return amp, float(z1[0] ** 2)


def fourier_at(
    body: str, bi: float, theta_target: float, xi: float = 0.0, terms: int = 200
) -> float:
    """Smallest ``Fo > 0`` at which ``theta(body, bi, Fo, xi)`` falls to ``theta_target``.

    Works for targets down to 1e-6 and below; the answer is exact to about 1e-13 relative.
    theta* falls monotonically at every point of a body cooling from a uniform start, so the
    crossing is unique. Where the crossing lies at small Fo (targets near 1, points near the
    surface) more series terms than ``terms`` are used, up to 16384, enough for Fo >= 1e-8;
    a ``RuntimeWarning`` says when even that is short.

    Args:
        body: ``"slab"``, ``"cylinder"`` or ``"sphere"``.
        bi: Biot number [-], ``> 0`` or ``math.inf``.
        theta_target: ``(T - T_inf)/(Ti - T_inf)`` to reach [-], strictly between 0 and 1.
        xi: position ``x/L`` or ``r/L`` [-] in ``[0, 1]``.
        terms: least number of series terms.

    Returns:
        The Fourier number [-]. ``0.0`` at the surface (``xi = 1``) of a body with
        ``Bi = inf``, whose surface jumps to ``T_inf`` at once.

    Raises:
        ValueError: bad arguments, or ``bi = 0`` (an insulated body never changes).
    """
    _check_body(body)
    bi = _check_bi(bi)
    terms = _check_terms(terms)
    theta_target = _check_target(theta_target)
    xi = float(xi)
    _prepare(0.0, xi)
    if bi == 0.0:
        raise ValueError("with bi=0 the body is insulated and theta stays 1; no Fo reaches it")
    if math.isinf(bi) and xi == 1.0:
        return 0.0
    xi_a = np.asarray(xi)

    def func(fo: float) -> float:
        return _point_value(body, bi, fo, xi_a, terms)

    amp, rate = _one_term_guess(body, bi, xi)
    guess = max(math.log(amp / theta_target) / rate, 0.0) if amp > 0.0 else 0.0
    fo = _first_crossing(func, theta_target, max(guess, 1e-3))
    _warn_if_short(fo, body, bi, _terms_for(fo, terms))
    return fo


def product_time(factors: Sequence[tuple[str, float, float, float]], theta_target: float) -> float:
    """Time at which a product of 1D solutions falls to ``theta_target``.

    ``theta*(t) = prod_i theta(body_i, bi_i, a_i t, xi_i)`` (Incropera sec. 5.8 [memory]) for
    a rectangular bar (two slabs), a box (three slabs) or a short cylinder (cylinder and slab),
    all faces seeing the same ``T_inf``.

    Args:
        factors: one ``(body, bi, alpha_over_L2, xi)`` tuple per direction; ``alpha_over_L2`` is
            ``alpha / L**2`` [1/s] of that direction, ``xi`` the point's ``x/L`` or ``r/L``.
        theta_target: product value to reach [-], strictly between 0 and 1.

    Returns:
        The time [s]; ``0.0`` if one factor is the surface of a ``Bi = inf`` body.

    Raises:
        ValueError: no factors, a bad factor, or every factor insulated (``bi = 0``).
    """
    theta_target = _check_target(theta_target)
    if len(factors) == 0:
        raise ValueError("product_time needs at least one (body, bi, alpha_over_L2, xi) factor")
    checked: list[tuple[str, float, float, np.ndarray]] = []
    amp, rate = 1.0, 0.0
    for i, factor in enumerate(factors):
        if len(factor) != 4:
            raise ValueError(f"factors[{i}] must be (body, bi, alpha_over_L2, xi); got {factor!r}")
        body, bi, a, xi = factor
        _check_body(body)
        bi = _check_bi(bi)
        a, xi = float(a), float(xi)
        if not a > 0.0:
            raise ValueError(f"factors[{i}]: alpha_over_L2 must be > 0 [1/s]; got {a}")
        _prepare(0.0, xi)
        if math.isinf(bi) and xi == 1.0:
            return 0.0
        if bi == 0.0:
            continue  # insulated direction: factor 1 for all time
        amp_i, rate_i = _one_term_guess(body, bi, xi)
        amp *= amp_i
        rate += a * rate_i
        checked.append((body, bi, a, np.asarray(xi)))
    if not checked:
        raise ValueError("every factor has bi=0 (insulated); the product never falls")

    def func(t: float) -> float:
        value = 1.0
        for body, bi, a, xi in checked:
            value *= _point_value(body, bi, a * t, xi, 200)
        return value

    guess = max(math.log(amp / theta_target) / rate, 0.0) if amp > 0.0 else 0.0
    return _first_crossing(func, theta_target, max(guess, 1e-3 / rate))


# --------------------------------------------------------------------------------------------
# lumped bodies
# --------------------------------------------------------------------------------------------
def _check_positive(**values: float) -> None:
    for name, value in values.items():
        if not value > 0.0:
            raise ValueError(f"{name} must be > 0; got {value}")


def _to_kelvin(name: str, t_c: float) -> float:
    t_k = float(t_c) + KELVIN
    if not t_k > 0.0:
        raise ValueError(f"{name} must be above absolute zero; got {t_c} C")
    return t_k


def _check_between(t_i: float, t: float, t_end: float, what: str) -> None:
    """``t`` must lie in ``[t_i, t_end)`` or ``(t_end, t_i]``."""
    if not (t_i <= t < t_end or t_end < t <= t_i):
        raise ValueError(
            f"target {t:.6g} C is not reachable: it must lie from the start {t_i:.6g} C "
            f"towards the {what} {t_end:.6g} C, excluding the latter"
        )


def lumped_convection_time(
    rho: float,
    c: float,
    volume: float,
    area: float,
    htc: float,
    t_inf_c: float,
    t_i_c: float,
    t_c: float,
) -> float:
    """Time for a lumped body under convection to reach ``t_c`` (Incropera eq. 5.6 [memory]).

    ``t = rho V c / (h A) ln((Ti - T_inf)/(T - T_inf))``.

    Args:
        rho: density [kg/m3].
        c: specific heat [J/(kg K)].
        volume: volume [m3].
        area: heated surface [m2].
        htc: film coefficient [W/(m2 K)].
        t_inf_c: fluid temperature [C].
        t_i_c: start temperature [C].
        t_c: target temperature [C], from ``t_i_c`` towards ``t_inf_c`` (heating or cooling).

    Returns:
        Time [s].
    """
    _check_positive(rho=rho, c=c, volume=volume, area=area, htc=htc)
    _check_between(t_i_c, t_c, t_inf_c, "fluid temperature")
    ratio = (t_c - t_inf_c) / (t_i_c - t_inf_c)
    return -rho * volume * c / (htc * area) * math.log(ratio)


def lumped_radiation_time(
    rho: float,
    c: float,
    volume: float,
    area: float,
    emissivity: float,
    t_sur_c: float,
    t_i_c: float,
    t_c: float,
) -> float:
    """Time for a lumped body exchanging radiation only to reach ``t_c``.

    Closed form of Incropera 6th ed. eq. 5.18 [memory] (same form in Bejan & Kraus, *Heat
    Transfer Handbook*, 2003, eq. 3.283 [memory]), for heating (``Ti < T < T_sur``) or
    cooling (``T_sur < T < Ti``); absolute temperatures inside.

    Args:
        rho: density [kg/m3].
        c: specific heat [J/(kg K)].
        volume: volume [m3].
        area: radiating surface [m2].
        emissivity: surface emissivity [-], in ``(0, 1]``.
        t_sur_c: temperature of the large surroundings [C].
        t_i_c: start temperature [C].
        t_c: target temperature [C].

    Returns:
        Time [s].
    """
    _check_positive(rho=rho, c=c, volume=volume, area=area, emissivity=emissivity)
    if emissivity > 1.0:
        raise ValueError(f"emissivity must be <= 1; got {emissivity}")
    t_sur, t_i, t = (
        _to_kelvin("t_sur_c", t_sur_c),
        _to_kelvin("t_i_c", t_i_c),
        _to_kelvin("t_c", t_c),
    )
    _check_between(t_i_c, t_c, t_sur_c, "surroundings temperature")

    def antiderivative(temp: float) -> float:
        return math.log(abs((t_sur + temp) / (t_sur - temp))) + 2.0 * math.atan(temp / t_sur)

    scale = rho * volume * c / (4.0 * emissivity * area * STEFAN_BOLTZMANN * t_sur**3)
    return scale * (antiderivative(t) - antiderivative(t_i))


def _equilibrium_kelvin(htc: float, emissivity: float, t_gas: float, t_wall: float) -> float:
    """Temperature [K] where ``h (Tg - T) + eps sigma (Tw**4 - T**4)`` vanishes."""
    if emissivity == 0.0 or t_gas == t_wall:
        return t_gas
    if htc == 0.0:
        return t_wall

    def net(temp: float) -> float:
        return htc * (t_gas - temp) + emissivity * STEFAN_BOLTZMANN * (t_wall**4 - temp**4)

    lo, hi = min(t_gas, t_wall), max(t_gas, t_wall)
    return optimize.brentq(net, lo, hi, xtol=1e-13, rtol=4.0 * np.finfo(float).eps)


def lumped_mixed_time(
    rho: float,
    c: float,
    volume: float,
    area: float,
    htc: float,
    emissivity: float,
    t_gas_c: float,
    t_wall_c: float,
    t_i_c: float,
    t_c: float,
) -> float:
    """Time for a lumped body under convection and radiation to reach ``t_c``.

    Integrates ``rho V c dT/dt = A [h (Tg - T) + eps sigma (Tw**4 - T**4)]`` (kelvin in the
    radiation term) exactly by quadrature of ``dt/dT``, without linearising the radiation
    (see the module docstring for the substitution used). Heating or cooling.

    Args:
        rho: density [kg/m3].
        c: specific heat [J/(kg K)].
        volume: volume [m3].
        area: exposed surface [m2].
        htc: convection coefficient [W/(m2 K)], ``>= 0``.
        emissivity: surface emissivity [-], in ``[0, 1]``.
        t_gas_c: gas temperature for convection [C].
        t_wall_c: temperature of the radiating surroundings (furnace wall) [C].
        t_i_c: start temperature [C].
        t_c: target temperature [C], from ``t_i_c`` towards the equilibrium temperature.

    Returns:
        Time [s].

    Raises:
        ValueError: bad properties, ``htc = emissivity = 0``, or a target beyond equilibrium.
    """
    _check_positive(rho=rho, c=c, volume=volume, area=area)
    if not htc >= 0.0:
        raise ValueError(f"htc must be >= 0; got {htc}")
    if not 0.0 <= emissivity <= 1.0:
        raise ValueError(f"emissivity must lie in [0, 1]; got {emissivity}")
    if htc == 0.0 and emissivity == 0.0:
        raise ValueError("htc and emissivity are both 0: no heat reaches the body")
    t_gas, t_wall = _to_kelvin("t_gas_c", t_gas_c), _to_kelvin("t_wall_c", t_wall_c)
    t_i, t = _to_kelvin("t_i_c", t_i_c), _to_kelvin("t_c", t_c)
    t_eq = _equilibrium_kelvin(htc, emissivity, t_gas, t_wall)
    _check_between(t_i_c, t_c, t_eq - KELVIN, "equilibrium temperature")
    if t == t_i:
        return 0.0
    # h(Tg - T) + eps sigma (Tw^4 - T^4) = (T_eq - T) q(T); with T = T_eq - (T_eq - Ti) e^-u,
    # dt = rho V c / A * du / q(T(u)).
    sigma_eps = emissivity * STEFAN_BOLTZMANN

    def integrand(u: float) -> float:
        temp = t_eq - (t_eq - t_i) * math.exp(-u)
        return 1.0 / (htc + sigma_eps * (t_eq + temp) * (t_eq**2 + temp**2))

    u_end = math.log((t_eq - t_i) / (t_eq - t))
    value, _ = integrate.quad(integrand, 0.0, u_end, epsabs=0.0, epsrel=1e-13, limit=200)
    return rho * volume * c / area * value


# --------------------------------------------------------------------------------------------
# semi-infinite solid
# --------------------------------------------------------------------------------------------
def semi_infinite_convection(x: ArrayLike, t: ArrayLike, alpha: float, k: float, htc: float):
    """Semi-infinite solid, convection at its surface (Incropera 6th ed. eq. 5.60 [memory]).

    ``(T - Ti)/(T_inf - Ti) = erfc(eta) - exp(-eta**2) erfcx(eta + h sqrt(alpha t)/k)`` with
    ``eta = x/(2 sqrt(alpha t))``: the textbook form rewritten with ``erfcx`` so that nothing
    overflows for large ``h``, ``x`` or ``t``. ``htc = math.inf`` gives ``erfc(eta)``
    (Incropera eq. 5.57 [memory]).

    Args:
        x: depth below the surface [m], ``>= 0``; scalar or array.
        t: time [s], ``> 0``; scalar or array, broadcast with ``x``.
        alpha: thermal diffusivity [m2/s].
        k: conductivity [W/(m K)].
        htc: film coefficient [W/(m2 K)], ``>= 0`` or ``math.inf``.

    Returns:
        ``float`` for scalar ``x`` and ``t``, else an array.
    """
    _check_positive(alpha=alpha, k=k)
    if not htc >= 0.0:
        raise ValueError(f"htc must be >= 0; got {htc}")
    x_a, t_a = np.asarray(x, dtype=float), np.asarray(t, dtype=float)
    if np.any(~(x_a >= 0.0)):
        raise ValueError(f"depth x must be >= 0 [m]; got min(x)={np.nanmin(x_a)}")
    if np.any(~(t_a > 0.0)):
        raise ValueError(f"time t must be > 0 [s]; got min(t)={np.nanmin(t_a)}")
    root = np.sqrt(alpha * t_a)
    eta = x_a / (2.0 * root)
    beta = htc * root / k
    out = special.erfc(eta) - np.exp(-(eta**2)) * special.erfcx(eta + beta)
    return float(out) if out.ndim == 0 else out
