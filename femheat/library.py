"""The material library: published temperature-dependent properties, each with its source.

Entries come from two places:

* Formulas of the Eurocodes, tabulated finely into :class:`~femheat.materials.Table` objects
  (knots placed until linear interpolation is within 0.05 % of the formula, with exact knots
  at the formula's breakpoints, e.g. the 5000 J/(kg K) peak of carbon steel at 735 C). The
  enthalpy integral is then exact for the table and within 0.1 % of the formula's.

  - carbon steel, EN 1993-1-2:2005, 3.4.1.2 (specific heat) and 3.4.1.3 (conductivity),
    density 7850 kg/m3 (3.2.2), 20 to 1200 C;
  - austenitic stainless steel, EN 1993-1-2:2005, Annex C (C.3.2 specific heat, C.3.3
    conductivity), density 7900 kg/m3 (EN 10088-1, 1.4301), 20 to 1200 C;
  - aluminium alloys, EN 1999-1-2:2007, 3.3.1 (both conductivity families), density 2700
    kg/m3, 0 to 500 C.

* Handbook tables in ``femheat/data/handbook_materials.toml`` (copper, a nickel alloy,
  titanium), each naming its book or data sheet and marked [memory] where recalled.

Density is constant in every entry (the sources give one value). :func:`find` looks an entry
up by key or alias (case, spaces and underscores do not matter; "aluminum" is "aluminium").
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass
from difflib import get_close_matches
from functools import lru_cache
from importlib import resources

import numpy as np

from .materials import Material, Table

__all__ = [
    "Entry",
    "entries",
    "find",
    "suggest",
    "tabulate",
    "en1993_carbon_steel_c",
    "en1993_carbon_steel_k",
    "en1993_stainless_c",
    "en1993_stainless_k",
    "en1999_aluminium_c",
    "en1999_aluminium_k",
    "listing_lines",
    "table_lines",
]

KELVIN = 273.15


@dataclass(frozen=True)
class Entry:
    """A published property set.

    Args:
        key: the name used in ``[material] name``.
        name: a longer description.
        source: the standard or handbook, edition and clause or table.
        valid_range: (low, high) in C: where the source states the data.
        density: kg/m3.
        conductivity: W/(m K) against C.
        specific_heat: J/(kg K) against C.
        aliases: other names that pick this entry.
        note: what the data do not cover.
    """

    key: str
    name: str
    source: str
    valid_range: tuple[float, float]
    density: float
    conductivity: Table
    specific_heat: Table
    aliases: tuple[str, ...] = ()
    note: str = ""

    def material(self) -> Material:
        """The entry as a :class:`~femheat.materials.Material` carrying its range and source."""
        return Material(
            self.density,
            self.conductivity,
            self.specific_heat,
            f"{self.key}: {self.name}",
            self.valid_range,
            self.source,
        )


# --- the published formulas (theta in C) ---------------------------------------------------


def en1993_carbon_steel_c(theta):
    """Specific heat of carbon steel, J/(kg K); EN 1993-1-2:2005, 3.4.1.2, eq. (3.2)."""
    th = np.asarray(theta, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        low = 425 + 7.73e-1 * th - 1.69e-3 * th**2 + 2.22e-6 * th**3
        rise = 666 + 13002 / (738 - th)
        fall = 545 + 17820 / (th - 731)
    return np.select([th < 600, th < 735, th < 900], [low, rise, fall], 650.0)


def en1993_carbon_steel_k(theta):
    """Thermal conductivity of carbon steel, W/(m K); EN 1993-1-2:2005, 3.4.1.3, eq. (3.3)."""
    th = np.asarray(theta, dtype=float)
    return np.where(th < 800, 54 - 3.33e-2 * th, 27.3)


def en1993_stainless_c(theta):
    """Specific heat of austenitic stainless steel, J/(kg K); EN 1993-1-2:2005, C.3.2."""
    th = np.asarray(theta, dtype=float)
    return 450 + 0.280 * th - 2.91e-4 * th**2 + 1.34e-7 * th**3


def en1993_stainless_k(theta):
    """Thermal conductivity of austenitic stainless steel, W/(m K); EN 1993-1-2:2005, C.3.3."""
    th = np.asarray(theta, dtype=float)
    return 14.6 + 1.27e-2 * th


def en1999_aluminium_c(theta):
    """Specific heat of aluminium alloys, J/(kg K); EN 1999-1-2:2007, 3.3.1.2."""
    return 0.41 * np.asarray(theta, dtype=float) + 903


def en1999_aluminium_k(theta, family: str = "A"):
    """Thermal conductivity of aluminium alloys, W/(m K); EN 1999-1-2:2007, 3.3.1.3.

    Args:
        family: "A" for series 1000, 3000 and 6000; "B" for series 2000, 4000, 5000, 7000.
    """
    th = np.asarray(theta, dtype=float)
    if family == "A":
        return 0.07 * th + 190
    if family == "B":
        return 0.1 * th + 140
    raise ValueError(f"family must be 'A' or 'B', got {family!r}")


# --- tabulating a formula -------------------------------------------------------------------


def tabulate(func, pieces, rel_tol: float = 5e-4, min_step: float = 0.05) -> Table:
    """A piecewise-linear table of a formula, refined until it follows the formula.

    Each piece (a, b) is a closed interval on which `func` is smooth; a piece ending where the
    next begins takes its last knot 0.1 K early when the formula jumps there, so both sides
    keep their own values. Intervals are halved until the table is within `rel_tol` of the
    formula at the midpoint and quarter points, or `min_step` (K) is reached.

    Args:
        func: vectorised property of temperature (C).
        pieces: [(a, b), ...] in C, in order.
        rel_tol: allowed relative interpolation error.
        min_step: smallest knot spacing, K.
    """
    knots: list[float] = []
    for i, (a, b) in enumerate(pieces):
        end = b
        if i + 1 < len(pieces) and pieces[i + 1][0] == b:
            left = float(func(np.array([np.nextafter(b, -np.inf)]))[0])
            right = float(func(np.array([b]))[0])
            if abs(left - right) > 1e-9 * abs(right):
                end = b - 0.1
        stack = [(float(a), float(end))]
        piece: list[float] = []
        while stack:
            lo, hi = stack.pop()
            probe = lo + np.array([0.25, 0.5, 0.75]) * (hi - lo)
            ends = func(np.array([lo, hi]))
            exact = func(probe)
            linear = ends[0] + (probe - lo) / (hi - lo) * (ends[1] - ends[0])
            bad = np.abs(linear - exact) > rel_tol * np.abs(exact)
            if np.any(bad) and hi - lo > 2 * min_step:
                mid = 0.5 * (lo + hi)
                stack.append((mid, hi))
                stack.append((lo, mid))
            else:
                piece.append(lo)
        piece.append(end)
        for x in piece:
            if not knots or x > knots[-1] + 1e-9:
                knots.append(x)
    temps = np.array(knots)
    return Table(temps, np.asarray(func(temps), dtype=float))


def _line(func, low: float, high: float) -> Table:
    """A linear formula as a two-knot table (exact)."""
    temps = np.array([low, high], dtype=float)
    return Table(temps, np.asarray(func(temps), dtype=float))


# --- the entries ----------------------------------------------------------------------------


def _eurocode_entries() -> list[Entry]:
    steel_source = (
        "EN 1993-1-2:2005 (Eurocode 3, structural fire design), 3.4.1: specific heat eq. (3.2), "
        "conductivity eq. (3.3); density 7850 kg/m3 (3.2.2) [memory for equation and clause "
        "numbers]"
    )
    carbon = Entry(
        key="carbon-steel-en1993",
        name="carbon steel (structural and general carbon steels)",
        source=steel_source,
        valid_range=(20.0, 1200.0),
        density=7850.0,
        conductivity=tabulate(en1993_carbon_steel_k, [(20, 800), (800, 1200)]),
        specific_heat=tabulate(
            en1993_carbon_steel_c, [(20, 600), (600, 735), (735, 900), (900, 1200)]
        ),
        aliases=("carbon-steel", "steel", "mild-steel"),
        note="the peak at 735 C stands for the heat absorbed by the ferrite-austenite change",
    )
    stainless = Entry(
        key="stainless-steel-en1993",
        name="austenitic stainless steel (e.g. 1.4301 / 304)",
        source="EN 1993-1-2:2005, Annex C: specific heat C.3.2, conductivity C.3.3 [memory for "
        "clause numbers]; density 7900 kg/m3, EN 10088-1 for 1.4301 [memory]",
        valid_range=(20.0, 1200.0),
        density=7900.0,
        conductivity=_line(en1993_stainless_k, 20.0, 1200.0),
        specific_heat=tabulate(en1993_stainless_c, [(20, 1200)]),
        aliases=("stainless-steel", "stainless", "austenitic-stainless-steel"),
    )
    alu = (
        "EN 1999-1-2:2007 (Eurocode 9, structural fire design), 3.3.1 [memory for sub-clause "
        "numbers]: specific heat 3.3.1.2"
    )
    family_a = Entry(
        key="aluminium-en1999-a",
        name="aluminium alloys of series 1000, 3000 and 6000",
        source=f"{alu}, conductivity 3.3.1.3 (first family); density 2700 kg/m3 (3.3.1.4)",
        valid_range=(0.0, 500.0),
        density=2700.0,
        conductivity=_line(lambda t: en1999_aluminium_k(t, "A"), 0.0, 500.0),
        specific_heat=_line(en1999_aluminium_c, 0.0, 500.0),
        aliases=("aluminium-1000", "aluminium-3000", "aluminium-6000", "aluminium-6xxx"),
    )
    family_b = Entry(
        key="aluminium-en1999-b",
        name="aluminium alloys of series 2000, 4000, 5000 and 7000",
        source=f"{alu}, conductivity 3.3.1.3 (second family); density 2700 kg/m3 (3.3.1.4)",
        valid_range=(0.0, 500.0),
        density=2700.0,
        conductivity=_line(lambda t: en1999_aluminium_k(t, "B"), 0.0, 500.0),
        specific_heat=_line(en1999_aluminium_c, 0.0, 500.0),
        aliases=(
            "aluminium-2000",
            "aluminium-4000",
            "aluminium-5000",
            "aluminium-7000",
            "aluminium-5xxx",
            "aluminium-7xxx",
        ),
    )
    return [carbon, stainless, family_a, family_b]


def _handbook_entries() -> list[Entry]:
    text = resources.files("femheat").joinpath("data/handbook_materials.toml").read_text("utf-8")
    out = []
    for key, item in tomllib.loads(text).items():
        shift = -KELVIN if item["temperature_unit"] == "K" else 0.0
        temps = np.asarray(item["temperatures"], dtype=float) + shift
        low, high = (float(x) + shift for x in item["range"])
        out.append(
            Entry(
                key=key,
                name=item["name"],
                source=item["source"],
                valid_range=(low, high),
                density=float(item["density"]),
                conductivity=Table(temps, np.asarray(item["conductivity"], dtype=float)),
                specific_heat=Table(temps, np.asarray(item["specific_heat"], dtype=float)),
                aliases=tuple(item.get("aliases", ())),
                note=item.get("note", ""),
            )
        )
    return out


@lru_cache(maxsize=1)
def entries() -> tuple[Entry, ...]:
    """Every library entry, Eurocode formulas first."""
    return tuple(_eurocode_entries() + _handbook_entries())


def _norm(name: str) -> str:
    text = "-".join(name.strip().lower().replace("_", " ").split())
    return text.replace("aluminum", "aluminium")


def find(name: str) -> Entry | None:
    """The entry with this key or alias, or None."""
    want = _norm(name)
    for entry in entries():
        if want == _norm(entry.key) or want in (_norm(a) for a in entry.aliases):
            return entry
    return None


def suggest(name: str) -> str | None:
    """The key closest to a misspelt name, or None."""
    names = {}
    for entry in entries():
        for n in (entry.key, *entry.aliases):
            names[_norm(n)] = entry.key
    close = get_close_matches(_norm(name), list(names), n=1, cutoff=0.6)
    return names[close[0]] if close else None


# --- text for the command line --------------------------------------------------------------


def listing_lines() -> list[str]:
    """One block per entry: key, description, valid range, density and source."""
    lines = []
    for e in entries():
        lo, hi = e.valid_range
        lines.append(f"{e.key}: {e.name}")
        lines.append(f"    valid {lo:g} to {hi:g} C; density {e.density:g} kg/m3")
        if e.aliases:
            lines.append(f"    also: {', '.join(e.aliases)}")
        lines.append(f"    source: {e.source}")
        if e.note:
            lines.append(f"    note: {e.note}")
    return lines


def table_lines(entry: Entry, step: float = 50.0, system: str = "si") -> list[str]:
    """The entry as a table every `step` K over its valid range, plus the 0-based enthalpy.

    Args:
        step: spacing in K.
        system: "si", or "us" to add F, Btu/(h ft F) and Btu/(lb F) columns.
    """
    lo, hi = entry.valid_range
    temps = np.arange(lo, hi + 1e-9, step)
    if temps[-1] < hi - 1e-9:
        temps = np.append(temps, hi)
    mat = entry.material()
    k = entry.conductivity(temps)
    c = entry.specific_heat(temps)
    h = (mat.specific_heat.integral(temps) - mat.specific_heat.integral(lo)) / 1e3
    head = f"{'T C':>8} {'k W/(m K)':>10} {'c J/(kg K)':>11} {'H kJ/kg':>9}"
    if system == "us":
        head += f" {'T F':>8} {'k Btu/(h ft F)':>15} {'c Btu/(lb F)':>13}"
    lines = [
        f"{entry.key}: {entry.name}",
        f"source: {entry.source}",
        f"density {entry.density:g} kg/m3; H from {lo:g} C",
        head,
    ]
    for t, kv, cv, hv in zip(temps, k, c, h, strict=True):
        row = f"{t:8.1f} {kv:10.2f} {cv:11.1f} {hv:9.1f}"
        if system == "us":
            # NIST SP 811 B.9: 1 Btu_IT/(h ft F) = 1.730735 W/(m K); 1 Btu_IT/(lb F) = 4186.8
            row += f" {1.8 * t + 32:8.1f} {kv / 1.730735:15.3f} {cv / 4186.8:13.4f}"
        lines.append(row)
    if entry.note:
        lines.append(f"note: {entry.note}")
    return lines
