"""From a validated case to a ready-to-march problem: mesh, model, initial field, targets.

All checks that need the geometry (face names, probe positions, reachability of the target)
live here and raise `CaseError` naming the place in the case file.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, field

import numpy as np

from .errors import CaseError
from .furnace import Exposure, FaceCondition, FixedTemperature, HeatFlux, Insulated, Schedule
from .geometry import get_shape
from .materials import Material, Table
from .mesh import PartMesh, mesh_part
from .model import Model, build_model
from .stepping import StepSettings

__all__ = ["Target", "Problem", "build_problem", "material_from_case", "schedule_from_case"]

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class Target:
    """Through-heating (or cooling) criterion: every point at or beyond `temperature` (C)."""

    temperature: float
    heating: bool
    hold: float = 0.0  # s after the part is through


@dataclass(frozen=True)
class Problem:
    """Everything a run needs, built and checked."""

    title: str
    part_model: str
    shape: str
    params: dict
    mesh: PartMesh
    model: Model
    initial: np.ndarray
    initial_c: float
    target: Target | None
    probe_names: tuple[str, ...]
    probe_points: np.ndarray
    settings: StepSettings
    furnace_gas: Schedule
    furnace_wall: Schedule
    warnings: tuple[str, ...] = field(default=())
    face_labels: dict[str, str] = field(default_factory=dict)  # face -> case-file condition


def schedule_from_case(value) -> Schedule:
    """A number or [[time_s, value], ...] from the case -> Schedule."""
    if value is None:
        return None
    if isinstance(value, int | float):
        return Schedule.constant(float(value))
    return Schedule.from_rows(value)


def table_from_case(value) -> Table:
    if isinstance(value, int | float):
        return Table.constant(float(value))
    return Table.from_rows(value)


def material_from_case(spec) -> Material:
    return Material(
        float(spec.density),
        table_from_case(spec.conductivity),
        table_from_case(spec.specific_heat),
        getattr(spec, "name", "") or "",
    )


def _conditions(case, names: tuple[str, ...], axis: tuple[str, ...]) -> dict[str, FaceCondition]:
    furnace = case.furnace
    gas = schedule_from_case(furnace.temperature)
    wall = schedule_from_case(furnace.wall_temperature) or gas
    default = Exposure(float(furnace.htc), gas, float(furnace.emissivity), wall)
    conds: dict[str, FaceCondition] = {name: default for name in names}
    for name, face in case.faces.items():
        if name not in names:
            raise CaseError(
                f"faces.{name}",
                f"no face named {name!r} on a {case.part.shape}",
                f"use one of: {', '.join(names)}",
            )
        kind = face.condition
        if name in axis and kind not in ("insulated", "symmetry"):
            raise CaseError(
                f"faces.{name}.condition",
                f"face {name} is the axis of the axisymmetric model and takes no condition "
                f"(got {kind!r})",
                f"remove [faces.{name}] or set it insulated",
            )
        if kind == "furnace":
            conds[name] = default
        elif kind in ("insulated", "symmetry"):
            conds[name] = Insulated()
        elif kind == "convection":
            amb = schedule_from_case(face.ambient)
            conds[name] = Exposure(
                float(face.htc),
                amb,
                float(face.emissivity or 0.0),
                schedule_from_case(face.wall) or amb,
            )
        elif kind == "fixed":
            conds[name] = FixedTemperature(schedule_from_case(face.temperature))
        elif kind == "flux":
            conds[name] = HeatFlux(schedule_from_case(face.flux))
    for name in axis:
        conds[name] = Insulated()
    return conds


def _bounds(conds: dict[str, FaceCondition], initial: float) -> tuple[float, float]:
    """Lowest and highest temperature the surroundings can drive the part to (C)."""
    lo = hi = initial
    for c in conds.values():
        if isinstance(c, Exposure):
            if c.htc > 0:
                lo, hi = min(lo, c.gas.low), max(hi, c.gas.peak)
            if c.emissivity > 0:
                lo, hi = min(lo, c.wall.low), max(hi, c.wall.peak)
        elif isinstance(c, FixedTemperature):
            lo, hi = min(lo, c.temperature.low), max(hi, c.temperature.peak)
        elif isinstance(c, HeatFlux):
            if c.flux.peak > 0:
                hi = np.inf
            if c.flux.low < 0:
                lo = -np.inf
    return lo, hi


def _check_target(target: Target, lo: float, hi: float) -> None:
    t = target.temperature
    if target.heating and t >= hi:
        raise CaseError(
            "target.temperature",
            f"{t:g} C can never be reached: the hottest surroundings are {hi:g} C "
            "and a part only approaches them",
            f"set a target below {hi:g} C or raise the furnace temperature",
        )
    if not target.heating and t <= lo:
        raise CaseError(
            "target.temperature",
            f"{t:g} C can never be reached: the coldest surroundings are {lo:g} C "
            "and a part only approaches them",
            f"set a target above {lo:g} C or lower the surrounding temperature",
        )


def _breakpoints(conds, furnace_gas, furnace_wall) -> tuple[float, ...]:
    times = set(furnace_gas.breakpoints) | set(furnace_wall.breakpoints)
    for c in conds.values():
        if isinstance(c, Exposure):
            times |= set(c.gas.breakpoints) | set(c.wall.breakpoints)
        elif isinstance(c, FixedTemperature):
            times |= set(c.temperature.breakpoints)
        elif isinstance(c, HeatFlux):
            times |= set(c.flux.breakpoints)
    return tuple(sorted(t for t in times if t > 0))


def _probe_matrix(mesh: PartMesh, points: np.ndarray):
    from skfem import Basis, ElementTetP1, ElementTriP1

    elem = ElementTriP1() if mesh.dim == 2 else ElementTetP1()
    basis = Basis(mesh.skfem(), elem, intorder=1)
    return basis.probes(points.T).tocsr()


def probe_matrix(mesh: PartMesh, points: np.ndarray):
    """Sparse (P, N) matrix interpolating nodal values at points; CaseError if outside."""
    if points.shape[0] == 0:
        return None
    try:
        return _probe_matrix(mesh, points)
    except ValueError:
        pass
    for i, p in enumerate(points):
        try:
            _probe_matrix(mesh, p[None, :])
        except ValueError:
            raise CaseError(
                f"probes[{i}].point",
                f"{list(map(float, p))} lies outside the part",
                "give a point inside the part, in metres",
            ) from None
    raise CaseError("probes", "a probe lies outside the part", "check the probe points")


def build_problem(case, mesh: PartMesh | None = None) -> Problem:
    """Mesh the part, assemble the model and check everything against the geometry.

    Args:
        case: a validated `femheat.case.Case`.
        mesh: an already built mesh to use instead of meshing the part.
    """
    part = case.part
    params = part.params
    shape = get_shape(part.shape)
    axisym = part.model == "axisymmetric"
    names = shape.names_of_faces(params)
    warnings: list[str] = []

    size = case.mesh.size
    if case.mesh.element != "P1":
        raise CaseError(
            "mesh.element",
            f"{case.mesh.element} elements are not available in this version",
            'use element = "P1" and a smaller mesh.size for more accuracy',
        )
    thickness = shape.thickness(params) if shape.thickness else None
    if size is not None and thickness is not None and size > thickness:
        raise CaseError(
            "mesh.size",
            f"{size:g} m is larger than the thinnest section of the part, {thickness:g} m",
            f"use a size below {thickness / 4:g} m (or leave it out for the default)",
        )
    conds = _conditions(case, names, shape.axis_faces if axisym else ())
    initial_c = float(case.initial.temperature)
    lo, hi = _bounds(conds, initial_c)
    target = None
    if case.target is not None:
        tc = float(case.target.temperature)
        target = Target(tc, tc > initial_c, float(case.target.hold))
        _check_target(target, lo, hi)

    material = material_from_case(case.material)
    if mesh is None:
        mesh = mesh_part(part.shape, params, part.model, size, case.base_dir)
    model = build_model(mesh, material, conds)

    probe_points = np.array([p.point for p in case.probes], dtype=float).reshape(-1, mesh.dim)
    probe_matrix(mesh, probe_points)  # validates positions early

    furnace_gas = schedule_from_case(case.furnace.temperature)
    furnace_wall = schedule_from_case(case.furnace.wall_temperature) or furnace_gas
    temps = [initial_c, lo if np.isfinite(lo) else initial_c, hi if np.isfinite(hi) else initial_c]
    if target is not None:
        temps.append(target.temperature)
    span = max(max(temps) - min(temps), 1.0)
    exposed = sum(g.area for g in model.faces if not isinstance(g.condition, Insulated))
    length = model.volume / max(exposed, 1e-300)
    alpha = float(material.diffusivity(initial_c))
    t_diff = min(length, thickness or length) ** 2 / alpha
    solver = case.solver
    settings = StepSettings(
        span=span,
        tolerance=float(solver.tolerance),
        first_step=float(solver.first_step) if solver.first_step else 1e-4 * t_diff,
        max_step=float(solver.max_step) if solver.max_step else None,
        breakpoints=_breakpoints(conds, furnace_gas, furnace_wall),
        end_time=float(solver.end_time) if solver.end_time else None,
        fixed_step=float(solver.fixed_step) if solver.fixed_step else None,
    )
    if target is None and settings.end_time is None:
        log.info("no target and no end time: the run goes on until the field settles")
    initial = np.full(mesh.nodes, initial_c)
    return Problem(
        title=case.title,
        part_model=part.model,
        shape=part.shape,
        params=params,
        mesh=mesh,
        model=model,
        initial=initial,
        initial_c=initial_c,
        target=target,
        probe_names=tuple(p.name for p in case.probes),
        probe_points=probe_points,
        settings=settings,
        furnace_gas=furnace_gas,
        furnace_wall=furnace_wall,
        warnings=tuple(warnings),
        face_labels={
            name: ("axis" if axisym and name in shape.axis_faces else
                   (case.faces[name].condition if name in case.faces else "furnace"))
            for name in names
        },
    )
