"""The plan file: a base case and the limits a designed furnace program must keep.

A plan is a TOML file::

    title = "Post-weld heat treatment of a thick forging (invented example)"
    [plan]
    case = "forging.toml"          # the part, material, faces, starting temperature, furnace
                                   # htc and emissivity; its furnace temperature and target are
                                   # replaced by the designed program and the soak
    start = "20 C"                 # furnace temperature at loading (default: the part's
                                   # starting temperature)
    max_difference = "83 degC"     # hottest minus coldest point of the part, at every moment

    [plan.heating_limit]           # the part's heating rate above a temperature; the keys of
    heating = "222 degC/h"         # a furnace program's limit (femheat.program): rate *
    min_rate = "56 degC/h"         # reference_thickness / thickness, at least min_rate, at
    above = "425 C"                # most max_rate (default: the rate), above `above`
    thickness = "300 mm"           # required here: the governing thickness of the part

    [plan.soak]
    minimum = "595 C"              # every point of the part at least this ...
    maximum = "650 C"              # ... and none above this
    hold = "4.5 h"                 # for this long
    # setpoint = "640 C"           # furnace setpoint while soaking (default: maximum)

    [plan.furnace]                 # what the furnace can do (bounds of the search)
    fastest = "250 degC/h"         # fastest ramp (default 250 degC/h)
    slowest = "5 degC/h"           # slowest ramp tried (default: a tenth of the heating limit)
    longest_hold = "8 h"           # longest equalising hold (default: the time a ramp at the
                                   # heating limit takes from the start to `above`)

    [plan.search]
    runs = 40                      # runs the search may make (default 40), besides up to
                                   # ten reference and check runs
    margin = 0.02                  # aim at 98 % of each limit (default 0.02)
    max_step = "5 min"             # longest time step of each run (default 300 s)

``heating_limit`` takes every key of a program's ``limit``; ``cooling`` is accepted and not
used (the cooling after the soak is not designed). The furnace's ``wall_temperature`` of the
base case is dropped (the walls follow the program); faces with their own surroundings keep
them. Numbers are SI (C, K, s, K/s) or text with a unit, as in a case file. A temperature difference
is a number in K or text such as ``"83 degC"`` or ``"150 degF"`` (a difference, not a scale).
The rules the example shows are the form of pressure-vessel post-weld heat-treatment rules;
check every value against the code in force.

:func:`load_plan` reads a file and :func:`parse_plan` checks a parsed table; both return a
frozen :class:`Plan` (with the base case loaded and checked) or raise a one-line
`femheat.errors.CaseError` naming the place in the plan file (``plan.soak.hold``).
"""

from __future__ import annotations

import math
import os
import tomllib
from dataclasses import dataclass
from difflib import get_close_matches
from functools import partial
from pathlib import Path
from typing import Annotated, Any

from pydantic import BaseModel, BeforeValidator, ConfigDict, Field, ValidationError

from ..case import Case, RateLimit, load_case
from ..errors import CaseError
from ..program import allowed_rate
from ..units import UnitError, to_si

__all__ = [
    "FurnaceBounds",
    "Plan",
    "PlanFile",
    "PlanSpec",
    "SearchSpec",
    "SoakSpec",
    "load_plan",
    "parse_plan",
]

_HOUR = 3600.0
DEFAULT_FASTEST = 250.0 / _HOUR  # K/s; a typical furnace ramp capability (common practice,
# no source); the plan file should state its own furnace


class _Bad(ValueError):
    """A value failed a check: the problem, the fix, and the place below the field."""

    def __init__(self, problem: str, fix: str | None = None, at: tuple = ()):
        super().__init__(problem)
        self.problem = problem
        self.fix = fix
        self.at = at


def _number(value: Any, kind: str) -> float:
    if isinstance(value, str):
        try:
            return to_si(value, kind)
        except UnitError as exc:
            raise _Bad(exc.problem, exc.fix) from None
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise _Bad(f"expected a number, got {value!r}")
    x = float(value)
    if not math.isfinite(x):
        raise _Bad(f"expected a finite number, got {value!r}")
    return x


def _positive(value: Any, kind: str) -> float:
    x = _number(value, kind)
    if not x > 0:
        raise _Bad(f"must be > 0, got {value!r}")
    return x


def _temperature(value: Any) -> float:
    x = _number(value, "temperature")
    if x <= -273.15:
        raise _Bad(
            f"{value!r} is at or below absolute zero",
            "give temperatures in degrees Celsius (not kelvin)",
        )
    return x


def _difference(value: Any) -> float:
    """A temperature difference in K: a number, or text such as "83 degC" or "150 degF"."""
    if isinstance(value, str):
        try:
            x = to_si(f"{value} / s", "rate")  # a difference per second reads degC as a step
        except UnitError:
            raise _Bad(
                f"{value!r} is not a temperature difference",
                'give a difference such as "83 degC", "150 degF" or a number in K',
            ) from None
    else:
        x = _number(value, "rate")
    if not x > 0:
        raise _Bad(f"must be > 0, got {value!r}")
    return x


def _margin(value: Any) -> float:
    x = _number(value, "fraction")
    if not 0 <= x < 0.5:
        raise _Bad(f"must be at least 0 and below 0.5, got {value!r}")
    return x


def _runs(value: Any) -> int:
    if isinstance(value, bool) or not isinstance(value, int) or not 4 <= value <= 1000:
        raise _Bad(f"expected a whole number from 4 to 1000, got {value!r}")
    return int(value)


def _text(value: Any) -> str:
    if not isinstance(value, str) or not value.strip():
        raise _Bad(f"expected text in quotes, got {value!r}")
    return value


_Temperature = Annotated[float, BeforeValidator(_temperature)]
_Time = Annotated[float, BeforeValidator(partial(_positive, kind="time"))]
_Rate = Annotated[float, BeforeValidator(partial(_positive, kind="rate"))]
_Difference = Annotated[float, BeforeValidator(_difference)]
_Margin = Annotated[float, BeforeValidator(_margin)]
_Runs = Annotated[int, BeforeValidator(_runs)]
_Text = Annotated[str, BeforeValidator(_text)]


class _Record(BaseModel):
    model_config = ConfigDict(frozen=True, extra="forbid")


class SoakSpec(_Record):
    """The soak: every point between `minimum` and `maximum` for `hold` seconds."""

    minimum: _Temperature = Field(
        description="the temperature every point of the part must reach, e.g. '595 C'",
        examples=['"595 C"'],
    )
    maximum: _Temperature = Field(
        description="the temperature no point may exceed, e.g. '650 C'", examples=['"650 C"']
    )
    hold: _Time = Field(
        description="the time every point must stay in the band, e.g. '2 h'", examples=['"2 h"']
    )
    setpoint: _Temperature | None = Field(
        None,
        description="the furnace setpoint while soaking, above minimum and at most maximum "
        "(default: maximum)",
        examples=['"640 C"'],
    )


class FurnaceBounds(_Record):
    """What the furnace can do: the bounds of the search."""

    fastest: _Rate = Field(
        DEFAULT_FASTEST,
        description="the fastest ramp the furnace can make, e.g. '250 degC/h'",
        examples=['"250 degC/h"'],
    )
    slowest: _Rate | None = Field(
        None,
        description="the slowest ramp to try (default: a tenth of the heating limit)",
        examples=['"5 degC/h"'],
    )
    longest_hold: _Time | None = Field(
        None,
        description="the longest equalising hold to try (default: the time a ramp at the "
        "heating limit takes from the start to the limit's temperature)",
        examples=['"8 h"'],
    )


class SearchSpec(_Record):
    """How hard to search and how close to the limits to go."""

    runs: _Runs = Field(40, description="the runs the search may make, 4 to 1000", examples=["40"])
    margin: _Margin = Field(
        0.02,
        description="the fraction of each limit kept in reserve, e.g. 0.02 (aim at 98 %)",
        examples=["0.02"],
    )
    max_step: _Time = Field(
        300.0,
        description="the longest time step of each run (rates are read at the steps), e.g. '5 min'",
        examples=['"5 min"'],
    )


class PlanSpec(_Record):
    """The ``[plan]`` table."""

    case: _Text = Field(
        description="the base case file, relative to the plan file", examples=['"part.toml"']
    )
    start: _Temperature | None = Field(
        None,
        description="the furnace temperature at loading (default: the part's starting temperature)",
        examples=['"20 C"'],
    )
    max_difference: _Difference = Field(
        description="the largest hottest-minus-coldest difference over the part, e.g. '83 degC'",
        examples=['"83 degC"'],
    )
    heating_limit: RateLimit = Field(
        description="the part's heating rate limit: heating, min_rate, above, thickness",
        examples=[
            '{heating = "222 degC/h", min_rate = "56 degC/h", above = "425 C", thickness = "50 mm"}'
        ],
    )
    soak: SoakSpec = Field(description="the soak band and time")
    furnace: FurnaceBounds = Field(
        default_factory=FurnaceBounds, description="what the furnace can do"
    )
    search: SearchSpec = Field(default_factory=SearchSpec, description="search settings")


class PlanFile(_Record):
    """A whole plan file."""

    title: str = Field("", description="free text", examples=['"PWHT of a nozzle forging"'])
    plan: PlanSpec = Field(description="the plan")


@dataclass(frozen=True)
class Plan:
    """A checked plan with its base case, and the numbers the search works with.

    Attributes:
        title: the plan's title (or the case's).
        spec: the ``[plan]`` table as read.
        case: the validated base case.
        table: the base case as a table (as TOML reads it), to be changed per run.
        base_dir: folder of the base case (its relative paths).
        source: the plan file name, for messages.
        start_c: furnace temperature at loading, C.
        limit_rate: the part's heating rate limit, K/s (from `program.allowed_rate`).
        above_c: the temperature above which the rate limit applies, C (None: everywhere).
        setpoint_c: furnace setpoint while soaking, C.
        fastest, slowest: bounds of the furnace ramp rates, K/s.
        longest_hold: bound of the equalising hold, s.
    """

    title: str
    spec: PlanSpec
    case: Case
    table: dict
    base_dir: Path
    source: str
    start_c: float
    limit_rate: float
    above_c: float | None
    setpoint_c: float
    fastest: float
    slowest: float
    longest_hold: float

    @property
    def max_difference(self) -> float:
        """The difference limit, K."""
        return self.spec.max_difference

    @property
    def soak(self) -> SoakSpec:
        return self.spec.soak

    @property
    def below_phase(self) -> bool:
        """Whether the program has a part below the rate limit's temperature (at least 5 K)."""
        return self.above_c is not None and self.above_c - self.start_c >= 5.0


def _per_hour(rate: float) -> str:
    return f"{rate * _HOUR:.4g} C/h"


def _field(loc: tuple) -> tuple[str, Any]:
    """The last field name along `loc` through the plan schema, and its FieldInfo."""
    model: Any = PlanFile
    name, info = "", None
    for key in loc:
        fields = getattr(model, "model_fields", None)
        if not isinstance(key, str) or fields is None or key not in fields:
            return name, info
        name, info = key, fields[key]
        tp = info.annotation
        args = [a for a in getattr(tp, "__args__", ()) if a is not type(None)]
        model = args[0] if args and not isinstance(tp, type) else tp
    return name, info


def _record_of(info) -> Any:
    """The record type of a field (None for a plain value)."""
    tp = None if info is None else info.annotation
    if not isinstance(tp, type):
        tp = next((a for a in getattr(tp, "__args__", ()) if a is not type(None)), None)
    return tp if isinstance(tp, type) and issubclass(tp, BaseModel) else None


def _place(loc: tuple) -> str:
    out = ""
    for key in loc:
        out += f"[{key}]" if isinstance(key, int) else (f".{key}" if out else str(key))
    return out


def _validated(data: dict, source: str) -> PlanFile:
    try:
        return PlanFile.model_validate(data)
    except ValidationError as exc:
        errors = exc.errors(include_url=False)
        first = next((e for e in errors if e["type"] == "extra_forbidden"), errors[0])
        loc = tuple(first["loc"])
        bad = (first.get("ctx") or {}).get("error")
        if bad is not None and hasattr(bad, "problem"):  # our checks and those of case.py
            loc += tuple(getattr(bad, "at", ()))
            _, info = _field(loc)
            fix = bad.fix or (f"give {info.description}" if info is not None else "")
            raise CaseError(_place(loc), bad.problem, fix) from None
        name, info = _field(loc)
        if first["type"] == "extra_forbidden":
            parent = _field(loc[:-1])[1]
            model = PlanFile if parent is None else parent.annotation
            model = next((a for a in getattr(model, "__args__", ()) if a is not type(None)), model)
            valid = list(getattr(model, "model_fields", {}))
            close = get_close_matches(str(loc[-1]), valid, n=1)
            hint = f"did you mean {close[0]!r}?" if close else "remove it or correct the spelling;"
            raise CaseError(
                _place(loc), "unknown key", f"{hint} valid keys here: {', '.join(valid)}"
            ) from None
        record = _record_of(info)
        if first["type"] == "missing":
            if record is not None:
                needed = [k for k, f in record.model_fields.items() if f.is_required()]
                fix = f"add a [{_place(loc)}] table with {', '.join(needed)}"
                raise CaseError(_place(loc), "missing", fix) from None
            example = info.examples[0] if info is not None and info.examples else "..."
            what = f" ({info.description})" if info is not None else ""
            raise CaseError(_place(loc), "missing", f"add {loc[-1]} = {example}{what}") from None
        if record is not None and first["type"] in ("model_type", "dict_type"):
            raise CaseError(
                _place(loc),
                f"expected a table, got {first.get('input')!r}",
                f"write [{_place(loc)}] as a table with keys {', '.join(record.model_fields)}",
            ) from None
        fix = f"give {info.description}" if info is not None else "see femheat.plan.spec"
        message = f"{first.get('msg', 'invalid value')}, got {first.get('input')!r}"
        raise CaseError(_place(loc) or source, message, fix) from None


def _base_case(spec: PlanSpec, plan_dir: Path) -> tuple[Case, dict, Path]:
    path = Path(spec.case)
    if not path.is_absolute():
        path = plan_dir / path
    if not path.is_file():
        raise CaseError("plan.case", f"no case file {str(path)!r}", "give the base case file")
    try:
        case = load_case(path)
    except CaseError as exc:
        raise CaseError(f"{path.name}: {exc.where}", exc.problem, exc.fix) from None
    with open(path, "rb") as f:
        table = tomllib.load(f)
    return case, table, path.resolve().parent


def parse_plan(data: dict, source: str = "<plan>", base_dir: str | Path | None = None) -> Plan:
    """Check a parsed plan table, load its base case and work out the search numbers.

    Args:
        data: the plan as read from TOML.
        source: a name for the input (the file path), for messages.
        base_dir: folder the case path is taken from (default: the working folder).

    Raises:
        CaseError: a bad value, a missing key, a base case that does not load, or limits that
            contradict each other (soak band, start, thickness, furnace bounds).
    """
    if not isinstance(data, dict) or not data:
        raise CaseError(source, "the plan is empty", "write a [plan] table; see femheat.plan.spec")
    pf = _validated(data, source)
    spec = pf.plan
    case, table, case_dir = _base_case(spec, Path(base_dir) if base_dir else Path.cwd())
    soak, limit, furnace = spec.soak, spec.heating_limit, spec.furnace
    if not soak.maximum > soak.minimum:
        raise CaseError(
            "plan.soak.maximum",
            f"{soak.maximum:g} C is not above the minimum {soak.minimum:g} C",
            "give a band: maximum above minimum",
        )
    setpoint = soak.setpoint if soak.setpoint is not None else soak.maximum
    if not soak.minimum < setpoint <= soak.maximum:
        raise CaseError(
            "plan.soak.setpoint",
            f"{setpoint:g} C is outside the band ({soak.minimum:g} C, {soak.maximum:g} C]",
            "give a setpoint above the minimum (the part only approaches it) and at most "
            "the maximum",
        )
    if limit.thickness is None:
        raise CaseError(
            "plan.heating_limit.thickness",
            "missing; the limit depends on the governing thickness",
            'add thickness = "50 mm" (a half-model shows half the real thickness)',
        )
    initial = case.initial.temperature
    start = spec.start if spec.start is not None else initial
    if start is None:
        raise CaseError(
            "plan.start",
            "missing; the base case starts from a field, not one temperature",
            'add start = "300 C", the furnace temperature at loading',
        )
    if start >= soak.minimum:
        raise CaseError(
            "plan.start",
            f"{start:g} C is not below the soak minimum {soak.minimum:g} C; nothing to plan",
            "give the furnace temperature at loading, below the soak",
        )
    if initial is not None and initial >= soak.minimum:
        raise CaseError(
            f"{spec.case}: initial.temperature",
            f"{initial:g} C is not below the soak minimum {soak.minimum:g} C",
            "plan the heating of a part that starts below the soak",
        )
    if limit.above is not None and limit.above >= soak.minimum:
        raise CaseError(
            "plan.heating_limit.above",
            f"{limit.above:g} C is not below the soak minimum {soak.minimum:g} C",
            "give the temperature above which the heating rate is limited, below the soak",
        )
    rate = allowed_rate(limit.heating, limit, limit.thickness)
    slowest = furnace.slowest if furnace.slowest is not None else rate / 10.0
    if not slowest < furnace.fastest:
        raise CaseError(
            "plan.furnace.slowest",
            f"{_per_hour(slowest)} is not below the fastest ramp {_per_hour(furnace.fastest)}",
            "give a slowest ramp below plan.furnace.fastest",
        )
    above = limit.above
    longest = furnace.longest_hold
    if longest is None:
        span = (above - start) if above is not None and above > start else 0.0
        longest = max(span / min(rate, furnace.fastest), 600.0)
    return Plan(
        title=pf.title or case.title,
        spec=spec,
        case=case,
        table=table,
        base_dir=case_dir,
        source=source,
        start_c=float(start),
        limit_rate=float(rate),
        above_c=None if above is None else float(above),
        setpoint_c=float(setpoint),
        fastest=float(furnace.fastest),
        slowest=float(slowest),
        longest_hold=float(longest),
    )


def load_plan(path: str | os.PathLike) -> Plan:
    """Read and check a plan file (TOML) and its base case.

    Raises:
        CaseError: missing or unreadable file, bad TOML, or a bad plan (see `parse_plan`).
    """
    source = os.fspath(path)
    try:
        text = Path(source).read_text(encoding="utf-8")
    except FileNotFoundError:
        raise CaseError(
            source, "no such file", f"check the path (relative to {Path.cwd()})"
        ) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise CaseError(source, f"cannot read the file ({exc})", "give a UTF-8 TOML file") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise CaseError(source, str(exc).replace("\n", " "), "check the TOML syntax") from None
    return parse_plan(data, source, Path(source).resolve().parent)
