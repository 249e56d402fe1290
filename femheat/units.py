"""Quantities with units in the case file, and results printed in US customary units.

Every number in a case file may be written as text with a unit, read with pint:
``"25 mm"``, ``"1650 degF"``, ``"2 h"``, ``"45 W/m/K"``, ``"30 Btu/(h*ft**2*degF)"``. A bare
number keeps the case file's base units: SI, temperatures in C, times in s. Each field has a
*kind* (length, temperature, time, conductivity, ...); :func:`to_si` converts text to the
kind's base unit and raises :class:`UnitError` when the unit measures something else.

Rules beyond plain pint:

* ``C`` and ``F`` on their own mean degrees Celsius and Fahrenheit (not coulomb and farad);
  ``°C``, ``degC``, ``celsius`` and the Fahrenheit spellings work too.
* In a temperature field the value is a temperature on that scale (``"1650 degF"`` is
  898.9 C). In every other field a temperature unit is a temperature *difference*:
  ``"400 degF/h"`` is 222.2 K/h and ``"1 Btu/(lb*degF)"`` is 4186.8 J/(kg K).
* ``Btu`` is the International Table Btu (1055.05585262 J); ``m2`` and ``m3`` mean m**2, m**3.

The pint registry is built on first use (about 0.7 s).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from functools import lru_cache

__all__ = [
    "hours_minutes",
    "KINDS",
    "Kind",
    "UnitError",
    "to_si",
    "convert",
    "c_to_f",
    "show_temperature",
    "show_difference",
    "show_length",
    "show_rate",
]


@dataclass(frozen=True)
class Kind:
    """What a field measures.

    Args:
        name: the key, e.g. ``"htc"``.
        noun: how a message names it, e.g. ``"a heat transfer coefficient"``.
        unit: the base unit as pint reads it (bare numbers are in this unit).
        shown: the base unit as people write it, e.g. ``"W/(m2 K)"``.
        examples: texts with units that fit, for messages.
    """

    name: str
    noun: str
    unit: str
    shown: str
    examples: tuple[str, ...]


KINDS: dict[str, Kind] = {
    k.name: k
    for k in (
        Kind("length", "a length", "m", "m", ('"25 mm"', '"1.5 in"')),
        Kind("temperature", "a temperature", "degC", "C", ('"850 C"', '"1650 degF"')),
        Kind("time", "a time", "s", "s", ('"2 h"', '"30 min"')),
        Kind(
            "conductivity",
            "a thermal conductivity",
            "W/(m*K)",
            "W/(m K)",
            ('"45 W/m/K"', '"26 Btu/(h*ft*degF)"'),
        ),
        Kind(
            "specific_heat",
            "a specific heat",
            "J/(kg*K)",
            "J/(kg K)",
            ('"460 J/kg/K"', '"0.11 Btu/(lb*degF)"'),
        ),
        Kind("density", "a density", "kg/m**3", "kg/m3", ('"7850 kg/m3"', '"490 lb/ft3"')),
        Kind(
            "htc",
            "a heat transfer coefficient",
            "W/(m**2*K)",
            "W/(m2 K)",
            ('"30 W/m2/K"', '"5 Btu/(h*ft**2*degF)"'),
        ),
        Kind("flux", "a heat flux", "W/m**2", "W/m2", ('"5 kW/m2"', '"1500 Btu/(h*ft**2)"')),
        Kind("rate", "a heating or cooling rate", "K/s", "K/s", ('"100 degC/h"', '"400 degF/h"')),
        Kind("fraction", "a plain number", "", "no unit", ("0.8", '"80 %"')),
    )
}
"""The kinds of case-file fields, by name."""

# names for what a wrong unit measures, by pint dimensionality
_MEASURES: dict[frozenset, str] = {}


def _measures() -> dict[frozenset, str]:
    if not _MEASURES:
        reg = _registry()
        names = {
            "m**2": "an area",
            "m**3": "a volume",
            "kg": "a mass",
            "J": "an energy",
            "W": "a power",
            "Pa": "a pressure",
            "m/s": "a speed",
            "1/s": "a frequency",
            "A*s": "an electric charge",
            "A": "an electric current",
            "V": "a voltage",
            "J/kg": "an energy per mass",
            "J/K": "a heat capacity",
            "J/(m**3*K)": "a volumetric heat capacity",
            "m**2/s": "a diffusivity",
            "W/K": "a thermal conductance",
            "K*m": "a temperature times a length",
            "W/m": "a heat flow per length",
            "J/m**2": "an energy per area",
            "K/m": "a temperature gradient",
        }
        for kind in KINDS.values():
            names[kind.unit or "dimensionless"] = kind.noun
        for unit, noun in names.items():
            dim = reg.Quantity(1.0, _delta(unit)).dimensionality
            _MEASURES.setdefault(frozenset(dict(dim).items()), noun)
    return _MEASURES


class UnitError(ValueError):
    """Text that is not a quantity of the expected kind.

    Attributes:
        problem: what is wrong, with the text.
        fix: what to write instead.
    """

    def __init__(self, problem: str, fix: str):
        super().__init__(f"{problem}; fix: {fix}")
        self.problem = problem
        self.fix = fix


@lru_cache(maxsize=1)
def _registry():
    import pint

    return pint.UnitRegistry()


_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$", re.S)
_CELSIUS = r"(?:°C|℃|degC|deg_C|degreeC|degree_Celsius|degrees_Celsius|celsius|Celsius|C)"
_FAHRENHEIT = (
    r"(?:°F|℉|degF|deg_F|degreeF|degree_Fahrenheit|degrees_Fahrenheit|fahrenheit|Fahrenheit|F)"
)
_EDGE_L = r"(?<![\w°])"
_EDGE_R = r"(?![\w])"


def _standard(unit: str) -> str:
    """Unit text with our spellings made pint's: C, F, Btu, m2, ^."""
    text = unit.replace("^", "**").replace("·", "*").replace("%", "percent")
    text = re.sub(_EDGE_L + r"(?:Btu|BTU|btu)" + _EDGE_R, "Btu_it", text)
    # a power written by juxtaposition: m2, ft3, in2
    text = re.sub(r"(?<![\w])([A-Za-zµ]+)([23])" + _EDGE_R, r"\1**\2", text)
    text = re.sub(_EDGE_L + _CELSIUS + _EDGE_R, "degC", text)
    text = re.sub(_EDGE_L + _FAHRENHEIT + _EDGE_R, "degF", text)
    return text


def _delta(unit: str) -> str:
    """Temperature scales as differences (for every kind but temperature)."""
    text = re.sub(r"(?<![\w])degC(?![\w])", "delta_degC", unit)
    return re.sub(r"(?<![\w])degF(?![\w])", "delta_degF", text)


def _what(dimensionality) -> str:
    key = frozenset(dict(dimensionality).items())
    found = _measures().get(key)
    if found is not None:
        return found
    return f"a quantity in {dimensionality}"


def _hint(kind: Kind) -> str:
    base = "no unit" if not kind.unit else kind.shown
    examples = " or ".join(kind.examples)
    return f"give {kind.noun}, e.g. {examples}; a bare number is in {base}"


@lru_cache(maxsize=4096)
def to_si(text: str, kind: str) -> float:
    """Convert text with a unit to the kind's base unit.

    Args:
        text: a number followed by a unit, e.g. ``"25 mm"``.
        kind: a key of :data:`KINDS`.

    Returns:
        The value in the base unit (m, C, s, W/(m K), J/(kg K), kg/m3, W/(m2 K), W/m2, K/s).

    Raises:
        UnitError: the text is not a number with a unit of this kind.
    """
    spec = KINDS[kind]
    if not isinstance(text, str):
        raise UnitError(f"expected text like {spec.examples[0]}, got {text!r}", _hint(spec))
    shown = text if len(text) <= 40 else text[:37] + "..."
    match = _NUMBER.match(text)
    if not match:
        raise UnitError(
            f"{shown!r} does not start with a number",
            f"write the number first, then the unit; {_hint(spec)}",
        )
    value = float(match.group(1))
    unit = match.group(2)
    if not math.isfinite(value):
        raise UnitError(f"{shown!r} is not a finite number", _hint(spec))
    if not unit:
        if not spec.unit:
            return value
        raise UnitError(
            f"{shown!r} has no unit",
            f"write {match.group(1)} without quotes for {spec.shown}, or add a unit, "
            f"e.g. {spec.examples[0]}",
        )
    unit = _standard(unit)
    if kind != "temperature":
        unit = _delta(unit)
    elif "delta_" in unit:
        raise UnitError(
            f"{shown!r} is a temperature difference, expected a temperature",
            'give a temperature on a scale, e.g. "850 C" or "1650 degF"',
        )
    try:
        quantity = _registry().Quantity(value, unit)
    except Exception as exc:  # pint raises many kinds (undefined unit, syntax, offset maths)
        bad = getattr(exc, "unit_names", None) or getattr(exc, "args", [""])[:1]
        name = bad[0] if isinstance(bad, list | tuple) and bad else bad
        detail = f"unknown unit {name!r} in {shown!r}" if name else f"cannot read {shown!r}"
        if type(exc).__name__ != "UndefinedUnitError":
            detail = f"cannot read the unit of {shown!r}"
        raise UnitError(detail, _hint(spec)) from None
    target = spec.unit or "dimensionless"
    reg = _registry()
    want = reg.Quantity(1.0, target).dimensionality
    if quantity.dimensionality != want:
        raise UnitError(
            f"{shown!r} is {_what(quantity.dimensionality)}, expected {spec.noun}", _hint(spec)
        )
    try:
        out = float(quantity.to(target).magnitude)
    except Exception:
        raise UnitError(f"cannot convert {shown!r} to {spec.shown}", _hint(spec)) from None
    if not math.isfinite(out):
        raise UnitError(f"{shown!r} is too large", _hint(spec))
    return out


def convert(value: float, unit: str, to: str) -> float:
    """Convert a number between units pint knows (offset scales allowed), e.g. C to degF."""
    reg = _registry()
    return float(reg.Quantity(value, _standard(unit)).to(_standard(to)).magnitude)


def c_to_f(celsius):
    """Temperature in F from C (exact: F = 1.8 C + 32)."""
    return 1.8 * celsius + 32.0


def show_temperature(celsius: float, system: str = "si", digits: int | None = None) -> str:
    """``"880 C"``, or ``"880 C (1616 F)"`` when `system` is ``"us"``.

    Args:
        digits: decimals to show; None shows up to 6 significant digits.
    """

    def fmt(x: float) -> str:
        return f"{x:.6g}" if digits is None else f"{x:.{digits}f}"

    text = f"{fmt(celsius)} C"
    if system == "us":
        text += f" ({fmt(c_to_f(celsius))} F)"
    return text


def show_difference(kelvin: float, system: str = "si", digits: int = 1) -> str:
    """A temperature difference: ``"161.0 K"``, or ``"161.0 K (289.8 F)"`` for ``"us"``."""
    text = f"{kelvin:.{digits}f} K"
    if system == "us":
        text += f" ({1.8 * kelvin:.{digits}f} F)"
    return text


def show_rate(kelvin_per_hour: float, system: str = "si", digits: int = 0) -> str:
    """A heating rate: ``"100 C/h"``, or ``"100 C/h (180 F/h)"`` for ``"us"``."""
    text = f"{kelvin_per_hour:.{digits}f} C/h"
    if system == "us":
        text += f" ({1.8 * kelvin_per_hour:.{digits}f} F/h)"
    return text


def show_length(metres, system: str = "si") -> str:
    """Coordinates or a length in mm, and in inches too for ``"us"``: ``"(0.0, 50.0) mm"``."""
    values = [float(v) for v in (metres if hasattr(metres, "__len__") else [metres])]
    mm = ", ".join(f"{1000 * v:.1f}" for v in values)
    many = hasattr(metres, "__len__")
    text = f"({mm}) mm" if many else f"{mm} mm"
    if system == "us":
        inch = ", ".join(f"{v / 0.0254:.2f}" for v in values)
        text += f" = ({inch}) in" if many else f" ({inch} in)"
    return text


def hours_minutes(seconds: float | None, missing: str | None = None) -> str | None:
    """Seconds as "H:MM" (hours and minutes, to the nearest minute); `missing` for None,
    NaN or infinity."""
    if seconds is None or not math.isfinite(float(seconds)):
        return missing
    minutes = int(round(float(seconds) / 60.0))
    return f"{minutes // 60}:{minutes % 60:02d}"
