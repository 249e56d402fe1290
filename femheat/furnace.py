"""Ambient schedules and face conditions, with the boundary heat-flux laws as plain functions.

Heat flux into the part through an exposed face (W/m2), temperatures in C at the interface and
in kelvin inside the radiation term:

    q = h (T_gas - T) + eps * sigma * (T_wall^4 - T^4)

A fixed-temperature face prescribes T; a flux face prescribes q; an insulated (or symmetry)
face has q = 0; a face resting on a hearth exchanges q = h_c (T_hearth - T) through a contact
conductance h_c. A shielded face has its emissivity times view (``Exposure.emissivity``)
reduced by its radiation factor when the case is read.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = [
    "KELVIN",
    "STEFAN_BOLTZMANN",
    "Schedule",
    "Exposure",
    "Insulated",
    "FixedTemperature",
    "HeatFlux",
    "Contact",
    "FaceCondition",
    "exposure_flux",
    "contact_flux",
]

KELVIN = 273.15
STEFAN_BOLTZMANN = 5.670374419e-8  # W/(m2 K4), CODATA 2018


@dataclass(frozen=True)
class Schedule:
    """A quantity against time: linear between points, held before the first and after the last.

    Args:
        times: s, strictly increasing.
        values: the quantity at those times (C for temperatures, W/m2 for fluxes).
    """

    times: tuple[float, ...]
    values: tuple[float, ...]

    @classmethod
    def constant(cls, value: float) -> Schedule:
        return cls((0.0,), (float(value),))

    @classmethod
    def from_rows(cls, rows) -> Schedule:
        a = np.asarray(rows, dtype=float).reshape(-1, 2)
        return cls(tuple(a[:, 0]), tuple(a[:, 1]))

    def __call__(self, t: float) -> float:
        return float(np.interp(t, self.times, self.values))

    @property
    def breakpoints(self) -> tuple[float, ...]:
        """Times (s) where the slope changes; the stepper lands on them."""
        return self.times if len(self.times) > 1 else ()

    @property
    def peak(self) -> float:
        return max(self.values)

    @property
    def low(self) -> float:
        return min(self.values)

    @property
    def final(self) -> float:
        return self.values[-1]


@dataclass(frozen=True)
class Exposure:
    """Convection to a gas and radiation to a wall (the furnace, or a face's own surroundings).

    Args:
        htc: convective heat transfer coefficient, W/(m2 K).
        gas: gas temperature schedule, C.
        emissivity: surface emissivity times view (0..1).
        wall: radiating wall temperature schedule, C.
    """

    htc: float
    gas: Schedule
    emissivity: float
    wall: Schedule


@dataclass(frozen=True)
class Insulated:
    """No heat crosses the face (also a plane of symmetry)."""


@dataclass(frozen=True)
class FixedTemperature:
    """Face held at a temperature schedule (C)."""

    temperature: Schedule


@dataclass(frozen=True)
class HeatFlux:
    """Prescribed heat flux into the part (W/m2, schedule)."""

    flux: Schedule


@dataclass(frozen=True)
class Contact:
    """A face resting on a hearth (or a support): q = conductance * (T_hearth - T).

    Args:
        conductance: contact conductance, W/(m2 K) (0: no heat crosses).
        temperature: hearth temperature schedule, C.
    """

    conductance: float
    temperature: Schedule


FaceCondition = Exposure | Insulated | FixedTemperature | HeatFlux | Contact


def exposure_flux(temperature: np.ndarray, gas_c: float, wall_c: float, htc: float, eps: float):
    """Heat flux into the part and its derivative.

    Args:
        temperature: surface temperature(s), C.
        gas_c, wall_c: gas and wall temperature, C.
        htc: W/(m2 K). eps: emissivity (0..1).

    Returns:
        (q, dq_dT): W/m2 and W/(m2 K).
    """
    tk = temperature + KELVIN
    wk = wall_c + KELVIN
    sigma_eps = eps * STEFAN_BOLTZMANN
    q = htc * (gas_c - temperature) + sigma_eps * (wk**4 - tk**4)
    dq = -htc - 4.0 * sigma_eps * tk**3
    return q, dq


def contact_flux(temperature: np.ndarray, hearth_c: float, conductance: float):
    """Heat flux into the part through a contact face and its derivative.

    Args:
        temperature: surface temperature(s), C.
        hearth_c: hearth temperature, C.
        conductance: contact conductance, W/(m2 K).

    Returns:
        (q, dq_dT): W/m2 and W/(m2 K).
    """
    q = conductance * (hearth_c - temperature)
    return q, np.full_like(q, -conductance)
