"""The case file: what to heat, in what furnace, and when to stop.

A case is a TOML file in SI units, with temperatures in degrees Celsius and times in seconds.
Any number may instead be text with a unit (read by pint, see `femheat.units`): ``"25 mm"``,
``"1650 degF"``, ``"2 h"``, ``"45 W/m/K"``, ``"30 Btu/(h*ft**2*degF)"``; each field knows what
it measures, and a unit that measures something else is an error naming the field. Outside
temperature fields, degF and degC are temperature differences (``"400 degF/h"``). A table may
also be written ``{units = ["h", "degF"], rows = [[0, 70], [2, 1650]]}``.
:func:`load_case` reads a file and :func:`parse_case` checks an already parsed table; both return
a frozen :class:`Case` or raise :class:`~femheat.errors.CaseError` whose one-line message names
the place in the file, the bad value and a fix, e.g.::

    furnace.htcc: unknown key; fix: did you mean 'htc'? valid keys here: temperature, ...
    material.conductivity: must be > 0, got -36; fix: give the thermal conductivity in W/(m K) ...

Example::

    title = "Slab heated from one face"
    [part]
    model = "planar"
    shape = "rectangle"
    size = [0.04, 0.01]
    [material]
    density = 7850
    conductivity = 36
    specific_heat = [[20, 440], [600, 760], [900, 650]]
    [furnace]
    temperature = [[0, 20], [3600, 850]]
    wall_temperature = 860
    htc = 180
    emissivity = 0.8
    [faces.xmin]
    condition = "insulated"
    [faces.ymax]
    condition = "convection"
    htc = 10
    ambient = 20
    [initial]
    temperature = 20
    [target]
    temperature = 830
    [mesh]
    size = 0.002
    [[probes]]
    name = "core"
    point = [0.0, 0.005]

Sections (required ones marked *):

``title``
    Free text.
``[part]`` *
    ``model``: ``"planar"`` (a 2D section of a long part), ``"axisymmetric"`` (x is the radius,
    y the axis) or ``"solid"`` (3D). ``shape``: ``"rectangle"`` (2 sizes, planar or
    axisymmetric) or ``"box"`` (3 sizes, solid). ``size``: the dimensions in m, all > 0.
``[material]`` *
    ``density`` in kg/m3; ``conductivity`` in W/(m K); ``specific_heat`` in J/(kg K); ``name``.
    A property is a positive number or a table ``[[temperature_C, value], ...]`` of two or more
    rows, temperatures strictly increasing, values > 0. A ``name`` from the material library
    (``femheat materials``, e.g. ``"carbon-steel-en1993"``) supplies all three, and any of them
    given here overrides it; otherwise all three are required and ``name`` is a label.
    ``table_file``: a CSV file (relative to the case file) with a ``temperature`` column and
    ``conductivity``, ``specific_heat`` or ``density`` columns, units in ``[ ]`` in the header
    (see `femheat.property_csv`).
``[furnace]`` *
    ``temperature``: the gas temperature in C; ``wall_temperature``: the wall temperature seen
    by radiation in C (optional); ``htc``: the convective coefficient in W/(m2 K), >= 0;
    ``emissivity`` of the part surface, between 0 and 1. A schedule is a number or a table
    ``[[time_s, value], ...]`` of one or more rows, times >= 0 and strictly increasing.
    A temperature schedule may also be a furnace program (see `femheat.program`)::

        [furnace.temperature]
        start = "400 C"
        steps = [{ramp_to = "620 C", rate = "100 degC/h"}, {hold = "2 h"},
                 {cool_to = "400 C", rate = "150 degC/h"}]
        limit = {heating = "222 degC/h", cooling = "278 degC/h", min_rate = "56 degC/h",
                 above = "425 C", thickness = "50 mm"}

    A step is ``ramp_to`` or ``cool_to`` with ``rate`` or ``duration``, or ``hold``. The
    optional ``limit`` caps ramp rates at ``rate * reference_thickness / thickness`` (default
    reference 1 in; ``thickness`` defaults to the part's thinnest modelled section), between
    ``min_rate`` and ``max_rate``, above the ``above`` temperature; a ramp with no rate runs at
    the limit.
``[faces.NAME]``
    ``condition`` and the keys it uses. Faces not listed are exposed to the furnace.

    ========== ============================================================================
    furnace    exposed to the furnace; ``radiation_factor`` (0 to 1, default 1) multiplies
               the emissivity for a face shielded from the walls
    insulated  no heat flow (no other key)
    symmetry   no heat flow across a plane of symmetry (no other key)
    convection ``htc`` (W/(m2 K)) and ``ambient`` (C) required; ``emissivity`` (default 0)
               and ``wall`` (C, default: the ambient) for radiation; ``radiation_factor``
    zone       a furnace zone of its own: ``ambient`` (C, a schedule) required; ``htc``,
               ``emissivity`` (default: the furnace's), ``wall`` (default: the ambient),
               ``radiation_factor``
    hearth     resting on the hearth: ``conductance`` (contact conductance, W/(m2 K), 0 for
               none) required; ``hearth_temperature`` (C, default: the furnace gas)
    fixed      ``temperature`` (C, a schedule)
    flux       ``flux`` (W/m2 into the part, a schedule, any sign)
    ========== ============================================================================
``[initial]`` *
    One of: ``temperature``, the uniform starting temperature in C; ``from_run``, the results
    folder of an earlier run whose final saved field is the start (its ``fields.pvd``);
    ``from_file``, a VTK file (.vtu, .vtk, or .pvd for its latest frame). Paths are relative
    to the case file; ``field`` names the point data in C (default ``"temperature_C"``). A
    field on another mesh is interpolated onto this one (`femheat.initial_field`).
``[target]``
    ``temperature`` in C that every point must reach; ``hold`` in s to keep running after
    that (default 0). Without ``[target]`` the run marches to ``solver.end_time`` or steady state.
``[mesh]``
    ``size``: the element size in m (optional); ``element``: ``"P1"`` (default) or ``"P2"``.
``[[probes]]``
    ``name`` (letters, digits, ``_``, ``-``; unique) and ``point``: 3 coordinates in m for the
    solid model, 2 otherwise.
``[solver]``
    ``end_time`` in s (optional); ``tolerance``: the local error per step as a fraction of
    the temperature span, in (0, 0.1], default 2e-5 (target times within about 0.1 %);
    ``max_step``, ``first_step`` and ``fixed_step`` (constant steps, no error control) in s,
    all optional.

Every temperature must be above absolute zero (-273.15 C). Booleans are not numbers; integers
are accepted where a real number is expected. Property and schedule tables are stored as tuples
of ``(x, value)`` pairs of floats, single values as floats.
"""

from __future__ import annotations

import json
import math
import os
import re
import tomllib
import types
from difflib import get_close_matches
from functools import partial
from pathlib import Path
from typing import Annotated, Any, Literal, Union, get_args, get_origin

from pydantic import (
    BaseModel,
    BeforeValidator,
    ConfigDict,
    Field,
    PrivateAttr,
    StrictBool,
    ValidationError,
    model_validator,
)
from pydantic.fields import FieldInfo

from femheat.errors import CaseError
from femheat.units import UnitError, to_si

__all__ = [
    "ABSOLUTE_ZERO_C",
    "CASE_KEYS",
    "Case",
    "Face",
    "Furnace",
    "Initial",
    "Material",
    "MeshSpec",
    "Part",
    "Probe",
    "Program",
    "ProgramStep",
    "Property",
    "RateLimit",
    "Schedule",
    "SolverSpec",
    "Table",
    "Target",
    "load_case",
    "parse_case",
]

ABSOLUTE_ZERO_C = -273.15
"""Absolute zero in degrees Celsius; every temperature in a case must be above it."""

Table = tuple[tuple[float, float], ...]
"""Rows ``(x, value)`` with ``x`` strictly increasing (time in s or temperature in C)."""

Schedule = float | Table
"""A value against time: a constant, or rows ``(time_s, value)``. Temperature schedules may
also be a :class:`Program`; turn any of them into a `furnace.Schedule` with
`femheat.program.to_schedule`."""

Property = float | Table
"""A material property: a constant, or rows ``(temperature_C, value)``."""


# --- checks on single values ---------------------------------------------------------------


class _Bad(ValueError):
    """A value failed a check; ``at`` is the place below the field (list index or key)."""

    def __init__(self, problem: str, fix: str | None = None, at: tuple[str | int, ...] = ()):
        super().__init__(problem)
        self.problem = problem
        self.fix = fix
        self.at = at


def _num(x: float) -> str:
    """A number as a person would write it: 120 rather than 120.0."""
    if isinstance(x, int):
        return str(x)
    if x.is_integer() and abs(x) < 1e15:
        return str(int(x))
    return repr(x)


def _show(value: Any) -> str:
    """A short, one-line picture of an input value, TOML-like."""
    if isinstance(value, bool):
        text = "true (a boolean)" if value else "false (a boolean)"
    elif isinstance(value, int | float):
        text = _num(value)
    else:
        try:
            text = repr(value)
        except Exception:  # a value whose repr fails still deserves a message
            text = f"a {type(value).__name__}"
    text = text.replace("\n", " ")
    return text if len(text) <= 60 else text[:57] + "..."


def _number(value: Any, kind: str | None = None) -> float:
    """A finite real number; integers are fine, booleans are not.

    With a `kind` (a key of `femheat.units.KINDS`), text with a unit such as "25 mm" is
    converted to the kind's base unit; without one, text is refused.
    """
    if isinstance(value, str) and kind is not None:
        try:
            return to_si(value, kind)
        except UnitError as exc:
            raise _Bad(exc.problem, fix=exc.fix) from None
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise _Bad(f"expected a number, got {_show(value)}")
    try:
        x = float(value)
    except OverflowError:
        raise _Bad(f"number too large, got {_show(value)}") from None
    if not math.isfinite(x):
        raise _Bad(f"expected a finite number, got {_show(value)}")
    return x


def _positive(value: Any, kind: str | None = None) -> float:
    x = _number(value, kind)
    if not x > 0:
        raise _Bad(f"must be > 0, got {_show(value)}")
    return x


def _non_negative(value: Any, kind: str | None = None) -> float:
    x = _number(value, kind)
    if x < 0:
        raise _Bad(f"must be >= 0, got {_show(value)}")
    return x


def _fraction(value: Any) -> float:
    x = _number(value, "fraction")
    if not 0 <= x <= 1:
        raise _Bad(f"must be between 0 and 1, got {_show(value)}")
    return x


def _tolerance(value: Any) -> float:
    x = _number(value, "fraction")
    if not 0 < x <= 0.1:
        raise _Bad(f"must be > 0 and at most 0.1, got {_show(value)}")
    return x


def _above_absolute_zero(x: float, at: tuple[str | int, ...] = ()) -> float:
    if x <= ABSOLUTE_ZERO_C:
        raise _Bad(
            f"{_num(x)} C is at or below absolute zero ({ABSOLUTE_ZERO_C} C)",
            fix="give temperatures in degrees Celsius (not kelvin or a negative offset)",
            at=at,
        )
    return x


def _temperature(value: Any) -> float:
    return _above_absolute_zero(_number(value, "temperature"))


def _text(value: Any) -> str:
    if not isinstance(value, str):
        raise _Bad(f"expected text in quotes, got {_show(value)}")
    return value


def _probe_name(value: Any) -> str:
    name = _text(value)
    if not name:
        raise _Bad("must not be empty", fix='give the probe a name, e.g. name = "core"')
    if not re.fullmatch(r"[A-Za-z0-9_-]+", name):
        tidy = re.sub(r"[^A-Za-z0-9_-]+", "_", name).strip("_") or "core"
        raise _Bad(
            f"may hold only letters, digits, _ and -, got {name!r}",
            fix=f'rename it, e.g. name = "{tidy}"',
        )
    return name


def _choice(options: tuple[str, ...], value: Any) -> str:
    if isinstance(value, str) and value in options:
        return value
    listed = ", ".join(repr(option) for option in options)
    close = get_close_matches(value, options, n=1) if isinstance(value, str) else []
    hint = f"did you mean {close[0]!r}?" if close else "use one of the values listed"
    raise _Bad(f"must be one of {listed}, got {_show(value)}", fix=hint)


def _numbers(value: Any, kind: str | None = None) -> tuple[float, ...]:
    if not isinstance(value, list | tuple):
        raise _Bad(f"expected a list of numbers, got {_show(value)}")
    out = []
    for i, item in enumerate(value):
        try:
            out.append(_number(item, kind))
        except _Bad as bad:
            raise _Bad(bad.problem, fix=bad.fix, at=(i,)) from None
    return tuple(out)


def _sizes(value: Any) -> tuple[float, ...]:
    sizes = _numbers(value)
    for i, x in enumerate(sizes):
        if not x > 0:
            raise _Bad(f"sizes must be > 0, got {_num(x)}", at=(i,))
    return sizes


def _point(value: Any) -> tuple[float, ...]:
    point = _numbers(value, "length")
    if len(point) not in (2, 3):
        raise _Bad(
            f"expected 2 or 3 coordinates, got {len(point)}: {_show(value)}",
            fix="give [x, y] in m for planar and axisymmetric models, [x, y, z] for solid",
        )
    return point


def _rows(
    value: list | tuple,
    first: str,
    second: str,
    kinds: tuple[str | None, str | None] = (None, None),
) -> list[tuple[float, float]]:
    """Read ``[[a, b], ...]`` as pairs of finite numbers (text with units converted by
    `kinds`); errors name the row."""
    fix = f"write each row as [{first}, {second}]"
    rows = []
    for i, row in enumerate(value):
        if not isinstance(row, list | tuple) or len(row) != 2:
            raise _Bad(f"each row must be 2 numbers, got {_show(row)}", fix=fix, at=(i,))
        try:
            rows.append((_number(row[0], kinds[0]), _number(row[1], kinds[1])))
        except _Bad as bad:
            raise _Bad(f"{bad.problem} in row {_show(row)}", fix=bad.fix or fix, at=(i,)) from None
    return rows


def _unit_rows(
    value: dict, first: str, second: str, kinds: tuple[str, str]
) -> list[tuple[float, float]]:
    """``{units = [u1, u2], rows = [[a, b], ...]}``: rows of bare numbers in the given units,
    converted to base units (offset scales such as degF handled)."""
    for key in value:
        if key not in ("units", "rows"):
            raise _Bad(
                "unknown key in a table with units",
                fix=f'write {{units = ["...", "..."], rows = [[{first}, {second}], ...]}}',
                at=(key,),
            )
    units = value.get("units")
    texts = isinstance(units, list | tuple) and all(isinstance(u, str) for u in units)
    if not (texts and len(units) == 2):
        raise _Bad(
            f"expected 2 units in quotes, one per column, got {_show(units)}",
            fix=f'give units = ["...", "..."] for [{first}, {second}], e.g. ["h", "degF"]',
            at=("units",),
        )
    raw = value.get("rows")
    if not isinstance(raw, list | tuple) or not raw:
        raise _Bad(
            f"expected rows [[{first}, {second}], ...], got {_show(raw)}",
            fix="give one or more rows of 2 numbers in the units named",
            at=("rows",),
        )
    scales = []
    for j, (unit, kind) in enumerate(zip(units, kinds, strict=True)):
        try:
            one, zero = to_si(f"1 {unit}", kind), to_si(f"0 {unit}", kind)
        except UnitError as exc:
            problem = exc.problem.replace(repr(f"1 {unit}"), f"unit {unit!r}")
            raise _Bad(problem, fix=exc.fix, at=("units", j)) from None
        scales.append((zero, one - zero))
    try:
        rows = _rows(raw, first, second)
    except _Bad as bad:
        raise _Bad(bad.problem, fix=bad.fix, at=("rows", *bad.at)) from None
    (a0, s0), (a1, s1) = scales
    return [(a0 + s0 * x, a1 + s1 * y) for x, y in rows]


def _schedule(value: Any, *, temperature: bool, kind: str = "flux") -> Any:
    """A constant, ``[[time_s, value], ...]``, a table with units, or (for temperatures) a
    furnace program; temperatures must be above absolute zero."""
    second = "temperature_C" if temperature else "value"
    kinds = ("time", "temperature" if temperature else kind)
    at: tuple[str | int, ...] = ()
    if temperature and isinstance(value, Program):
        return value
    if isinstance(value, dict) and temperature and not {"units", "rows"} & set(value):
        return _sub_record(Program, value)
    if isinstance(value, dict):
        rows = _unit_rows(value, "time", second, kinds)
        at = ("rows",)
    elif not isinstance(value, list | tuple):
        try:
            x = _number(value, kinds[1])
        except _Bad as bad:
            if isinstance(value, str):
                raise
            more = " or a program {start, steps}" if temperature else ""
            raise _Bad(
                f"expected a number or a table [[time_s, {second}], ...]{more}, got {_show(value)}",
                fix=bad.fix,
            ) from None
        return _above_absolute_zero(x) if temperature else x
    elif not value:
        raise _Bad(
            "the table is empty",
            fix=f"give a single number, or rows [[time_s, {second}], ...]",
        )
    else:
        rows = _rows(value, "time_s", second, kinds)
    for i, (t, v) in enumerate(rows):
        if t < 0:
            raise _Bad(
                f"times must be >= 0, got t={_num(t)}",
                fix="count time in seconds from the start of the run (t=0)",
                at=(*at, i),
            )
        if i and t <= rows[i - 1][0]:
            raise _Bad(
                f"times must increase; got t={_num(t)} after t={_num(rows[i - 1][0])}",
                fix="list the rows in order of time, each time larger than the one before",
                at=(*at, i),
            )
        if temperature:
            _above_absolute_zero(v, at=(*at, i))
    return tuple(rows)


def _property(value: Any, kind: str | None = None) -> float | Table:
    """A positive constant, ``[[temperature_C, value], ...]`` with two or more rows, or the
    same rows as ``{units = [...], rows = [...]}``."""
    at: tuple[str | int, ...] = ()
    if isinstance(value, dict) and kind is not None:
        rows = _unit_rows(value, "temperature", "value", ("temperature", kind))
        at = ("rows",)
    elif not isinstance(value, list | tuple):
        try:
            x = _number(value, kind)
        except _Bad as bad:
            if isinstance(value, str):
                raise
            raise _Bad(
                "expected a positive number or a table [[temperature_C, value], ...], "
                f"got {_show(value)}",
                fix=bad.fix,
            ) from None
        if not x > 0:
            raise _Bad(f"must be > 0, got {_show(value)}")
        return x
    else:
        rows = _rows(value, "temperature_C", "value", ("temperature", kind))
    if len(rows) < 2:
        raise _Bad(
            f"a table needs at least 2 rows [temperature_C, value], got {len(rows)}",
            fix="give a single number for a constant, or two or more rows",
        )
    for i, (temp, v) in enumerate(rows):
        _above_absolute_zero(temp, at=(*at, i))
        if i and temp <= rows[i - 1][0]:
            raise _Bad(
                f"temperatures must increase; got T={_num(temp)} after T={_num(rows[i - 1][0])}",
                fix="list the rows in order of temperature, without repeats",
                at=(*at, i),
            )
        if not v > 0:
            raise _Bad(
                f"values must be > 0, got {_num(v)} at T={_num(temp)}",
                fix="check the units and the sign of the value in this row",
                at=(*at, i),
            )
    return tuple(rows)


def _sub_record(record: type[BaseModel], value: Any) -> Any:
    """Validate a nested record inside a field check; its first problem becomes a `_Bad`."""
    try:
        return record.model_validate(value)
    except ValidationError as exc:
        try:
            loc, problem, fix = _explain(exc, record)
        except Exception:  # never let a bug in the message hide the problem
            first = exc.errors(include_url=False)[0]
            loc, problem = tuple(first["loc"]), str(first.get("msg"))
            fix = "see the case file format in the femheat.case module documentation"
        raise _Bad(problem, fix=fix, at=loc) from None


def _positive_of(kind: str) -> Any:
    return Annotated[float, BeforeValidator(partial(_positive, kind=kind))]


def _non_negative_of(kind: str) -> Any:
    return Annotated[float, BeforeValidator(partial(_non_negative, kind=kind))]


_Number = Annotated[float, BeforeValidator(_number)]
_Positive = Annotated[float, BeforeValidator(_positive)]
_NonNegative = Annotated[float, BeforeValidator(_non_negative)]
_Length = _positive_of("length")
_Time = _positive_of("time")
_TimeOrZero = _non_negative_of("time")
_Density = _positive_of("density")
_Htc = _non_negative_of("htc")
_Rate = _positive_of("rate")
_Fraction = Annotated[float, BeforeValidator(_fraction)]
_Temperature = Annotated[float, BeforeValidator(_temperature)]
_Text = Annotated[str, BeforeValidator(_text)]
_FluxSchedule = Annotated[Schedule, BeforeValidator(partial(_schedule, temperature=False))]
_ValueSchedule = _FluxSchedule
_Conductivity = Annotated[Property, BeforeValidator(partial(_property, kind="conductivity"))]
_SpecificHeat = Annotated[Property, BeforeValidator(partial(_property, kind="specific_heat"))]
_Property = Annotated[Property, BeforeValidator(_property)]

ModelKind = Literal["planar", "axisymmetric", "solid"]
Condition = Literal[
    "furnace", "insulated", "symmetry", "convection", "fixed", "flux", "hearth", "zone"
]
ElementKind = Literal["P1", "P2"]


def _one_of(kind: Any) -> BeforeValidator:
    return BeforeValidator(partial(_choice, get_args(kind)))


# --- the records ---------------------------------------------------------------------------


class _Record(BaseModel):
    model_config = ConfigDict(frozen=True, extra="forbid")


class Part(BaseModel):
    """The part: which model, which built-in shape, and the shape's parameters (m).

    Keys other than ``model`` and ``shape`` are the shape's parameters (``size`` for a
    rectangle or box; see ``femheat shapes``); they are checked by the shape registry.
    """

    model_config = ConfigDict(frozen=True, extra="allow")
    _params: dict = PrivateAttr(default_factory=dict)

    model: Annotated[ModelKind, _one_of(ModelKind)] = Field(
        description="the model: 'planar', 'axisymmetric' or 'solid'", examples=['"planar"']
    )
    shape: _Text = Field(
        description="the shape, e.g. 'rectangle' (2D) or 'box' (3D); list them with femheat shapes",
        examples=['"rectangle"'],
    )

    @model_validator(mode="before")
    @classmethod
    def _mesh_file_shape(cls, data: Any) -> Any:
        """``[part] mesh = "file"`` without a shape means the shape "mesh"."""
        if isinstance(data, dict) and "shape" not in data and "mesh" in data:
            return {**data, "shape": "mesh"}
        return data

    @model_validator(mode="after")
    def _shape_params(self) -> Part:
        from .geometry import ShapeParamError, check_params

        given = dict(self.model_extra or {})
        try:
            params = check_params(self.shape, self.model, given)
        except ShapeParamError as exc:
            at = (exc.param,) if exc.index is None else (exc.param, exc.index)
            raise _Bad(exc.problem, fix=exc.fix, at=at) from None
        self._params = params
        return self

    @property
    def params(self) -> dict:
        """The shape's checked parameters with defaults filled in."""
        return self._params

    @property
    def size(self) -> tuple[float, ...] | None:
        """``size`` of a rectangle or box (m), else None."""
        return self.params.get("size")


class Material(_Record):
    """Material properties; conductivity and specific heat may depend on temperature.

    ``name`` picks a library entry (``femheat materials``); the three properties then become
    optional overrides. A ``table_file`` gives properties as CSV columns. Otherwise all three
    properties are required and ``name`` is only a label.
    """

    density: _Density | None = Field(
        None, description="the density in kg/m3", examples=["7850"]
    )
    conductivity: _Conductivity | None = Field(
        None,
        description="the thermal conductivity in W/(m K), a number or [[temperature_C, k], ...]",
        examples=["36"],
    )
    specific_heat: _SpecificHeat | None = Field(
        None,
        description="the specific heat in J/(kg K), a number or [[temperature_C, c], ...]",
        examples=["460"],
    )
    name: _Text = Field(
        "",
        description="a library material (list them with femheat materials), or a label",
        examples=['"carbon-steel-en1993"'],
    )
    table_file: _Text | None = Field(
        None,
        description="a CSV file of properties against temperature, relative to the case file",
        examples=['"steel.csv"'],
    )

    @property
    def library_entry(self):
        """The `femheat.library.Entry` that ``name`` picks, or None."""
        from femheat.library import find

        return find(self.name) if self.name.strip() else None

    @model_validator(mode="after")
    def _complete(self) -> Material:
        if self.table_file is not None or self.library_entry is not None:
            return self
        keys = ("density", "conductivity", "specific_heat")
        missing = [key for key in keys if getattr(self, key) is None]
        if not missing:
            return self
        if self.name.strip():
            from femheat.library import suggest

            close = suggest(self.name)
            hint = f"did you mean {close!r}? " if close else ""
            raise _Bad(
                f"{self.name!r} is not in the material library, and "
                f"{', '.join(missing)} {'is' if len(missing) == 1 else 'are'} not given",
                fix=f"{hint}pick a library material (femheat materials lists them), "
                f"or give {', '.join(missing)}",
                at=("name",),
            )
        info = type(self).model_fields[missing[0]]
        raise _Bad(
            "missing",
            fix=f"add {missing[0]} = {info.examples[0]} ({info.description}), or pick a "
            'library material, e.g. name = "carbon-steel-en1993" (femheat materials lists them)',
            at=(missing[0],),
        )


class RateLimit(_Record):
    """A heating and cooling rate limit that falls with the part thickness.

    The limit is ``rate * reference_thickness / thickness``, but never above ``max_rate``
    (default: the rate itself) and never below ``min_rate``. It applies to the parts of ramps
    above ``above`` (default: everywhere).
    """

    heating: _Rate = Field(
        description="the largest heating rate for the reference thickness, e.g. '222 degC/h'",
        examples=['"222 degC/h"'],
    )
    cooling: _Rate | None = Field(
        None,
        description="the largest cooling rate for the reference thickness, e.g. '278 degC/h'",
        examples=['"278 degC/h"'],
    )
    reference_thickness: _Length = Field(
        0.0254, description="the thickness the rates are for, default 1 in", examples=['"1 in"']
    )
    min_rate: _Rate | None = Field(
        None,
        description="a rate the limit never falls below, e.g. '56 degC/h'",
        examples=['"56 degC/h"'],
    )
    max_rate: _Rate | None = Field(
        None,
        description="a rate the limit never exceeds (default: the rate as given)",
        examples=['"222 degC/h"'],
    )
    above: _Temperature | None = Field(
        None,
        description="the furnace temperature above which the limit applies, e.g. '425 C'",
        examples=['"425 C"'],
    )
    thickness: _Length | None = Field(
        None,
        description="the governing thickness of the part (default: the part's thinnest "
        "modelled section)",
        examples=['"50 mm"'],
    )


_STEP_KEYS = ("ramp_to", "cool_to", "hold")


class ProgramStep(_Record):
    """One segment of a furnace program: a ramp (or cooling) to a setpoint, or a hold."""

    ramp_to: _Temperature | None = Field(
        None, description="the setpoint to heat or cool to", examples=['"620 C"']
    )
    cool_to: _Temperature | None = Field(
        None,
        description="the setpoint to cool to (below the one before)",
        examples=['"300 C"'],
    )
    rate: _Rate | None = Field(
        None,
        description="the ramp rate, e.g. '100 degC/h' (a bare number is K/s)",
        examples=['"100 degC/h"'],
    )
    duration: _Time | None = Field(
        None, description="the time the ramp takes, instead of a rate", examples=['"2 h"']
    )
    hold: _Time | None = Field(
        None, description="the time to hold the setpoint", examples=['"2 h"']
    )

    @model_validator(mode="before")
    @classmethod
    def _one_kind(cls, data: Any) -> Any:
        if not isinstance(data, dict) or any(key not in cls.model_fields for key in data):
            return data
        given = [key for key in _STEP_KEYS if data.get(key) is not None]
        if len(given) != 1:
            raise _Bad(
                f"a step needs exactly one of ramp_to, cool_to or hold, got {len(given)}"
                + (f" ({', '.join(given)})" if given else ""),
                fix='write e.g. {ramp_to = "620 C", rate = "100 degC/h"} or {hold = "2 h"}',
            )
        if given == ["hold"]:
            for key in ("rate", "duration"):
                if data.get(key) is not None:
                    raise _Bad(
                        f"{key} does not apply to a hold",
                        fix=f"remove {key}, or make this step a ramp_to",
                        at=(key,),
                    )
        elif data.get("rate") is not None and data.get("duration") is not None:
            raise _Bad(
                "give either rate or duration for a ramp, not both",
                fix="remove one of them",
                at=("duration",),
            )
        return data

    @property
    def setpoint(self) -> float | None:
        """The temperature this step ends at (C), or None for a hold."""
        return self.ramp_to if self.ramp_to is not None else self.cool_to


class Program(_Record):
    """A furnace program: a start temperature and steps (ramps, holds, cooling) from t = 0."""

    start: _Temperature = Field(
        description="the furnace temperature at the start of the run", examples=['"400 C"']
    )
    steps: list[ProgramStep] = Field(
        description="the steps, e.g. [{ramp_to = \"620 C\", rate = \"100 degC/h\"}, "
        '{hold = "2 h"}]',
        examples=['[{ramp_to = "620 C", rate = "100 degC/h"}, {hold = "2 h"}]'],
    )
    limit: RateLimit | None = Field(
        None,
        description="a thickness-dependent rate limit on the ramps",
        examples=['{heating = "222 degC/h", min_rate = "56 degC/h", above = "425 C"}'],
    )

    @model_validator(mode="after")
    def _steps_follow(self) -> Program:
        if not self.steps:
            raise _Bad(
                "a program needs at least one step",
                fix='add steps = [{ramp_to = "...", rate = "..."}, {hold = "..."}]',
                at=("steps",),
            )
        setpoint = self.start
        for i, step in enumerate(self.steps):
            if step.hold is not None:
                continue
            target = step.setpoint
            key = "ramp_to" if step.ramp_to is not None else "cool_to"
            if target == setpoint:
                raise _Bad(
                    f"{target:.6g} C is already the setpoint; a ramp must change it",
                    fix="use hold for a constant temperature",
                    at=("steps", i, key),
                )
            if key == "cool_to" and target > setpoint:
                raise _Bad(
                    f"cool_to {target:.6g} C is above the setpoint before it ({setpoint:.6g} C)",
                    fix="use ramp_to to heat, or give a lower temperature",
                    at=("steps", i, key),
                )
            setpoint = target
        return self


_TemperatureSchedule = Annotated[
    float | Table | Program, BeforeValidator(partial(_schedule, temperature=True))
]


class Furnace(_Record):
    """The furnace atmosphere and walls seen by faces with the ``furnace`` condition."""

    temperature: _TemperatureSchedule = Field(
        description="the furnace gas temperature in C, a number, [[time_s, temperature_C], ...] "
        "or a program {start, steps}",
        examples=["850"],
    )
    wall_temperature: _TemperatureSchedule | None = Field(
        None,
        description="the furnace wall temperature in C for radiation (default: the gas)",
        examples=["860"],
    )
    htc: _Htc = Field(
        description="the convective heat transfer coefficient in W/(m2 K), >= 0",
        examples=["180"],
    )
    emissivity: _Fraction = Field(
        description="the emissivity of the part surface, between 0 and 1", examples=["0.8"]
    )


_FACE_KEYS: dict[str, tuple[tuple[str, ...], tuple[str, ...]]] = {
    # condition: (required keys, optional keys)
    "furnace": ((), ("radiation_factor",)),
    "insulated": ((), ()),
    "symmetry": ((), ()),
    "convection": (("htc", "ambient"), ("emissivity", "wall", "radiation_factor")),
    "fixed": (("temperature",), ()),
    "flux": (("flux",), ()),
    "hearth": (("conductance",), ("hearth_temperature",)),
    "zone": (("ambient",), ("wall", "htc", "emissivity", "radiation_factor")),
}


class Face(_Record):
    """The condition on one named face; only the keys its condition uses are set.

    For ``convection``, ``emissivity`` defaults to 0 and ``wall`` to the ambient schedule.
    For ``zone``, ``htc`` and ``emissivity`` default to the furnace's and ``wall`` to the
    zone's ``ambient``; for ``hearth``, ``hearth_temperature`` defaults to the furnace gas.
    """

    condition: Annotated[Condition, _one_of(Condition)] = Field(
        description="the condition: " + ", ".join(repr(c) for c in get_args(Condition)),
        examples=['"insulated"'],
    )
    htc: _Htc | None = Field(
        None, description="the heat transfer coefficient in W/(m2 K), >= 0", examples=["10"]
    )
    ambient: _TemperatureSchedule | None = Field(
        None,
        description="the ambient temperature in C, a number or [[time_s, temperature_C], ...]",
        examples=["20"],
    )
    emissivity: _Fraction | None = Field(
        None, description="the surface emissivity, between 0 and 1", examples=["0.8"]
    )
    wall: _TemperatureSchedule | None = Field(
        None,
        description="the temperature in C of the surroundings seen by radiation",
        examples=["20"],
    )
    temperature: _TemperatureSchedule | None = Field(
        None,
        description="the face temperature in C, a number or [[time_s, temperature_C], ...]",
        examples=["100"],
    )
    flux: _FluxSchedule | None = Field(
        None,
        description="the heat flux in W/m2 into the part, a number or [[time_s, flux], ...]",
        examples=["5000"],
    )
    radiation_factor: _Fraction | None = Field(
        None,
        description="the share of the radiation the face receives, 0 (shielded) to 1 (open), "
        "multiplying the emissivity",
        examples=["0.5"],
    )
    conductance: _Htc | None = Field(
        None,
        description="the contact conductance to the hearth in W/(m2 K), >= 0 (0: insulated)",
        examples=["200"],
    )
    hearth_temperature: _TemperatureSchedule | None = Field(
        None,
        description="the hearth temperature in C (default: the furnace gas temperature)",
        examples=["600"],
    )

    @model_validator(mode="before")
    @classmethod
    def _keys_fit_condition(cls, data: Any) -> Any:
        if not isinstance(data, dict):
            return data
        condition = data.get("condition")
        if not isinstance(condition, str) or condition not in _FACE_KEYS:
            return data  # a bad condition is reported by the field check
        if any(key not in cls.model_fields for key in data):
            return data  # an unknown key is reported by extra="forbid", with a suggestion
        required, optional = _FACE_KEYS[condition]
        for key, value in data.items():
            if key == "condition" or value is None or key in required + optional:
                continue
            users = [c for c, (req, opt) in _FACE_KEYS.items() if key in req + opt]
            raise _Bad(
                f"{key!r} does not apply to condition {condition!r}; "
                f"it belongs to condition {' or '.join(repr(u) for u in users)}",
                fix=f'remove {key}, or set condition = "{users[0]}"',
                at=(key,),
            )
        for key in required:
            if data.get(key) is None:
                raise _Bad(
                    f"missing; condition {condition!r} needs {' and '.join(required)}",
                    fix=_add_fix(key, cls.model_fields[key], key),
                    at=(key,),
                )
        if condition == "convection":
            data = dict(data)
            if data.get("emissivity") is None:
                data["emissivity"] = 0.0
            if data.get("wall") is None:
                data["wall"] = data["ambient"]
        return data


_INITIAL_KEYS = ("temperature", "from_run", "from_file")


class Initial(_Record):
    """The starting state: a uniform temperature, or a field saved by an earlier run or in a
    VTK file (exactly one of the three)."""

    temperature: _Temperature | None = Field(
        None, description="the uniform starting temperature of the part in C", examples=["20"]
    )
    from_run: _Text | None = Field(
        None,
        description="the results folder of an earlier run whose final field is the start, "
        "relative to the case file",
        examples=['"heatup_results"'],
    )
    from_file: _Text | None = Field(
        None,
        description="a VTK file (.vtu, .vtk or .pvd) with the starting field as point data, "
        "relative to the case file",
        examples=['"start.vtu"'],
    )
    field: _Text = Field(
        "temperature_C",
        description="the point-data name of the temperature (C) in the VTK file",
        examples=['"temperature_C"'],
    )

    @model_validator(mode="after")
    def _one_source(self) -> Initial:
        given = [key for key in _INITIAL_KEYS if getattr(self, key) is not None]
        if not given:
            raise _Bad(
                "missing",
                fix='add temperature = 20 (the uniform starting temperature in C), or '
                'from_run = "folder" (the final field of an earlier run)',
                at=("temperature",),
            )
        if len(given) > 1:
            raise _Bad(
                f"give one starting state, got {' and '.join(given)}",
                fix=f"keep one of {', '.join(given)}",
                at=(given[1],),
            )
        return self


class Target(_Record):
    """The temperature every point must reach, and how long to go on after that."""

    temperature: _Temperature = Field(
        description="the temperature in C every point of the part must reach", examples=["830"]
    )
    hold: _TimeOrZero = Field(
        0.0,
        description="the time in s to keep running after every point reached the target, >= 0",
        examples=["600"],
    )


def _face_list(value: Any) -> tuple[str, ...]:
    """A non-empty list of face names."""
    if isinstance(value, str):
        value = [value]
    if not isinstance(value, list | tuple) or not value:
        raise _Bad(f"expected a list of face names, got {_show(value)}")
    for i, name in enumerate(value):
        if not isinstance(name, str) or not name.strip():
            raise _Bad(f"expected a face name, got {_show(name)}", at=(i,))
    return tuple(value)


class Refinement(_Record):
    """Finer elements near some faces."""

    faces: Annotated[tuple[str, ...], BeforeValidator(_face_list)] = Field(
        description="the faces to refine near, e.g. [\"root\"]", examples=['["root"]']
    )
    size: _Length = Field(description="the element size at those faces in m", examples=["0.001"])
    distance: _Length | None = Field(
        None,
        description="the distance in m over which the size grows back to mesh.size "
        "(default: 5 times the fine size)",
        examples=["0.01"],
    )


class MeshSpec(_Record):
    """Mesh controls."""

    size: _Length | None = Field(
        None, description="the element size in m, > 0", examples=["0.002"]
    )
    corner_size: _Length | None = Field(
        None,
        description="a finer element size in m at the corners of the part (where faces meet)",
        examples=["0.001"],
    )
    refine: list[Refinement] = Field(
        default_factory=list, description="finer elements near named faces: [[mesh.refine]]"
    )
    element: Annotated[ElementKind, _one_of(ElementKind)] = Field(
        "P1", description="the element: 'P1' (linear) or 'P2' (quadratic)", examples=['"P1"']
    )


class Probe(_Record):
    """A named point whose temperature is recorded."""

    name: Annotated[str, BeforeValidator(_probe_name)] = Field(
        description="the probe name (letters, digits, _ and -)", examples=['"core"']
    )
    point: Annotated[tuple[float, ...], BeforeValidator(_point)] = Field(
        description="the coordinates in m: [x, y], or [x, y, z] for the solid model",
        examples=["[0.0, 0.005]"],
    )


class SolverSpec(_Record):
    """Time stepping controls."""

    end_time: _Time | None = Field(
        None, description="the time in s to stop at, > 0", examples=["7200"]
    )
    tolerance: Annotated[float, BeforeValidator(_tolerance)] = Field(
        2e-5,
        description="the local error allowed per step as a fraction of the temperature span, "
        "in (0, 0.1]",
        examples=["2e-5"],
    )
    max_step: _Time | None = Field(
        None, description="the largest time step in s, > 0", examples=["60"]
    )
    first_step: _Time | None = Field(
        None, description="the first time step in s, > 0", examples=["1"]
    )
    fixed_step: _Time | None = Field(
        None,
        description="a constant time step in s with no error control (for accuracy studies)",
        examples=["10"],
    )


class OutputSpec(_Record):
    """What a run saves besides summary.json and history.csv."""

    interval: _Time | None = Field(
        None,
        description="save a field frame every this many seconds of simulated time "
        "(frames are always saved at the target crossing and at the end)",
        examples=["600"],
    )
    fields: StrictBool = Field(True, description="write VTK field frames", examples=["true"])
    pictures: StrictBool = Field(True, description="write PNG renders and plots", examples=["true"])
    report: StrictBool = Field(True, description="write report.html", examples=["true"])


class Case(_Record):
    """A whole case, checked: every number in range, every table in order."""

    title: _Text = Field("", description="the case title", examples=['"Slab heated"'])
    part: Part = Field(description="the part")
    material: Material = Field(description="the material")
    furnace: Furnace = Field(description="the furnace")
    faces: dict[str, Face] = Field(
        default_factory=dict, description="face conditions, one [faces.NAME] table per face"
    )
    initial: Initial = Field(description="the starting state")
    target: Target | None = Field(None, description="the target temperature")
    mesh: MeshSpec = Field(default_factory=MeshSpec, description="mesh controls")
    probes: list[Probe] = Field(
        default_factory=list, description="probe points, one [[probes]] table each"
    )
    solver: SolverSpec = Field(default_factory=SolverSpec, description="time stepping controls")
    output: OutputSpec = Field(default_factory=lambda: OutputSpec(), description="what to save")
    _base_dir: Path | None = PrivateAttr(default=None)

    @property
    def base_dir(self) -> Path:
        """Folder that relative file paths in the case are taken from (the case file's)."""
        return self._base_dir or Path.cwd()

    @model_validator(mode="after")
    def _parts_agree(self) -> Case:
        if (
            self.target is not None
            and self.initial.temperature is not None
            and self.target.temperature == self.initial.temperature
        ):
            raise _Bad(
                f"target equals the initial temperature ({_num(self.target.temperature)} C); "
                "nothing to heat or cool",
                fix="set target.temperature above initial.temperature to heat, below it to cool",
                at=("target", "temperature"),
            )
        dim = 3 if self.part.model == "solid" else 2
        first_use: dict[str, int] = {}
        for i, probe in enumerate(self.probes):
            if len(probe.point) != dim:
                axes = "[x, y, z]" if dim == 3 else "[x, y]"
                raise _Bad(
                    f"the {self.part.model} model needs {dim} coordinates {axes}, "
                    f"got {len(probe.point)}: {_show(list(probe.point))}",
                    fix=f"give point = {axes} in m",
                    at=("probes", i, "point"),
                )
            if probe.name in first_use:
                raise _Bad(
                    f"duplicate probe name {probe.name!r} (also probes[{first_use[probe.name]}])",
                    fix="give each probe its own name",
                    at=("probes", i, "name"),
                )
            first_use[probe.name] = i
        return self


# --- places, keys and messages -------------------------------------------------------------


def _bare(tp: Any) -> Any:
    """Strip ``Annotated`` and ``| None`` from a type."""
    while True:
        origin = get_origin(tp)
        if origin is Annotated:
            tp = get_args(tp)[0]
        elif origin in (Union, types.UnionType):
            args = [a for a in get_args(tp) if a is not type(None)]
            if len(args) != 1:
                return tp
            tp = args[0]
        else:
            return tp


def _is_record(tp: Any) -> bool:
    return isinstance(tp, type) and issubclass(tp, BaseModel)


def _walk(loc: tuple[Any, ...], root: Any = None) -> tuple[str | None, FieldInfo | None, Any]:
    """Follow ``loc`` through the schema from `root` (default `Case`): the last field passed,
    its info, the type reached."""
    tp: Any = Case if root is None else root
    name: str | None = None
    info: FieldInfo | None = None
    for step in loc:
        tp = _bare(tp)
        origin = get_origin(tp)
        if _is_record(tp) and isinstance(step, str) and step in tp.model_fields:
            name, info = step, tp.model_fields[step]
            tp = info.annotation
        elif origin is dict:
            tp = get_args(tp)[1]
        elif origin in (list, tuple) and get_args(tp):
            tp = get_args(tp)[0]
        else:
            tp = None
    return name, info, _bare(tp)


def _dotted(loc: tuple[Any, ...]) -> str:
    """``('faces', 'xmin', 'htc')`` -> ``faces.xmin.htc``; ``('probes', 1)`` -> ``probes[1]``."""
    out = ""
    for step in loc:
        if isinstance(step, int) and not isinstance(step, bool):
            out += f"[{step}]"
            continue
        key = str(step)
        if not re.fullmatch(r"[A-Za-z0-9_-]+", key):
            key = json.dumps(key)
        out += f".{key}" if out else key
    return out


def _keys_of(record: type[BaseModel], prefix: str, out: dict[str, tuple[str, ...]]) -> None:
    out[prefix] = tuple(record.model_fields)
    for name, info in record.model_fields.items():
        tp = _bare(info.annotation)
        place = f"{prefix}.{name}" if prefix else name
        if _is_record(tp):
            _keys_of(tp, place, out)
        elif get_origin(tp) is dict and _is_record(get_args(tp)[1]):
            _keys_of(get_args(tp)[1], f"{place}.NAME", out)
        elif get_origin(tp) is list and _is_record(get_args(tp)[0]):
            _keys_of(get_args(tp)[0], place, out)


CASE_KEYS: dict[str, tuple[str, ...]] = {}
"""Valid keys per table: ``""`` the top level, ``"faces.NAME"`` any face, ``"probes"`` a probe."""
_keys_of(Case, "", CASE_KEYS)


def _add_fix(name: str, info: FieldInfo | None, where: str) -> str:
    """How to add a missing key or table."""
    tp = _bare(info.annotation) if info is not None else None
    if _is_record(tp):
        needed = [key for key, field in tp.model_fields.items() if field.is_required()]
        return f"add a [{where}] table with {', '.join(needed)}"
    if info is None:
        return f"add {name}"
    example = info.examples[0] if info.examples else "..."
    return f"add {name} = {example} ({info.description})"


def _give_fix(info: FieldInfo | None) -> str:
    if info is not None and info.description:
        return f"give {info.description}"
    return "see the case file format in the femheat.case module documentation"


def _one_line(where: str, problem: str, fix: str) -> CaseError:
    return CaseError(where.replace("\n", " "), problem.replace("\n", " "), fix.replace("\n", " "))


def _explain(exc: ValidationError, root: Any) -> tuple[tuple[Any, ...], str, str]:
    """The first problem found below `root`: (place, problem, fix); unknown keys come first."""
    errors = exc.errors(include_url=False)
    first = next((e for e in errors if e["type"] == "extra_forbidden"), errors[0])
    loc = tuple(first["loc"])
    kind = first["type"]
    value = first.get("input")
    bad = (first.get("ctx") or {}).get("error")
    if isinstance(bad, _Bad):
        loc += bad.at
        _, info, _ = _walk(loc, root)
        return loc, bad.problem, bad.fix or _give_fix(info)
    if kind == "invalid_key" or (kind == "string_type" and loc[-1:] == ("[key]",)):
        loc = loc[:-2] if loc[-1:] == ("[key]",) else loc[:-1]
        return (
            loc,
            f"keys must be text, got {_show(value)}",
            "use a text key (a TOML bare or quoted key)",
        )
    where = _dotted(loc)
    name, info, tp = _walk(loc, root)
    if kind == "extra_forbidden":
        _, _, parent = _walk(loc[:-1], root)
        valid = list(parent.model_fields) if _is_record(parent) else []
        close = get_close_matches(str(loc[-1]), valid, n=1)
        hint = f"did you mean {close[0]!r}?" if close else "remove it or correct the spelling;"
        return loc, "unknown key", f"{hint} valid keys here: {', '.join(valid)}"
    if kind == "missing":
        return loc, "missing", _add_fix(str(loc[-1]), info, where)
    if kind in ("model_type", "model_attributes_type", "dict_type"):
        if _is_record(tp) and loc and isinstance(loc[-1], int):
            fix = f"write each entry as a [[{_dotted(loc[:-1])}]] table with keys "
            fix += ", ".join(tp.model_fields)
        elif _is_record(tp):
            fix = f"write [{where}] as a table with keys {', '.join(tp.model_fields)}"
        else:
            fix = f"write one [{where}.NAME] table per entry"
        return loc, f"expected a table, got {_show(value)}", fix
    if kind in ("list_type", "tuple_type"):
        return (
            loc,
            f"expected a list, got {_show(value)}",
            f"write one [[{where}]] table (double brackets) per entry"
            if get_origin(tp) is list
            else _give_fix(info),
        )
    message = str(first.get("msg", "invalid value"))
    return loc, f"{message}, got {_show(value)}", _give_fix(info)


def _from_validation_error(exc: ValidationError) -> CaseError:
    """The first problem found, as a CaseError naming its place; unknown keys come first."""
    loc, problem, fix = _explain(exc, Case)
    return _one_line(_dotted(loc) or "the top level", problem, fix)


# --- entry points --------------------------------------------------------------------------


def parse_case(data: dict, source: str = "<case>") -> Case:
    """Check an already parsed case table and build the :class:`Case`.

    Args:
        data: the table as read from TOML (nested dicts and lists).
        source: a name for the input (the file path), used for errors about the whole input.

    Returns:
        The validated, frozen case.

    Raises:
        CaseError: on any problem, naming the dotted place, the bad value and a fix.
    """
    if not isinstance(data, dict):
        raise CaseError(
            source,
            f"expected a table of sections, got {_show(data)}",
            "write the case as TOML tables [part], [material], [furnace], [initial]",
        )
    if not data:
        raise CaseError(
            source,
            "the case is empty",
            "write at least the tables [part], [material], [furnace] and [initial]; "
            "see the example in the femheat.case module documentation",
        )
    try:
        return Case.model_validate(data)
    except ValidationError as exc:
        try:
            error = _from_validation_error(exc)
        except Exception:  # never let a bug in the message hide the problem
            first = exc.errors(include_url=False)[0]
            error = _one_line(
                source,
                f"{_dotted(tuple(first['loc']))}: {first.get('msg')}",
                "see the case file format in the femheat.case module documentation",
            )
    except Exception as exc:  # last line of defence: the case edge raises CaseError only
        error = _one_line(
            source,
            f"could not read the case ({type(exc).__name__}: {exc})",
            "see the case file format in the femheat.case module documentation",
        )
    raise error from None


_AT = re.compile(
    r"^(?P<msg>.*?)\s*\(at (?:line (?P<line>\d+), column (?P<col>\d+)|end of document)\)$"
)


def _syntax_error(source: str, exc: tomllib.TOMLDecodeError) -> CaseError:
    text = str(exc).replace("\n", " ")
    match = _AT.match(text)
    where, near = source, "that line"
    if match:
        text = match["msg"]
        if match["line"]:
            where += f" line {match['line']}, column {match['col']}"
        else:
            where, near = f"{source} at the end", "the end of the file"
    return _one_line(where, text, f"check the TOML syntax near {near}")


def load_case(path: str | os.PathLike) -> Case:
    """Read and check a TOML case file.

    Args:
        path: the case file.

    Returns:
        The validated, frozen case.

    Raises:
        CaseError: if the file is missing, unreadable, not TOML, or describes a bad case.
    """
    try:
        source = os.fspath(path)
    except TypeError:
        raise CaseError("", f"expected a file path, got {_show(path)}", "pass a path") from None
    try:
        raw = Path(source).read_bytes()
    except FileNotFoundError:
        raise CaseError(
            source, "no such file", f"check the path (relative to {Path.cwd()})"
        ) from None
    except IsADirectoryError:
        raise CaseError(source, "is a directory", "give the path of a .toml case file") from None
    except OSError as exc:
        raise _one_line(
            source,
            f"cannot read the file ({exc.strerror or exc})",
            "check that the file exists and that you may read it",
        ) from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise CaseError(
            source,
            f"not UTF-8 text (byte {raw[exc.start]:#04x} at offset {exc.start})",
            "save the case file as UTF-8 text",
        ) from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise _syntax_error(source, exc) from None
    case = parse_case(data, source=source)
    case._base_dir = Path(source).resolve().parent
    return case
