r"""Hand estimates of the time to temperature, and how they compare with the finite elements.

Analysts check a furnace time with one-dimensional methods. This module gives those methods for
simple bodies (``femheat estimate``) and for the actual part of a finite-element run, where the
characteristic lengths are measured on the mesh, and it compares each estimate with the
finite-element time.

Methods (all for a uniform start ``Ti``, a constant furnace and constant properties)
-----------------------------------------------------------------------------------
* **Lumped capacitance**: the whole body at one temperature,
  ``rho V c dT/dt = A [h (T_gas - T) + eps sigma (T_wall^4 - T^4)]``, integrated with the
  radiation in kelvin, not linearised (:func:`femheat.exact.lumped_mixed_time`). It holds when
  the Biot number ``Bi = h_eff (V/A) / k < 0.1`` (common practice; Incropera, DeWitt, Bergman,
  Lavine, *Fundamentals of Heat and Mass Transfer*, 6th ed., sec. 5.1-5.2). Here ``Bi`` is taken
  at its largest over the heat-up, since radiation makes it grow as the part heats.
* **Exact series** for a slab, long cylinder or sphere, and its **product** for a rectangular
  bar (slab x slab), box (slab x slab x slab) and short cylinder (cylinder x slab) (Incropera 6th
  ed. sec. 5.5-5.8; :mod:`femheat.exact`). Time for the centre, the last point, to reach the
  target. This theory is linear: radiation enters through a fixed coefficient (below).
* **One-term** form of the same: ``theta0* = C1 exp(-z1^2 Fo)`` per direction, so the time has a
  closed form ``t = ln(prod C1_i / theta*) / sum(z1_i^2 alpha / L_i^2)``. It holds for
  ``Fo = alpha t / L^2 > 0.2`` in every direction (common practice; Incropera sec. 5.5).
* **Rule of thumb**: about one hour per 25 mm of thickness (common practice, no source), shown
  for comparison only; it has no validity condition.

Radiation as a coefficient (kelvin inside)::

    h_r = eps sigma (Ts^2 + Tw^2)(Ts + Tw),      h_eff = h + h_r,
    T_inf,eff = (h T_gas + h_r T_wall) / h_eff

with ``Ts`` the surface temperature. ``h_r`` is evaluated at the mean of start and target (the
value used by the series and one-term lines) and over the range from start to target (for the
Biot number range). ``eps sigma (Tw^4 - Ts^4) = h_r (Tw - Ts)`` exactly, so ``T_inf,eff`` is the
ambient that makes ``h_eff (T_inf,eff - Ts)`` the true flux at ``Ts``.

In a finite-element run
-----------------------
:func:`assess_run` builds the estimates for the part itself:

* ``V/A``: the volume of the mesh over its exposed area (every face not insulated or symmetry),
  both with the model's weights (per metre of depth for planar sections, the whole body of
  revolution for axisymmetric ones), for the lumped line.
* ``L``: the depth of the last point (where the finite elements say the part gets through last)
  below the nearest exposed face, used as the half-thickness of a slab and the radius of a
  cylinder and of a sphere. The slab is the slowest of the three and the sphere the fastest.
* Properties of a temperature-dependent material at the mean of start and target; the furnace
  at the final value of its schedule; faces with different exposures combined into one
  that gives the same heat flow into a body at uniform temperature (so the lumped line stays
  exact).

Each estimate gets the signed error against the finite-element time and a one-line verdict. An
estimate that is longer than the finite-element time is *conservative*: the part is through by
then. When the problem is linear and the part is a rectangle or box (axisymmetric: a solid
cylinder) with an exact product solution, the exact series time is computed as a self-check of
the finite-element answer (:func:`self_check`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING

import numpy as np

from . import exact
from .furnace import Contact, Exposure
from .part_lengths import PartLengths, box_sides, crosses, exposed_faces, part_lengths
from .units import hours_minutes

if TYPE_CHECKING:  # pragma: no cover
    from .run import RunResult

__all__ = [
    "BODY_KINDS",
    "LUMPED_LIMIT",
    "ONE_TERM_LIMIT",
    "SELF_CHECK_TOLERANCE",
    "HOUR_PER_THICKNESS_M",
    "Body",
    "Conditions",
    "Effective",
    "Estimate",
    "BodyEstimates",
    "SelfCheck",
    "RunEstimates",
    "radiation_coefficient",
    "effective_exposure",
    "lumped_estimate",
    "series_estimates",
    "rule_of_thumb",
    "estimate_body",
    "compare",
    "verdict",
    "run_conditions",
    "self_check",
    "assess_run",
    "for_run",
    "to_dict",
    "summary_section",
]

LUMPED_LIMIT = 0.1
"""Largest Biot number ``h (V/A)/k`` for the lumped body (common practice; Incropera sec. 5.2)."""

ONE_TERM_LIMIT = 0.2
"""Smallest Fourier number for the one-term form (common practice; Incropera sec. 5.5)."""

HOUR_PER_THICKNESS_M = 0.025
"""Rule of thumb: one hour per 25 mm of thickness (common practice, no source)."""

SELF_CHECK_TOLERANCE = 0.005
"""Relative agreement the self-check asks of the finite elements against the exact series: the
tolerance of the project's verification cases (``validation/RESULTS.md``)."""

BODY_KINDS = ("slab", "cylinder", "sphere", "bar", "box", "short cylinder")
"""Bodies of ``femheat estimate``; every face exposed."""

_SIZES = {
    # kind: (number of sizes, what they are)
    "slab": (1, "thickness"),
    "cylinder": (1, "diameter"),
    "sphere": (1, "diameter"),
    "bar": (2, "width and thickness of the cross-section"),
    "box": (3, "three edge lengths"),
    "short cylinder": (2, "diameter and length"),
}


# --------------------------------------------------------------------------------------------
# inputs
# --------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Body:
    """A simple body with every face exposed; sizes are whole dimensions as measured.

    Args:
        kind: one of :data:`BODY_KINDS`.
        sizes: m; slab: thickness; cylinder, sphere: diameter; bar: width and thickness of the
            cross-section; box: three edges; short cylinder: diameter and length.
    """

    kind: str
    sizes: tuple[float, ...]

    def __post_init__(self):
        if self.kind not in _SIZES:
            raise ValueError(f"unknown body {self.kind!r}; pick one of {list(BODY_KINDS)}")
        count, what = _SIZES[self.kind]
        sizes = tuple(float(s) for s in self.sizes)
        if len(sizes) != count:
            raise ValueError(f"a {self.kind} needs {count} size(s) ({what}); got {len(sizes)}")
        if not all(s > 0.0 and math.isfinite(s) for s in sizes):
            raise ValueError(f"sizes must be > 0 m; got {list(sizes)}")
        object.__setattr__(self, "sizes", sizes)

    @property
    def factors(self) -> tuple[tuple[str, float], ...]:
        """One ``(1D body, half-thickness or radius in m)`` per direction of the product."""
        s = self.sizes
        if self.kind in ("slab", "cylinder", "sphere"):
            return ((self.kind, s[0] / 2.0),)
        if self.kind == "short cylinder":
            return (("cylinder", s[0] / 2.0), ("slab", s[1] / 2.0))
        return tuple(("slab", v / 2.0) for v in s)

    @property
    def volume_over_area(self) -> float:
        """V/A of the whole body, m (slab and bar: per unit length and depth, ends ignored)."""
        s = self.sizes
        if self.kind == "slab":
            return s[0] / 2.0
        if self.kind == "cylinder":
            return s[0] / 4.0
        if self.kind == "sphere":
            return s[0] / 6.0
        if self.kind == "bar":
            return s[0] * s[1] / (2.0 * (s[0] + s[1]))
        if self.kind == "box":
            a, b, c = s
            return a * b * c / (2.0 * (a * b + b * c + c * a))
        r, length = s[0] / 2.0, s[1]
        return r * length / (2.0 * (r + length))

    @property
    def thickness(self) -> float:
        """The thickness the rule of thumb uses: the smallest dimension, m."""
        return min(self.sizes)

    def describe(self) -> str:
        mm = " x ".join(f"{1000 * v:g}" for v in self.sizes)
        return {
            "slab": f"slab {mm} mm thick, both faces exposed",
            "cylinder": f"long cylinder {mm} mm diameter",
            "sphere": f"sphere {mm} mm diameter",
            "bar": f"long rectangular bar {mm} mm",
            "box": f"box {mm} mm",
            "short cylinder": f"short cylinder {mm} mm (diameter x length), ends exposed",
        }[self.kind]


@dataclass(frozen=True)
class Conditions:
    """Constant material and furnace for the hand estimates.

    Args:
        density: kg/m3. conductivity: W/(m K). specific_heat: J/(kg K).
        htc: convective coefficient, W/(m2 K), >= 0. emissivity: 0..1.
        gas_c: gas temperature, C. wall_c: wall temperature seen by radiation, C.
        initial_c: uniform start, C. target_c: temperature the last point must reach, C.
        simplified: short names of what was simplified to get constant values (e.g.
            ``"k, c at 450 C"``, ``"furnace ramp ignored"``); the series is then approximate.
        notes: one sentence for each simplification, stated with the results.
    """

    density: float
    conductivity: float
    specific_heat: float
    htc: float
    emissivity: float
    gas_c: float
    wall_c: float
    initial_c: float
    target_c: float
    simplified: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()

    def __post_init__(self):
        for name in ("density", "conductivity", "specific_heat"):
            if not getattr(self, name) > 0.0:
                raise ValueError(f"{name} must be > 0; got {getattr(self, name)}")
        if not self.htc >= 0.0:
            raise ValueError(f"htc must be >= 0; got {self.htc}")
        if not 0.0 <= self.emissivity <= 1.0:
            raise ValueError(f"emissivity must lie in [0, 1]; got {self.emissivity}")
        if self.htc == 0.0 and self.emissivity == 0.0:
            raise ValueError("htc and emissivity are both 0: no heat reaches the part")
        for name in ("gas_c", "wall_c", "initial_c", "target_c"):
            if not getattr(self, name) > -exact.KELVIN:
                raise ValueError(f"{name} must be above absolute zero; got {getattr(self, name)}")
        if self.target_c == self.initial_c:
            raise ValueError("target equals the start temperature; nothing to heat or cool")

    @property
    def diffusivity(self) -> float:
        """k / (rho c), m2/s."""
        return self.conductivity / (self.density * self.specific_heat)

    @property
    def heating(self) -> bool:
        return self.target_c > self.initial_c

    @property
    def mean_c(self) -> float:
        """Mean of start and target, C: where h_r is stated."""
        return 0.5 * (self.initial_c + self.target_c)


def radiation_coefficient(emissivity: float, surface_c: float, wall_c: float) -> float:
    """Radiation coefficient ``h_r = eps sigma (Ts^2 + Tw^2)(Ts + Tw)``, W/(m2 K).

    Args:
        emissivity: surface emissivity, 0..1.
        surface_c: surface temperature, C. wall_c: temperature of the surroundings, C.
    """
    ts, tw = surface_c + exact.KELVIN, wall_c + exact.KELVIN
    return emissivity * exact.STEFAN_BOLTZMANN * (ts**2 + tw**2) * (ts + tw)


@dataclass(frozen=True)
class Effective:
    """Radiation folded into a film coefficient for the linear (series, one-term) theory.

    Attributes:
        surface_c: surface temperature where ``h_r`` is stated (mean of start and target), C.
        h_r: radiation coefficient there, W/(m2 K).
        h_r_range: ``h_r`` with the surface at the start and at the target, W/(m2 K).
        htc: effective coefficient ``h + h_r``, W/(m2 K).
        htc_range: ``h + h_r`` at start and target, W/(m2 K).
        ambient_c: effective ambient ``(h T_gas + h_r T_wall)/(h + h_r)``, C.
        theta: target as ``(T_target - T_inf)/(Ti - T_inf)``; outside (0, 1) when unreachable.
    """

    surface_c: float
    h_r: float
    h_r_range: tuple[float, float]
    htc: float
    htc_range: tuple[float, float]
    ambient_c: float
    theta: float

    @property
    def htc_max(self) -> float:
        return max(self.htc_range + (self.htc,))

    @property
    def reachable(self) -> bool:
        return 0.0 < self.theta < 1.0


def effective_exposure(cond: Conditions) -> Effective:
    """The linearised exposure of :class:`Conditions` (see the module docstring)."""
    h_r = radiation_coefficient(cond.emissivity, cond.mean_c, cond.wall_c)
    ends = tuple(
        radiation_coefficient(cond.emissivity, t, cond.wall_c)
        for t in (cond.initial_c, cond.target_c)
    )
    h_eff = cond.htc + h_r
    ambient = (cond.htc * cond.gas_c + h_r * cond.wall_c) / h_eff
    theta = (cond.target_c - ambient) / (cond.initial_c - ambient)
    return Effective(
        surface_c=cond.mean_c,
        h_r=h_r,
        h_r_range=(min(ends), max(ends)),
        htc=h_eff,
        htc_range=(cond.htc + min(ends), cond.htc + max(ends)),
        ambient_c=ambient,
        theta=theta,
    )


# --------------------------------------------------------------------------------------------
# estimates
# --------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Estimate:
    """One hand estimate of the time to target, and how it compares with the finite elements.

    Attributes:
        key: stable identifier, e.g. ``"lumped"``, ``"slab_series"``, ``"rule_of_thumb"``.
        label: what it is, with its characteristic length, for people.
        method: ``"lumped"``, ``"one-term"``, ``"series"`` or ``"rule of thumb"``.
        time_s: estimated time to target, s; None when the method gives none (``condition``
            says why).
        valid: whether the method's validity condition holds; None for the rule of thumb,
            which has none.
        condition: the validity condition with its value, e.g. ``"Bi = 0.31 >= 0.1"``.
        length_m: characteristic lengths, m (V/A, or the half-thickness/radius per direction).
        biot: Biot numbers with ``h_eff`` at the stated temperature (lumped: the largest over
            the heat-up), one per direction.
        fourier: Fourier numbers at ``time_s``, one per direction.
        fe_time_s: finite-element time to target, s (None: no comparison).
        error_s: ``time_s - fe_time_s``, s.
        relative_error: ``(time_s - fe_time_s) / fe_time_s``.
        verdict: one line: conservative or not, and by how much.
    """

    key: str
    label: str
    method: str
    time_s: float | None
    valid: bool | None
    condition: str
    length_m: tuple[float, ...] = ()
    biot: tuple[float, ...] = ()
    fourier: tuple[float, ...] = ()
    fe_time_s: float | None = None
    error_s: float | None = None
    relative_error: float | None = None
    verdict: str = ""


def _fmt_len(length_m: float) -> str:
    return f"{1000 * length_m:.3g} mm"


def lumped_estimate(cond: Conditions, eff: Effective, volume: float, area: float) -> Estimate:
    """Lumped-capacitance time with radiation integrated (not linearised).

    Args:
        cond: material and furnace. eff: its linearised exposure (for the Biot number).
        volume: m3 (or m3 per m of depth). area: exposed area, m2 (or m2 per m).

    Returns:
        The :class:`Estimate`; valid when ``h_eff,max (V/A) / k < 0.1`` over the heat-up.
    """
    v_over_a = volume / area
    bi_max = eff.htc_max * v_over_a / cond.conductivity
    valid = bi_max < LUMPED_LIMIT
    cmp = "<" if valid else ">="
    condition = f"Bi = h_eff (V/A)/k up to {bi_max:.3g} {cmp} {LUMPED_LIMIT:g}"
    try:
        time = exact.lumped_mixed_time(
            cond.density,
            cond.specific_heat,
            volume,
            area,
            cond.htc,
            cond.emissivity,
            cond.gas_c,
            cond.wall_c,
            cond.initial_c,
            cond.target_c,
        )
    except ValueError:
        time, valid = None, False
        condition = "the target lies beyond the temperature the furnace drives the part to"
    return Estimate(
        key="lumped",
        label=f"lumped, V/A {_fmt_len(v_over_a)}",
        method="lumped",
        time_s=time,
        valid=valid,
        condition=condition,
        length_m=(v_over_a,),
        biot=(bi_max,),
    )


def series_estimates(
    cond: Conditions,
    eff: Effective,
    factors: tuple[tuple[str, float], ...],
    key: str,
    label: str,
) -> tuple[Estimate, Estimate]:
    """One-term and exact-series times for the centre of a 1D body or a product of them.

    Args:
        cond: material and furnace. eff: the linearised exposure (``h_eff``, ambient).
        factors: ``(body, L)`` per direction, body ``"slab"``, ``"cylinder"`` or ``"sphere"``,
            L the half-thickness or radius in m.
        key: prefix of the estimates' keys. label: what the body is.

    The series is flagged valid only for a linear problem: no radiation and nothing in
    ``cond.simplified``; the one-term form is flagged valid when, in addition, ``Fo > 0.2``
    in every direction (its error against the series).

    Returns:
        (one-term, series) estimates.
    """
    k, alpha = cond.conductivity, cond.diffusivity
    lengths = tuple(length for _, length in factors)
    bis = tuple(eff.htc * length / k for length in lengths)
    rates = tuple(alpha / length**2 for length in lengths)
    approximations = _approximations(cond)
    linear = not approximations
    linear_text = (
        "exact: constant h, k, c and furnace"
        if linear
        else "linear theory, approximate here: " + ", ".join(approximations)
    )
    if not eff.reachable:
        why = (
            f"the target is not reachable with h_eff at {eff.surface_c:.0f} C "
            f"(effective ambient {eff.ambient_c:.1f} C)"
        )
        common = dict(valid=False, condition=why, length_m=lengths, biot=bis)
        return (
            Estimate(f"{key}_one_term", f"{label} one-term", "one-term", None, **common),
            Estimate(f"{key}_series", f"{label} series", "series", None, **common),
        )
    # one-term: prod C1_i exp(-z1_i^2 a_i t) = theta  =>  t = ln(prod C1_i / theta) / sum z1^2 a
    amp, rate = 1.0, 0.0
    for (body, _), bi, a in zip(factors, bis, rates, strict=True):
        z1 = exact.roots(body, bi, 1)
        amp *= float(exact.coefficients(body, z1)[0])
        rate += float(z1[0] ** 2) * a
    t1 = math.log(amp / eff.theta) / rate
    if t1 > 0.0:
        fo1 = tuple(a * t1 for a in rates)
        fo_ok = min(fo1) > ONE_TERM_LIMIT
        fo_text = ", ".join(f"{f:.3g}" for f in fo1)
        cond1 = (
            f"Fo = {fo_text} > {ONE_TERM_LIMIT:g} (met)"
            if fo_ok
            else f"Fo = {fo_text} <= {ONE_TERM_LIMIT:g} (needs > {ONE_TERM_LIMIT:g})"
        )
        if not linear:
            cond1 += "; " + linear_text
        one = Estimate(
            f"{key}_one_term",
            f"{label} one-term",
            "one-term",
            t1,
            fo_ok and linear,
            cond1,
            lengths,
            bis,
            fo1,
        )
    else:
        one = Estimate(
            f"{key}_one_term",
            f"{label} one-term",
            "one-term",
            None,
            False,
            f"the first term starts below the target (Fo < {ONE_TERM_LIMIT:g}); use the series",
            lengths,
            bis,
        )
    if len(factors) == 1:
        body, length = factors[0]
        fo = exact.fourier_at(body, bis[0], eff.theta)
        ts = fo * length**2 / alpha
    else:
        ts = exact.product_time(
            [(body, bi, a, 0.0) for (body, _), bi, a in zip(factors, bis, rates, strict=True)],
            eff.theta,
        )
    series = Estimate(
        f"{key}_series",
        f"{label} series",
        "series",
        ts,
        linear,
        linear_text,
        lengths,
        bis,
        tuple(a * ts for a in rates),
    )
    return one, series


def rule_of_thumb(thickness_m: float) -> Estimate:
    """About one hour per 25 mm of thickness (common practice, no source).

    Args:
        thickness_m: the section's thickness, m.
    """
    return Estimate(
        key="rule_of_thumb",
        label=f"rule of thumb, 1 h per 25 mm of {_fmt_len(thickness_m)}",
        method="rule of thumb",
        time_s=3600.0 * thickness_m / HOUR_PER_THICKNESS_M,
        valid=None,
        condition="for comparison only (common practice, no source)",
        length_m=(thickness_m,),
    )


def _approximations(cond: Conditions) -> tuple[str, ...]:
    """What makes the linear theory approximate for these conditions (short names)."""
    radiation = ("radiation as h_r",) if cond.emissivity > 0.0 else ()
    return radiation + tuple(cond.simplified)


@dataclass(frozen=True)
class BodyEstimates:
    """The estimates for one simple body (``femheat estimate``)."""

    body: Body
    conditions: Conditions
    effective: Effective
    items: tuple[Estimate, ...]


def estimate_body(body: Body, cond: Conditions) -> BodyEstimates:
    """Lumped, one-term, exact-series and rule-of-thumb times for a simple body.

    Args:
        body: the body; every face exposed. cond: material and furnace (constant).

    Returns:
        :class:`BodyEstimates`; the series and one-term times are for the centre, the last
        point of the body.
    """
    eff = effective_exposure(cond)
    lumped = lumped_estimate(cond, eff, body.volume_over_area, 1.0)
    if len(body.factors) == 1:
        b, length = body.factors[0]
        label = f"{b} {'L' if b == 'slab' else 'R'} {_fmt_len(length)}"
    else:
        label = f"{body.kind} product"
    one, series = series_estimates(cond, eff, body.factors, "body", label)
    thumb = rule_of_thumb(body.thickness)
    return BodyEstimates(body, cond, eff, (lumped, one, series, thumb))


def verdict(estimate: Estimate) -> str:
    """One line: is the estimate conservative against the finite elements, and by how much.

    Longer than the finite-element time is conservative (the part is through by then).
    """
    if estimate.time_s is None:
        return f"no estimate: {estimate.condition}"
    if estimate.relative_error is None:
        return "no finite-element time to compare with"
    rel = estimate.relative_error
    if abs(rel) < 0.005:
        text = f"agrees within 0.5 % ({100 * rel:+.2f} %)"
    elif rel > 0.0:
        text = f"conservative: {100 * rel:.1f} % longer"
    else:
        text = f"NOT conservative: {100 * -rel:.1f} % short, the part is not through then"
    if estimate.valid is False:
        text += "; outside its validity condition"
    return text


def compare(estimates, fe_time_s: float | None) -> tuple[Estimate, ...]:
    """The estimates with their signed error against the finite-element time and a verdict.

    Args:
        estimates: iterable of :class:`Estimate`.
        fe_time_s: finite-element time to target, s; None leaves them without comparison.
    """
    out = []
    for e in estimates:
        if fe_time_s is not None and fe_time_s > 0.0 and e.time_s is not None:
            e = replace(
                e,
                fe_time_s=fe_time_s,
                error_s=e.time_s - fe_time_s,
                relative_error=(e.time_s - fe_time_s) / fe_time_s,
            )
        out.append(replace(e, verdict=verdict(e)))
    return tuple(out)


@dataclass(frozen=True)
class SelfCheck:
    """Exact series against the finite elements for a linear problem with an exact solution.

    Attributes:
        applies: whether the case is one with an exact solution; ``reason`` says why not.
        description: the exact body, e.g. ``"slab L = 20 mm x slab L = 30 mm"``.
        exact_time_s: exact time for the centre, the last point, to reach the target, s.
        fe_time_s: finite-element time, s. relative_difference: (FE - exact)/exact.
        tolerance: the agreement asked for. agrees: within it (None: no FE time).
    """

    applies: bool
    reason: str = ""
    description: str = ""
    exact_time_s: float | None = None
    fe_time_s: float | None = None
    relative_difference: float | None = None
    tolerance: float = SELF_CHECK_TOLERANCE
    agrees: bool | None = None


def _constant(schedule) -> bool:
    return len(set(schedule.values)) == 1


def _as_exposure(cond) -> Exposure | None:
    """A furnace or convection face as it is; a hearth contact as convection with the contact
    conductance to the hearth temperature; None for any other condition."""
    if isinstance(cond, Exposure):
        return cond
    if isinstance(cond, Contact):
        return Exposure(cond.conductance, cond.temperature, 0.0, cond.temperature)
    return None


def _exact_factors(problem) -> tuple[list[tuple[str, float, float]], str]:
    """``(body, L, htc)`` per direction of a rectangle or box mesh, or ``([], reason)``."""
    material = problem.model.material
    if not (material.conductivity.is_constant and material.specific_heat.is_constant):
        return [], "the material properties depend on temperature"
    if problem.target is None:
        return [], "the case has no target"
    active = [_as_exposure(g.condition) for g in exposed_faces(problem.model)]
    if not active:
        return [], "no face is exposed"
    for c in active:
        if c is None:
            return [], "a face has a fixed temperature or a heat flux"
        if c.emissivity > 0.0:
            return [], "radiation makes the problem nonlinear"
        if not _constant(c.gas):
            return [], "the furnace temperature changes with time"
    if len({c.gas.values[0] for c in active}) > 1:
        return [], "the exposed faces see different temperatures"
    box = box_sides(problem.model)
    if box is None:
        return [], "the part is not a rectangle or box (no exact product solution here)"
    axisym = problem.mesh.axisymmetric
    if axisym and box.lower[0] > 0.0:
        return [], "a hollow body of revolution (no exact product solution here)"
    factors = []
    for axis, size in enumerate(box.extents):
        htc = []  # per side: the film coefficient, None when no heat crosses
        for side in (0, 1):
            kinds = {
                _as_exposure(g.condition) if crosses(g.condition) else None
                for g in box.sides[(axis, side)]
            }
            if len(kinds) > 1:
                return [], "one side of the part carries different conditions"
            kind = kinds.pop()
            htc.append(None if kind is None else kind.htc)
        a, b = htc
        if axisym and axis == 0:  # side 0 is the axis
            if b is not None:
                factors.append(("cylinder", size, b))
            continue
        if a is not None and b is not None:
            if a != b:
                return [], "opposite faces have different film coefficients"
            factors.append(("slab", size / 2.0, a))
        elif a is not None or b is not None:
            factors.append(("slab", size, a if a is not None else b))
    return factors, ""


def self_check(result: RunResult) -> SelfCheck:
    """Exact series time of a linear problem on a rectangle or box against the finite elements.

    Applies when the mesh fills an axis-aligned rectangle (planar: a slab or a long bar;
    axisymmetric, from the axis: a long or short solid cylinder) or box, whatever shape built
    it, with constant properties, a constant furnace, no radiation, and every exposed face a
    furnace or convection face with the same ambient; opposite sides must have the same film
    coefficient, or one of them must be insulated (a symmetry plane). The whole part is through
    when its centre is (mid-plane, insulated side or axis of each direction), so the exact time
    is that of the centre (:func:`femheat.exact.product_time`).
    """
    problem = result.problem
    factors, reason = _exact_factors(problem)
    if not factors:
        return SelfCheck(False, reason)
    m = problem.model.material
    k = float(m.conductivity(problem.initial_c))
    alpha = float(m.diffusivity(problem.initial_c))
    gas = _as_exposure(exposed_faces(problem.model)[0].condition).gas.values[0]
    theta = (problem.target.temperature - gas) / (problem.initial_c - gas)
    exact_time = exact.product_time(
        [(body, h * length / k, alpha / length**2, 0.0) for body, length, h in factors], theta
    )
    description = " x ".join(
        f"{body} {'R' if body == 'cylinder' else 'L'} = {_fmt_len(length)} "
        f"(Bi = {h * length / k:.3g})"
        for body, length, h in factors
    )
    tw = result.target
    fe = tw.time if tw is not None and tw.reached else None
    diff = (fe - exact_time) / exact_time if fe is not None and exact_time > 0.0 else None
    return SelfCheck(
        applies=True,
        description=description,
        exact_time_s=exact_time,
        fe_time_s=fe,
        relative_difference=diff,
        agrees=None if diff is None else abs(diff) <= SELF_CHECK_TOLERANCE,
    )


def _mean(weights, values) -> float:
    """Weighted mean of one value per face (the value itself when all are equal)."""
    if len(set(values)) == 1:
        return float(values[0])
    weights = np.asarray(weights, dtype=float)
    return float(np.dot(weights, values) / weights.sum())


def _one_exposure(areas, exposures) -> tuple[float, float, float, float]:
    """``(h, eps, T_gas, T_wall)`` of one exposure equivalent to several faces, C.

    ``h`` and ``eps`` are area-weighted; the gas temperature is weighted by ``A h`` and the
    wall's fourth power (kelvin) by ``A eps``. Then ``A h (T_gas - T) + A eps sigma (T_wall^4
    - T^4)`` equals the sum over the faces at every uniform ``T``: the lumped body is exact.
    Schedules are taken at their final values.

    Args:
        areas: face areas, m2. exposures: their `Exposure` records.
    """
    h = [c.htc for c in exposures]
    eps = [c.emissivity for c in exposures]
    gas = [c.gas.final for c in exposures]
    wall = [c.wall.final for c in exposures]
    h_mean, eps_mean = _mean(areas, h), _mean(areas, eps)
    ah = [a * v for a, v in zip(areas, h, strict=True)]
    ae = [a * v for a, v in zip(areas, eps, strict=True)]
    gas_mean = _mean(ah, gas) if h_mean > 0.0 else _mean(areas, gas)
    if eps_mean > 0.0:
        fourth = _mean(ae, [(t + exact.KELVIN) ** 4 for t in wall])
        wall_mean = wall[0] if len(set(wall)) == 1 else fourth**0.25 - exact.KELVIN
    else:
        wall_mean = gas_mean
    return h_mean, eps_mean, gas_mean, wall_mean


def run_conditions(problem) -> tuple[Conditions | None, str]:
    """Constant values for the hand methods from a run's problem, or ``(None, reason)``.

    Properties at the mean of start and target; the exposed faces as one exposure
    (:func:`_one_exposure`), their schedules at their final values.
    """
    if problem.target is None:
        return None, "the case has no target temperature"
    groups = exposed_faces(problem.model)
    if not groups:
        return None, "no face is exposed"
    others = [g.name for g in groups if _as_exposure(g.condition) is None]
    if others:
        return None, (
            "hand estimates need convection, radiation or contact on every face heat crosses; "
            f"{', '.join(others)}: fixed temperature or heat flux"
        )
    simplified, notes = [], []
    start, target = problem.initial_c, problem.target.temperature
    mean = 0.5 * (start + target)
    m = problem.model.material
    if not (m.conductivity.is_constant and m.specific_heat.is_constant):
        simplified.append(f"k, c at {mean:.4g} C")
        notes.append(
            f"temperature-dependent material: k and c taken at {mean:.4g} C, the mean of start "
            "and target"
        )
    exposures = [_as_exposure(g.condition) for g in groups]
    htc, eps, gas, wall = _one_exposure([g.area for g in groups], exposures)
    if not all(_constant(c.gas) and _constant(c.wall) for c in exposures):
        simplified.append("furnace ramp ignored")
        notes.append(
            f"the furnace schedule is taken at its final value ({gas:.4g} C) from the start; "
            "the hand methods ignore the ramp"
        )
    if len({(c.htc, c.emissivity, c.gas.final, c.wall.final) for c in exposures}) > 1:
        simplified.append("faces combined")
        notes.append(
            "the exposed faces differ: combined into one exposure (h and emissivity "
            "area-weighted, gas temperature weighted by A h, wall by A eps on T^4)"
        )
    try:
        cond = Conditions(
            density=float(m.density),
            conductivity=float(m.conductivity(mean)),
            specific_heat=float(m.specific_heat(mean)),
            htc=htc,
            emissivity=eps,
            gas_c=gas,
            wall_c=wall,
            initial_c=start,
            target_c=target,
            simplified=tuple(simplified),
            notes=tuple(notes),
        )
    except ValueError as exc:
        return None, str(exc)
    return cond, ""


@dataclass(frozen=True)
class RunEstimates:
    """Hand estimates for the part of a finite-element run.

    Attributes:
        available: False when no estimate can be made (``reason`` says why).
        reason: why not.
        conditions: the constant values used. effective: radiation as a coefficient.
        lengths: V/A and the depth of the last point, measured on the mesh.
        fe_time_s: finite-element time to target, s (None if not reached).
        items: the estimates, compared with ``fe_time_s``.
        self_check: exact series against the finite elements, where it applies.
        notes: how the inputs were reduced to constant values, and what the lengths are.
    """

    available: bool
    reason: str = ""
    conditions: Conditions | None = None
    effective: Effective | None = None
    lengths: PartLengths | None = None
    fe_time_s: float | None = None
    items: tuple[Estimate, ...] = ()
    self_check: SelfCheck | None = None
    notes: tuple[str, ...] = field(default=())


def assess_run(result: RunResult) -> RunEstimates:
    """Hand estimates for the part of a finite-element run, compared with its time to target.

    The characteristic lengths come from the mesh (:mod:`femheat.part_lengths`): V/A over the
    exposed faces for the lumped body, and the depth of the last point below the nearest
    exposed face as the half-thickness (slab) or radius (cylinder, sphere); the rule of thumb
    takes twice that depth as the thickness. If the target was not reached, the point that
    lagged at the end is measured and nothing is compared.
    """
    check = self_check(result)
    problem = result.problem
    cond, reason = run_conditions(problem)
    if cond is None:
        return RunEstimates(False, reason, self_check=check)
    tw = result.target
    notes = list(cond.notes)
    if tw.reached:
        point, fe_time = tw.last_point, tw.time
    else:
        point, fe_time = problem.mesh.points[tw.lagging(result.final)], None
        notes.append("the target was not reached: depth measured from the lagging point")
    lengths = part_lengths(problem.model, point)
    eff = effective_exposure(cond)
    if cond.emissivity > 0.0:
        notes.insert(
            0,
            f"radiation: h_r = eps sigma (Ts^2 + Tw^2)(Ts + Tw) = {eff.h_r:.4g} W/(m2 K) at "
            f"Ts = {eff.surface_c:.4g} C ({eff.h_r_range[0]:.4g} to {eff.h_r_range[1]:.4g} "
            f"from start to target); series and one-term use h + h_r = {eff.htc:.4g} W/(m2 K)",
        )
    items = [lumped_estimate(cond, eff, lengths.volume_m3, lengths.exposed_area_m2)]
    depth = lengths.depth_m
    if depth > 0.0:
        for body in exact.BODIES:
            label = f"{body} {'L' if body == 'slab' else 'R'} {_fmt_len(depth)}"
            one, series = series_estimates(cond, eff, ((body, depth),), body, label)
            items += [series, one]
        items.append(rule_of_thumb(2.0 * depth))
    else:
        notes.append("the last point lies on an exposed face: no depth for the 1D bodies")
    return RunEstimates(
        available=True,
        conditions=cond,
        effective=eff,
        lengths=lengths,
        fe_time_s=fe_time,
        items=compare(items, fe_time),
        self_check=check,
        notes=tuple(notes),
    )


def for_run(result: RunResult) -> list[Estimate]:
    """The hand estimates of a run, each with ``label``, ``time_s``, ``valid``,
    ``condition``, ``error_s``, ``relative_error`` and ``verdict``; empty when none apply.

    See :func:`assess_run` for the basis (lengths, properties) and the self-check.
    """
    return list(assess_run(result).items)


# --------------------------------------------------------------------------------------------
# summary.json
# --------------------------------------------------------------------------------------------
def _num(x):
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _h_min(seconds: float | None) -> str | None:
    return hours_minutes(seconds)


def _estimate_dict(e: Estimate) -> dict:
    return {
        "key": e.key,
        "label": e.label,
        "method": e.method,
        "time_s": _num(e.time_s),
        "time_h_min": _h_min(e.time_s),
        "valid": e.valid,
        "condition": e.condition,
        "length_m": [_num(v) for v in e.length_m],
        "biot": [_num(v) for v in e.biot],
        "fourier": [_num(v) for v in e.fourier],
        "error_s": _num(e.error_s),
        "relative_error": _num(e.relative_error),
        "verdict": e.verdict,
    }


def _self_check_dict(check: SelfCheck | None) -> dict | None:
    if check is None:
        return None
    if not check.applies:
        return {"applies": False, "reason": check.reason}
    return {
        "applies": True,
        "exact_solution": check.description,
        "exact_time_s": _num(check.exact_time_s),
        "fe_time_s": _num(check.fe_time_s),
        "relative_difference": _num(check.relative_difference),
        "tolerance": check.tolerance,
        "agrees": check.agrees,
    }


def to_dict(est: RunEstimates) -> dict:
    """The ``estimates`` section of summary.json (SI units, temperatures in C).

    Keys: ``available`` (and ``reason`` when false); ``basis`` (the constant values, radiation
    coefficient, V/A and depth of the last point, ``notes``); ``fe_time_s``; ``items`` (one
    per estimate: ``key``, ``label``, ``method``, ``time_s``, ``time_h_min``, ``valid``,
    ``condition``, ``length_m``, ``biot``, ``fourier``, ``error_s``, ``relative_error``,
    ``verdict``); ``self_check``.
    """
    out: dict = {"available": est.available}
    if not est.available:
        out["reason"] = est.reason
        out["self_check"] = _self_check_dict(est.self_check)
        return out
    c, e, lg = est.conditions, est.effective, est.lengths
    out["basis"] = {
        "property_temperature_C": c.mean_c,
        "density": c.density,
        "conductivity": c.conductivity,
        "specific_heat": c.specific_heat,
        "diffusivity_m2_s": c.diffusivity,
        "htc": c.htc,
        "emissivity": c.emissivity,
        "gas_C": c.gas_c,
        "wall_C": c.wall_c,
        "initial_C": c.initial_c,
        "target_C": c.target_c,
        "radiation_htc_at_C": e.surface_c,
        "radiation_htc": e.h_r,
        "radiation_htc_range": list(e.h_r_range),
        "effective_htc": e.htc,
        "effective_ambient_C": e.ambient_c,
        "volume_m3": lg.volume_m3,
        "exposed_area_m2": lg.exposed_area_m2,
        "volume_over_area_m": _num(lg.volume_over_area_m),
        "last_point": list(lg.point),
        "last_point_depth_m": _num(lg.depth_m),
        "nearest_exposed_face": lg.nearest_face,
        "notes": list(est.notes),
    }
    out["fe_time_s"] = _num(est.fe_time_s)
    out["items"] = [_estimate_dict(i) for i in est.items]
    out["self_check"] = _self_check_dict(est.self_check)
    return out


def summary_section(result: RunResult) -> dict:
    """``to_dict(assess_run(result))``: the ``estimates`` section of summary.json."""
    return to_dict(assess_run(result))
