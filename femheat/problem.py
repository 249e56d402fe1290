"""From a validated case to a ready-to-march problem: mesh, model, initial field, targets.

All checks that need the geometry (face names, probe positions, reachability of the target)
live here and raise `CaseError` naming the place in the case file.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, field, replace

import numpy as np

from .errors import CaseError
from .furnace import (
    Contact,
    Exposure,
    FaceCondition,
    FixedTemperature,
    HeatFlux,
    Insulated,
    Schedule,
)
from .geometry import get_shape, resolve_paths
from .materials import Material, Table
from .mesh import PartMesh, mesh_part
from .model import Model, build_model
from .program import ScheduleReader, to_schedule
from .resources import estimate_run
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
    """A number, [[time_s, value], ...] or a furnace program from the case -> Schedule.

    A program with a rate limit that takes the part thickness needs `build_problem`
    (which knows the part); this function raises CaseError for it.
    """
    return to_schedule(value)


def table_from_case(value) -> Table:
    if isinstance(value, int | float):
        return Table.constant(float(value))
    return Table.from_rows(value)


def material_from_case(spec, base_dir=None) -> Material:
    """The `[material]` table as a Material: a library entry, a CSV file and the keys given,
    each key overriding the file and the file overriding the entry.

    Args:
        spec: `case.Material`.
        base_dir: folder that a relative ``table_file`` is taken from (default: cwd).
    """
    from pathlib import Path

    entry = getattr(spec, "library_entry", None)
    columns: dict = {}
    if getattr(spec, "table_file", None):
        from .property_csv import read_property_csv

        path = Path(spec.table_file).expanduser()
        if not path.is_absolute():
            path = Path(base_dir or Path.cwd()) / path
        columns = read_property_csv(path)
    values = {}
    from_entry = False
    for key in ("density", "conductivity", "specific_heat"):
        given = getattr(spec, key, None)
        if given is not None:
            values[key] = float(given) if key == "density" else table_from_case(given)
        elif key in columns:
            values[key] = columns[key]
        elif entry is not None:
            values[key] = getattr(entry, key)
            from_entry = from_entry or key != "density"
        else:
            raise CaseError(
                f"material.{key}",
                f"missing (not in {Path(spec.table_file).name} either)",
                f"add {key} to [material] or a '{key}' column to the file",
            )
    name = getattr(spec, "name", "") or ""
    if entry is not None:
        name = f"{entry.key}: {entry.name}"
    return Material(
        values["density"],
        values["conductivity"],
        values["specific_heat"],
        name,
        entry.valid_range if from_entry else None,
        entry.source if entry is not None else "",
    )


def _conditions(
    case, names: tuple[str, ...], axis: tuple[str, ...], read=None
) -> dict[str, FaceCondition]:
    """Face conditions by name; `read(value, where)` turns case schedules into Schedules."""
    if read is None:

        def read(value, where):
            return schedule_from_case(value)

    furnace = case.furnace
    gas = read(furnace.temperature, "furnace.temperature")
    wall = read(furnace.wall_temperature, "furnace.wall_temperature") or gas
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
        at = f"faces.{name}"
        shade = 1.0 if face.radiation_factor is None else float(face.radiation_factor)
        if kind == "furnace":
            conds[name] = replace(default, emissivity=default.emissivity * shade)
        elif kind in ("insulated", "symmetry"):
            conds[name] = Insulated()
        elif kind == "convection":
            amb = read(face.ambient, f"{at}.ambient")
            conds[name] = Exposure(
                float(face.htc),
                amb,
                float(face.emissivity or 0.0) * shade,
                read(face.wall, f"{at}.wall") or amb,
            )
        elif kind == "zone":
            amb = read(face.ambient, f"{at}.ambient")
            conds[name] = Exposure(
                float(furnace.htc if face.htc is None else face.htc),
                amb,
                float(furnace.emissivity if face.emissivity is None else face.emissivity) * shade,
                read(face.wall, f"{at}.wall") or amb,
            )
        elif kind == "hearth":
            hearth = read(face.hearth_temperature, f"{at}.hearth_temperature") or gas
            conds[name] = Contact(float(face.conductance), hearth)
        elif kind == "fixed":
            conds[name] = FixedTemperature(read(face.temperature, f"{at}.temperature"))
        elif kind == "flux":
            conds[name] = HeatFlux(read(face.flux, f"{at}.flux"))
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
        elif isinstance(c, Contact):
            if c.conductance > 0:
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


def _target(case, conds, low_c: float, high_c: float, mean_c: float):
    """(Target or None, lo, hi) for a start between `low_c` and `high_c` with mean `mean_c`.

    The part heats when the target lies above the (volume-mean) starting temperature.
    """
    lo, hi = _bounds(conds, low_c)
    lo2, hi2 = _bounds(conds, high_c)
    lo, hi = min(lo, lo2), max(hi, hi2)
    if case.target is None:
        return None, lo, hi
    tc = float(case.target.temperature)
    target = Target(tc, tc > mean_c, float(case.target.hold))
    _check_target(target, lo, hi)
    return target, lo, hi


def _breakpoints(conds, furnace_gas, furnace_wall) -> tuple[float, ...]:
    times = set(furnace_gas.breakpoints) | set(furnace_wall.breakpoints)
    for c in conds.values():
        if isinstance(c, Exposure):
            times |= set(c.gas.breakpoints) | set(c.wall.breakpoints)
        elif isinstance(c, FixedTemperature | Contact):
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


PLAUSIBLE_M = (1e-4, 5.0, 50.0)
"""Furnace part dimensions, m: smallest at least 0.1 mm, smallest at most 5 m, largest at
most 50 m (judgement: a part outside these is a unit slip; common practice, no source)."""


def _largest_parameter(shape, params: dict) -> tuple[str, float] | None:
    """(name, value) of the largest length among a shape's parameters, m (None if none)."""
    best = None
    for p in shape.params:
        if p.kind not in ("length", "length0", "lengths", "pairs") or p.name == "scale":
            continue
        values = np.ravel(np.asarray(params.get(p.name, ()), dtype=object))
        lengths = [float(v) for v in values if isinstance(v, int | float)]
        if lengths and (best is None or max(lengths) > best[1]):
            best = (p.name, max(lengths))
    return best


def _check_plausible(part, what: str, smallest=None, largest=None, where=None) -> None:
    """Refuse part dimensions (m) no furnace part has: most often millimetres given as metres.

    Args:
        part: the case's ``[part]``. what: how the message names the dimension.
        smallest, largest: the dimensions to check, m (None: not known).
        where: the place in the case file (default: the part's size, scale, mesh or file).
    """
    lo, small_max, large_max = PLAUSIBLE_M
    if where is None:
        given = dict(part.model_extra or {})
        keys = ("size", "scale", "mesh", "file")
        where = next((f"part.{k}" for k in keys if k in given), "part")
    fix = 'give dimensions in metres (e.g. 0.04 for 40 mm) or with a unit ("40 mm")'
    too_large = [(v, lim) for v, lim in ((smallest, small_max), (largest, large_max)) if v]
    for value, limit in too_large:
        if value > limit:
            raise CaseError(
                where,
                f"{what} {value:g} m: implausible for a furnace part; did you give millimetres?",
                fix,
            )
    if smallest is not None and smallest < lo:
        raise CaseError(
            where, f"{what} {smallest:g} m: implausible for a furnace part (under 0.1 mm)", fix
        )


def _check_mesh(case, mesh: PartMesh) -> None:
    """The built part's size is plausible and its run fits in memory."""
    from .resources import check_memory

    sides = mesh.points.max(axis=0) - mesh.points.min(axis=0)
    _check_plausible(case.part, "part (bounding box)", float(sides.min()), float(sides.max()))
    # P2 adds a node on every edge: about 4x the corners in 2D, 8x in 3D
    per_corner = 1 if case.mesh.element == "P1" else (4 if mesh.dim == 2 else 8)
    check_memory(mesh.nodes * per_corner, mesh.dim, mesh.size, case.mesh.size is not None)


def _mesh(case, params: dict, size: float | None) -> PartMesh:
    """Mesh the case's part with its mesh controls."""
    spec = case.mesh
    return mesh_part(
        case.part.shape,
        params,
        case.part.model,
        size,
        case.base_dir,
        spec.refine,
        spec.corner_size,
        order=2 if spec.element == "P2" else 1,
    )


def build_problem(case, mesh: PartMesh | None = None) -> Problem:
    """Mesh the part, assemble the model and check everything against the geometry.

    Args:
        case: a validated `femheat.case.Case`.
        mesh: an already built mesh to use instead of meshing the part.
    """
    part = case.part
    # file paths (an outline, a CAD file) are taken from the case file's folder
    params = resolve_paths(part.shape, part.params, case.base_dir)
    shape = get_shape(part.shape)
    axisym = part.model == "axisymmetric"
    names = shape.names_of_faces(params)
    warnings: list[str] = []

    size = case.mesh.size
    thickness = shape.thickness(params) if shape.thickness else None
    # before meshing: a slip in units would mesh a huge part
    if thickness is not None:
        _check_plausible(part, "thinnest section", smallest=thickness)
    largest = _largest_parameter(shape, params)
    if largest is not None:
        name, value = largest
        _check_plausible(part, name, largest=value, where=f"part.{name}")
    if size is not None and thickness is not None and size > thickness:
        raise CaseError(
            "mesh.size",
            f"{size:g} m is larger than the thinnest section of the part, {thickness:g} m",
            f"use a size below {thickness / 4:g} m (or leave it out for the default)",
        )
    if not names:  # faces known only once built: CAD and mesh files, face selections
        if mesh is None:
            mesh = _mesh(case, params, size)
        _check_mesh(case, mesh)
        names = mesh.face_names
    note = ""
    if thickness is not None:
        note = (
            f"rate limit uses the part's thinnest modelled section, {1000 * thickness:.4g} mm "
            "(a half-model across a symmetry plane shows half the real thickness); give "
            "limit.thickness for the governing thickness"
        )
    read = ScheduleReader(thickness, note)
    conds = _conditions(case, names, shape.axis_faces if axisym else (), read)
    uniform = case.initial.temperature is not None
    if uniform:
        initial_c = float(case.initial.temperature)
        target, lo, hi = _target(case, conds, initial_c, initial_c, initial_c)

    material = material_from_case(case.material, case.base_dir)
    if mesh is None:
        mesh = _mesh(case, params, size)
    _check_mesh(case, mesh)
    model = build_model(mesh, material, conds, case.mesh.element)
    mesh = model.mesh  # for P2 the node mesh: nodal fields live on its points
    if uniform:
        initial = np.full(mesh.nodes, initial_c)
    else:
        from .initial_field import initial_from_case

        initial, found = initial_from_case(case.initial, case.base_dir, mesh)
        warnings.extend(found)
        initial_c = model.mean_temperature(initial)
        low, high = float(initial.min()), float(initial.max())
        target, lo, hi = _target(case, conds, low, high, initial_c)
        lo, hi = min(lo, low), max(hi, high)

    probe_points = np.array([p.point for p in case.probes], dtype=float).reshape(-1, mesh.dim)
    probe_matrix(mesh, probe_points)  # validates positions early

    furnace_gas = read(case.furnace.temperature, "furnace.temperature")
    furnace_wall = read(case.furnace.wall_temperature, "furnace.wall_temperature") or furnace_gas
    warnings.extend(read.notes)
    temps = [initial_c, lo if np.isfinite(lo) else initial_c, hi if np.isfinite(hi) else initial_c]
    temps += [float(initial.min()), float(initial.max())]
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
    long_run = estimate_run(mesh.nodes, mesh.dim, settings).warning(mesh.dim)
    if long_run:
        warnings.append(long_run)
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
