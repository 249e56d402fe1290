"""Fast evaluation of material tables in the time march: a bin lookup instead of a search.

`femheat.materials.Table` finds the knot interval of every temperature by binary search
(``numpy.searchsorted``), about 12 ms per 100 000 nodes for a finely tabulated steel curve;
the march evaluates the enthalpy, the capacity, the Kirchhoff potential and the conductivity
at every node in every Newton iteration. `TableLookup` divides the table's range into equal
bins no wider than its closest knots, so each bin holds at most one knot: the interval is the
bin's first interval, moved on by one where the temperature lies past the knot inside the
bin. The value and the exact integral then come from the same interval (one lookup for both).

Values agree with `Table.__call__` and `Table.integral` to round-off (the same piecewise
polynomials, evaluated from the same knots); outside the knots the value is held and the
integral continues linearly, as in `Table`.
"""

from __future__ import annotations

import numpy as np

from .materials import Material, Table

__all__ = ["TableLookup", "MaterialLookup", "MAX_BINS"]

MAX_BINS = 2_000_000  # larger lookup arrays are not worth it: fall back to the binary search


class TableLookup:
    """Value and antiderivative of a `Table` at many temperatures.

    Args:
        table: the piecewise-linear table (temperatures in C).
    """

    def __init__(self, table: Table):
        t = np.asarray(table.temperatures, dtype=float)
        v = np.asarray(table.values, dtype=float)
        self.table = table
        self.constant = t.size == 1
        if self.constant:
            return
        self._t, self._v = t, v
        self._slope = np.diff(v) / np.diff(t)
        # antiderivative at the knots, zero at 0 C, as Table.integral
        self._cum = np.asarray(table.integral(t), dtype=float)
        self._lo, self._hi = float(t[0]), float(t[-1])
        width = float(np.min(np.diff(t)))
        bins = int(np.ceil((self._hi - self._lo) / width)) + 1
        self._bins = bins if bins <= MAX_BINS else 0
        if self._bins:
            self._scale = (bins - 1) / (self._hi - self._lo)
            starts = self._lo + np.arange(bins) / self._scale
            first = np.searchsorted(t, starts, side="right") - 1
            self._first = np.clip(first, 0, t.size - 2).astype(np.intp)
            # the knot that may lie inside each bin (the end of its first interval); none
            # past the last interval, which also takes the upper end
            self._next = t[self._first + 1]
            self._next[self._first == t.size - 2] = np.inf

    def _interval(self, x: np.ndarray) -> np.ndarray:
        """Index i of the interval [t_i, t_i+1] of each (clipped) temperature."""
        if not self._bins:
            i = np.searchsorted(self._t, x, side="right") - 1
            return np.clip(i, 0, self._t.size - 2)
        b = ((x - self._lo) * self._scale).astype(np.intp)
        np.clip(b, 0, self._bins - 1, out=b)
        return np.take(self._first, b) + (x >= np.take(self._next, b))

    def both(self, temperature: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(value, integral from 0 C) at `temperature` (C)."""
        x = np.asarray(temperature, dtype=float)
        if self.constant:
            v0 = float(self.table.values[0])
            return np.full(x.shape, v0), v0 * x
        xc = np.clip(x, self._lo, self._hi)
        i = self._interval(xc)
        dx = xc - np.take(self._t, i)
        s = np.take(self._slope, i)
        v = np.take(self._v, i)
        value = v + s * dx
        integral = np.take(self._cum, i) + (v + 0.5 * s * dx) * dx
        integral += value * (x - xc)  # held value beyond the ends
        return value, integral


class MaterialLookup:
    """The four material functions the march needs, in pairs sharing one lookup.

    Falls back to the `Material` methods for material objects other than `Material` with
    `Table` properties (a future law keeps working, only slower).

    Args:
        material: the part's material.
    """

    def __init__(self, material: Material):
        self.material = material
        fast = (
            type(material) is Material
            and type(material.specific_heat) is Table
            and type(material.conductivity) is Table
        )
        self._c = TableLookup(material.specific_heat) if fast else None
        self._k = TableLookup(material.conductivity) if fast else None
        self._rho = float(material.density)

    def enthalpy_capacity(self, temperature: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(H in J/m3, rho c in J/(m3 K)) at `temperature` (C)."""
        if self._c is None:
            m = self.material
            return m.enthalpy(temperature), m.capacity(temperature)
        c, h = self._c.both(temperature)
        return self._rho * h, self._rho * c

    def kirchhoff_conductivity(self, temperature: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(phi = int k dT in W/m, k in W/(m K)) at `temperature` (C)."""
        if self._k is None:
            m = self.material
            return m.kirchhoff(temperature), m.conductivity(temperature)
        k, phi = self._k.both(temperature)
        return phi, k

    def enthalpy(self, temperature: np.ndarray) -> np.ndarray:
        """H in J/m3 at `temperature` (C)."""
        return self.enthalpy_capacity(temperature)[0]

    def capacity(self, temperature: np.ndarray) -> np.ndarray:
        """rho c in J/(m3 K) at `temperature` (C)."""
        return self.enthalpy_capacity(temperature)[1]

    def conductivity(self, temperature: np.ndarray) -> np.ndarray:
        """k in W/(m K) at `temperature` (C)."""
        return self.kirchhoff_conductivity(temperature)[1]
