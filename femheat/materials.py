"""Material property laws: piecewise-linear tables of temperature, their integrals, the enthalpy.

A property p(T) is a table of (temperature C, value) knots, linear between knots and held at
the end values outside them (a constant is a one-knot table). Its antiderivative
P(T) = int_0^T p dT is exact (piecewise quadratic), which gives:

* the volumetric enthalpy H(T) = rho * int c dT  [J/m3], so that storage is energy-consistent
  even across a sharp peak in c(T) (carbon steel near 735 C);
* the Kirchhoff transform phi(T) = int k dT  [W/m], which makes conduction linear in phi.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = ["Table", "Material"]


@dataclass(frozen=True)
class Table:
    """Piecewise-linear property of temperature.

    Args:
        temperatures: knot temperatures in C, strictly increasing.
        values: property values at the knots (any unit).
    """

    temperatures: np.ndarray
    values: np.ndarray
    _cumulative: np.ndarray = field(init=False, repr=False)
    _slopes: np.ndarray = field(init=False, repr=False)

    def __post_init__(self):
        t = np.atleast_1d(np.asarray(self.temperatures, dtype=float))
        v = np.atleast_1d(np.asarray(self.values, dtype=float))
        if t.shape != v.shape or t.ndim != 1 or t.size == 0:
            raise ValueError("temperatures and values must be 1D arrays of equal length")
        if np.any(np.diff(t) <= 0):
            raise ValueError(f"table temperatures must increase; got {t.tolist()}")
        slopes = np.diff(v) / np.diff(t) if t.size > 1 else np.zeros(0)
        cumulative = np.concatenate([[0.0], np.cumsum(0.5 * (v[1:] + v[:-1]) * np.diff(t))])
        object.__setattr__(self, "temperatures", t)
        object.__setattr__(self, "values", v)
        object.__setattr__(self, "_slopes", slopes)
        # shift so that the antiderivative is zero at 0 C
        object.__setattr__(self, "_cumulative", cumulative)
        object.__setattr__(self, "_cumulative", cumulative - self._raw_integral(np.array([0.0]))[0])

    @classmethod
    def constant(cls, value: float) -> Table:
        return cls(np.array([0.0]), np.array([float(value)]))

    @classmethod
    def from_rows(cls, rows) -> Table:
        a = np.asarray(rows, dtype=float)
        return cls(a[:, 0], a[:, 1])

    @property
    def is_constant(self) -> bool:
        return bool(np.all(self.values == self.values[0]))

    @property
    def range(self) -> tuple[float, float]:
        """Temperature range (C) the table covers; (-inf, inf) for a constant."""
        if self.temperatures.size == 1:
            return (-np.inf, np.inf)
        return (float(self.temperatures[0]), float(self.temperatures[-1]))

    def __call__(self, temperature):
        """Value at temperature(s) in C."""
        return np.interp(temperature, self.temperatures, self.values)

    def _raw_integral(self, temperature):
        t, v = self.temperatures, self.values
        x = np.asarray(temperature, dtype=float)
        if t.size == 1:
            return v[0] * (x - t[0])
        i = np.clip(np.searchsorted(t, x, side="right") - 1, 0, t.size - 2)
        dx = x - t[i]
        inside = self._cumulative[i] + v[i] * dx + 0.5 * self._slopes[i] * dx * dx
        below = self._cumulative[0] + v[0] * (x - t[0])
        above = self._cumulative[-1] + v[-1] * (x - t[-1])
        return np.where(x < t[0], below, np.where(x > t[-1], above, inside))

    def integral(self, temperature):
        """Antiderivative int_0^T p dT at temperature(s) in C (value units times kelvin)."""
        t = self.temperatures
        if t.size == 1:
            return self.values[0] * np.asarray(temperature, dtype=float)
        return self._raw_integral(temperature)


@dataclass(frozen=True)
class Material:
    """Thermal properties of the part.

    Args:
        density: kg/m3 (constant).
        conductivity: W/(m K) against temperature in C.
        specific_heat: J/(kg K) against temperature in C.
        name: label for reports.
        valid_range: (low, high) temperatures in C over which the source states the data
            (None: only the table ends apply).
        source: where the data come from (standard or handbook, with edition and clause).
    """

    density: float
    conductivity: Table
    specific_heat: Table
    name: str = ""
    valid_range: tuple[float, float] | None = None
    source: str = ""

    def capacity(self, temperature):
        """Volumetric heat capacity rho*c in J/(m3 K)."""
        return self.density * self.specific_heat(temperature)

    def enthalpy(self, temperature):
        """Volumetric enthalpy H = rho * int_0^T c dT in J/m3."""
        return self.density * self.specific_heat.integral(temperature)

    def kirchhoff(self, temperature):
        """Kirchhoff potential phi = int_0^T k dT in W/m."""
        return self.conductivity.integral(temperature)

    def diffusivity(self, temperature):
        """Thermal diffusivity k/(rho c) in m2/s."""
        return self.conductivity(temperature) / self.capacity(temperature)

    def ranges(self) -> dict[str, tuple[float, float]]:
        """Valid temperature range of each tabulated property (C), and the stated range of
        the data under the key ``"data"`` when the source gives one."""
        out = {
            "conductivity": self.conductivity.range,
            "specific_heat": self.specific_heat.range,
        }
        if self.valid_range is not None:
            out["data"] = (float(self.valid_range[0]), float(self.valid_range[1]))
        return out
