"""Material properties from a CSV file: a temperature column and property columns, with units.

The first line names the columns, each with an optional unit in square brackets (base units
when left out: C, W/(m K), J/(kg K), kg/m3)::

    temperature [degF], conductivity [Btu/(h*ft*degF)], specific_heat [Btu/(lb*degF)]
    70, 27.0, 0.107
    1000, 19.5, 0.151

Columns: ``temperature`` (first, strictly increasing), then any of ``conductivity``,
``specific_heat`` and ``density`` (which must be the same on every row: density is constant in
femheat). Lines starting with ``#`` and blank lines are skipped. Values must be > 0.
"""

from __future__ import annotations

import csv
import io
import re
from pathlib import Path

import numpy as np

from .errors import CaseError
from .materials import Table
from .units import UnitError, to_si

__all__ = ["COLUMNS", "read_property_csv"]

COLUMNS = {
    "temperature": "temperature",
    "conductivity": "conductivity",
    "specific_heat": "specific_heat",
    "density": "density",
}
"""Column name -> unit kind (`femheat.units.KINDS`)."""

_HEAD = re.compile(r"^\s*([A-Za-z_ ]+?)\s*(?:\[(.*)\])?\s*$")


def _scale(unit: str, kind: str, where: str, column: str) -> tuple[float, float]:
    """(offset, factor) turning numbers in `unit` into the kind's base unit."""
    if not unit.strip():
        return 0.0, 1.0
    try:
        zero, one = to_si(f"0 {unit}", kind), to_si(f"1 {unit}", kind)
    except UnitError as exc:
        raise CaseError(where, f"column {column!r} unit [{unit}]: {exc.problem}", exc.fix) from None
    return zero, one - zero


def read_property_csv(path: str | Path, where: str = "material.table_file") -> dict:
    """Read a property file.

    Args:
        path: the CSV file.
        where: the place in the case file that named it, for messages.

    Returns:
        ``{"conductivity": Table, "specific_heat": Table, "density": float}`` for the columns
        present, in base units against temperature in C.

    Raises:
        CaseError: missing or unreadable file, unknown column, bad unit, bad number, order.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise CaseError(
            where, f"no such file {str(path)!r}", "check the path (relative to the case file)"
        ) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise CaseError(
            where, f"cannot read {str(path)!r} ({exc})", "save it as UTF-8 CSV text"
        ) from None
    lines = [
        (n, line)
        for n, line in enumerate(text.splitlines(), start=1)
        if line.strip() and not line.lstrip().startswith("#")
    ]
    if len(lines) < 2:
        raise CaseError(
            where,
            f"{path.name} needs a header line and at least one row",
            "write a header like 'temperature [C], conductivity [W/(m K)]' and the rows",
        )
    rows = list(csv.reader(io.StringIO("\n".join(line for _, line in lines))))
    header, body = rows[0], rows[1:]
    names, scales = [], []
    for cell in header:
        match = _HEAD.match(cell)
        name = match.group(1).strip().lower().replace(" ", "_") if match else cell.strip()
        if name not in COLUMNS:
            raise CaseError(
                where,
                f"{path.name} line {lines[0][0]}: unknown column {cell.strip()!r}",
                f"name the columns from: {', '.join(COLUMNS)} (a unit may follow in [ ])",
            )
        if name in names:
            raise CaseError(where, f"{path.name}: column {name!r} appears twice", "keep one")
        names.append(name)
        scales.append(_scale(match.group(2) or "", COLUMNS[name], where, name))
    if names[0] != "temperature" or len(names) < 2:
        raise CaseError(
            where,
            f"{path.name}: the first column must be temperature, followed by property columns",
            "write a header like 'temperature [C], conductivity, specific_heat'",
        )
    data = np.empty((len(body), len(names)))
    for i, row in enumerate(body):
        line_no = lines[i + 1][0]
        if len(row) != len(names):
            raise CaseError(
                where,
                f"{path.name} line {line_no}: {len(row)} values for {len(names)} columns",
                "give one value per column on every row",
            )
        for j, cell in enumerate(row):
            try:
                x = float(cell)
            except ValueError:
                raise CaseError(
                    where,
                    f"{path.name} line {line_no}: {cell.strip()!r} is not a number",
                    "write plain numbers; put units in the header in [ ]",
                ) from None
            if not np.isfinite(x):
                raise CaseError(
                    where, f"{path.name} line {line_no}: {cell.strip()!r}", "give finite numbers"
                )
            offset, factor = scales[j]
            data[i, j] = offset + factor * x
    temps = data[:, 0]
    bad = np.flatnonzero(np.diff(temps) <= 0)
    if bad.size:
        k = int(bad[0]) + 1
        raise CaseError(
            where,
            f"{path.name} line {lines[k + 1][0]}: temperatures must increase "
            f"({temps[k]:g} C after {temps[k - 1]:g} C)",
            "sort the rows by temperature, without repeats",
        )
    if temps[0] <= -273.15:
        raise CaseError(
            where,
            f"{path.name}: {temps[0]:g} C is below absolute zero",
            "check the temperature unit",
        )
    out: dict = {}
    for j, name in enumerate(names[1:], start=1):
        col = data[:, j]
        if np.any(col <= 0):
            k = int(np.flatnonzero(col <= 0)[0])
            raise CaseError(
                where,
                f"{path.name} line {lines[k + 1][0]}: {name} must be > 0, got {col[k]:g}",
                "check the value and its unit",
            )
        if name == "density":
            if np.ptp(col) > 1e-9 * col.max():
                raise CaseError(
                    where,
                    f"{path.name}: density varies ({col.min():g} to {col.max():g} kg/m3); "
                    "femheat takes density as constant",
                    "drop the density column and give [material] density",
                )
            out[name] = float(col[0])
        else:
            out[name] = Table(temps.copy(), col.copy())
    return out
