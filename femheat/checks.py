"""Self-checks of a run, reported in every summary: signs that the answer itself is doubtful.

* ``energy_balance``: heat in through the faces against the enthalpy stored, relative to the
  energy moved (`femheat.watch.EnergyWatch.relative_error`); must stay within 0.1 %.
* ``newton_correction_K``: the largest last Newton correction of any accepted stage, K; must
  stay below the local error allowed per step (``solver.tolerance`` times the temperature span),
  or the unconverged part of the nonlinear solve would be as large as the time error allowed.
* ``rejected_steps``: the share of attempted steps the error control threw away; above 30 %
  (and more than 5 steps) the step control is struggling.
* ``mesh_quality``: the smallest element quality (1 for an equilateral triangle or regular
  tetrahedron, `femheat.mesh.PartMesh.quality`); below 0.1 an element is close to flat.

The thresholds are judgement, not published limits (common practice, no source). Each poor
check gives a warning that says what to change.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = [
    "Check",
    "ENERGY_LIMIT",
    "QUALITY_LIMIT",
    "REJECTED_LIMIT",
    "self_checks",
    "checks_section",
]

ENERGY_LIMIT = 1e-3  # relative energy balance error
REJECTED_LIMIT = 0.3  # share of attempted steps rejected
_REJECTED_COUNT = 5  # fewer rejected steps than this are never poor
QUALITY_LIMIT = 0.1  # smallest element quality


@dataclass(frozen=True)
class Check:
    """One self-check.

    Attributes:
        name: key in the summary's ``checks`` section.
        value: the measured value (in `unit`).
        threshold: the limit it is held to.
        limit: "max" (|value| must not exceed the threshold) or "min" (value must reach it).
        unit: unit of value and threshold ("" for a ratio).
        ok: whether the check passed.
        meaning: one line on what is measured.
        warning: one line for the warnings when the check is poor (what to change).
    """

    name: str
    value: float
    threshold: float
    limit: str
    unit: str
    ok: bool
    meaning: str
    warning: str

    def to_dict(self) -> dict:
        """The entry in summary.json."""
        return {
            "value": float(self.value),
            "threshold": float(self.threshold),
            "limit": self.limit,
            "unit": self.unit,
            "verdict": "ok" if self.ok else "poor",
            "meaning": self.meaning,
        }


def _energy(relative_error: float) -> Check:
    ok = abs(relative_error) <= ENERGY_LIMIT
    return Check(
        "energy_balance",
        relative_error,
        ENERGY_LIMIT,
        "max",
        "",
        ok,
        "(stored - heat in through the faces) / energy moved",
        f"energy balance off by {100 * relative_error:.3f} %; tighten solver.tolerance",
    )


def _newton(correction_k: float, allowed_k: float) -> Check:
    return Check(
        "newton_correction_K",
        correction_k,
        allowed_k,
        "max",
        "K",
        correction_k <= allowed_k,
        "largest last Newton correction of an accepted stage",
        f"Newton stopped with corrections up to {correction_k:.3g} K, above the "
        f"{allowed_k:.3g} K allowed per step; tighten solver.tolerance or set solver.max_step",
    )


def _rejected(rejected: int, steps: int) -> Check:
    tried = rejected + steps
    share = rejected / tried if tried else 0.0
    ok = share <= REJECTED_LIMIT or rejected < _REJECTED_COUNT
    return Check(
        "rejected_steps",
        share,
        REJECTED_LIMIT,
        "max",
        "",
        ok,
        f"share of attempted steps rejected ({rejected} of {tried})",
        f"{rejected} of {tried} steps were rejected: the step control is struggling; look "
        "for abrupt changes in the surroundings or set solver.max_step",
    )


def _quality(smallest: float) -> Check:
    return Check(
        "mesh_quality",
        smallest,
        QUALITY_LIMIT,
        "min",
        "",
        smallest >= QUALITY_LIMIT,
        "smallest element quality (1 for an equilateral element)",
        f"the mesh has elements of quality {smallest:.3g} (nearly flat); set a smaller "
        "mesh.size or check the geometry for slivers",
    )


def self_checks(problem, energy, stats) -> tuple[Check, ...]:
    """The self-checks of a run.

    Args:
        problem: the `femheat.problem.Problem`.
        energy: its `femheat.watch.EnergyWatch` after the run.
        stats: the `femheat.stepping.SolverStats` of the march.
    """
    settings = problem.settings
    allowed = settings.tolerance * settings.span
    return (
        _energy(energy.relative_error),
        _newton(float(stats.largest_final_newton_correction_K), allowed),
        _rejected(int(stats.rejected), int(stats.steps)),
        _quality(float(problem.mesh.quality().min())),
    )


def checks_section(checks) -> dict:
    """The ``checks`` section of summary.json: name -> value, threshold, verdict."""
    return {c.name: c.to_dict() for c in checks}
