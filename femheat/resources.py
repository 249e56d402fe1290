"""Resource guards: refuse a mesh too large for the memory, warn before a very long run.

Both estimates are rough (within a factor of about 2), measured with
``benchmarks/memory_per_node.py`` on a 2-core development machine with this version (a planar
rectangle and a solid box, temperature-dependent steel, several element sizes, each in a fresh
process):

* Memory. The peak resident memory (Linux VmHWM) rose by 2.2 to 3.5 kB per added node in 2D
  (6 k to 107 k nodes) and by 5.1 to 8.9 kB per node in 3D (2 k to 55 k nodes; the 3D direct
  solver, used up to 8000 unknowns, is the costly end), over about 115 MB for the interpreter
  and the libraries; with the PARDISO factorisation the benchmark solids took 6.5 kB (194 k
  nodes) and 8.5 kB (873 k nodes) per node. Taken here: 150 MB + 4 kB (2D) or 9 kB (3D) per
  node. Available memory
  comes from psutil when it is installed, else from ``MemAvailable`` in /proc/meminfo; where
  neither tells, nothing is refused.
* Time. Accepted steps at the default tolerance (2e-5) numbered 30 to 170 over the
  verification cases and the demo; steps grow about as tolerance^(-1/3) (a second-order
  method: local error ~ h^3), by one per schedule corner, and to at least the run time over
  ``solver.max_step``. With the PARDISO path (``python -m femheat.bench --scaling``) an
  accepted step cost 1.2 to 2.2 us per node in 2D (7 k to 103 k nodes) and 4.1 to 6.5 us per
  node in 3D (16 k to 194 k nodes; 12.8 us at 873 k); taken here: 2 us x (nodes / 20000)^0.15
  (2D) and 4.5 us x (nodes / 100000)^0.4 (3D) per node, the powers only above those counts
  (the solves grow faster than the node count).
"""

from __future__ import annotations

import logging
import math
from dataclasses import dataclass
from pathlib import Path

from .errors import CaseError

__all__ = [
    "BASE_BYTES",
    "BYTES_PER_NODE",
    "LONG_RUN_S",
    "available_memory",
    "memory_needed",
    "check_memory",
    "RunEstimate",
    "estimate_run",
]

log = logging.getLogger(__name__)

BASE_BYTES = 150e6
BYTES_PER_NODE = {2: 4e3, 3: 9e3}
SECONDS_PER_NODE_STEP = {2: 2e-6, 3: 4.5e-6}
# (nodes above which a step costs more than in proportion, power of the excess)
_STEP_GROWTH = {2: (2e4, 0.15), 3: (1e5, 0.4)}
STEPS_AT_DEFAULT = 150  # accepted steps at the default tolerance (upper part of 30..170)
DEFAULT_TOLERANCE = 2e-5
LONG_RUN_S = 3600.0  # warn above this estimated run time


def available_memory() -> int | None:
    """Memory available to a new process now, bytes (None when the system does not say)."""
    try:
        import psutil
    except ImportError:
        psutil = None
    if psutil is not None:
        return int(psutil.virtual_memory().available)
    try:
        for line in Path("/proc/meminfo").read_text().splitlines():
            if line.startswith("MemAvailable:"):
                return int(line.split()[1]) * 1024
    except (OSError, ValueError, IndexError):
        pass
    return None


def memory_needed(nodes: int, dim: int) -> float:
    """Estimated peak memory of a run on a mesh of `nodes` nodes in `dim` dimensions, bytes."""
    return BASE_BYTES + BYTES_PER_NODE[dim] * nodes


def _gb(n: float) -> str:
    return f"{n / 1e9:.2g} GB" if n >= 1e9 else f"{n / 1e6:.0f} MB"


def check_memory(nodes: int, dim: int, size: float, given: bool, available=None) -> None:
    """Refuse a mesh whose run would need more memory than is available.

    Args:
        nodes, dim: the mesh. size: its element size, m. given: whether the case sets
            mesh.size (the error then names it). available: bytes (default: asked of the
            system).

    Raises:
        CaseError: at ``mesh.size`` (or ``mesh``), with the estimate and a size that fits.
    """
    available = available_memory() if available is None else available
    if available is None:
        return
    need = memory_needed(nodes, dim)
    if need <= available:
        return
    fits = max((0.8 * available - BASE_BYTES) / BYTES_PER_NODE[dim], 1.0)
    larger = size * (nodes / fits) ** (1.0 / dim) if size > 0 else float("nan")
    fix = (
        f"set mesh.size = {larger:.2g} (m) or larger"
        if math.isfinite(larger)
        else "use a coarser mesh"
    )
    raise CaseError(
        "mesh.size" if given else "mesh",
        f"the mesh has {nodes} nodes; the run would need about {_gb(need)} of memory, more "
        f"than the {_gb(available)} available",
        f"{fix}; or free memory and run again",
    )


@dataclass(frozen=True)
class RunEstimate:
    """A rough estimate of a run's cost.

    Attributes:
        memory_bytes: peak memory. steps: accepted time steps. step_s: wall time per step, s.
        wall_s: the whole march, s. limited_by: what sets the number of steps
        ("tolerance", "max_step" or "fixed_step").
    """

    memory_bytes: float
    steps: float
    step_s: float
    wall_s: float
    limited_by: str

    def line(self) -> str:
        """One line for people: memory and time."""
        return (
            f"estimated: about {_gb(self.memory_bytes)} of memory and {_duration(self.wall_s)} "
            f"(about {self.steps:.0f} steps of {self.step_s:.2g} s; rough)"
        )

    def warning(self, dim: int) -> str | None:
        """A warning when the run looks very long, saying what to coarsen; else None."""
        if self.wall_s <= LONG_RUN_S:
            return None
        cut = "a quarter" if dim == 2 else "an eighth"
        advice = [f"a mesh.size twice as large (about {cut} of the nodes)"]
        if self.limited_by == "tolerance":
            advice.append("a solver.tolerance 8 times larger (about half the steps)")
        elif self.limited_by == "max_step":
            advice.append("a larger solver.max_step (it sets the number of steps)")
        else:
            advice.append("a larger solver.fixed_step")
        return (
            f"this run may take about {_duration(self.wall_s)} (about {self.steps:.0f} steps "
            f"of {self.step_s:.2g} s; a rough estimate); to shorten it try " + " or ".join(advice)
        )


def _duration(seconds: float) -> str:
    if seconds < 90:
        return f"{seconds:.0f} s"
    if seconds < 5400:
        return f"{seconds / 60:.0f} min"
    return f"{seconds / 3600:.1f} h"


def estimate_run(nodes: int, dim: int, settings) -> RunEstimate:
    """Estimate memory and wall time of a run from its node count and step settings.

    Args:
        nodes, dim: the mesh. settings: the `femheat.stepping.StepSettings`.
    """
    corners = len(settings.breakpoints)
    duration = settings.end_time or (max(settings.breakpoints) if corners else None)
    if settings.fixed_step:
        steps = (duration or 0.0) / settings.fixed_step
        limited = "fixed_step"
    else:
        steps = STEPS_AT_DEFAULT * (DEFAULT_TOLERANCE / settings.tolerance) ** (1.0 / 3.0)
        steps += corners
        limited = "tolerance"
        if settings.max_step and duration and duration / settings.max_step > steps:
            steps, limited = duration / settings.max_step, "max_step"
    steps = max(steps, 1.0)
    above, power = _STEP_GROWTH[dim]
    step_s = SECONDS_PER_NODE_STEP[dim] * nodes * max(1.0, nodes / above) ** power
    return RunEstimate(memory_needed(nodes, dim), steps, step_s, steps * step_s, limited)
