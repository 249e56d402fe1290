"""A steel plate heated in a ramping furnace with radiation, against an independent fine 1D
solution written here with scipy's solve_ivp (method of lines).

Both sides share only the published data: the EN 1993-1-2:2005 3.4.1 carbon-steel formulas
(specific heat with its 735 C peak, conductivity) and the flux law
q = h (T_gas - T) + eps sigma ((T_gas + 273.15)^4 - (T + 273.15)^4). The reference uses the
formulas themselves (pointwise c(T) in c dT/dt, and the exact Kirchhoff integral of k for the
conduction fluxes) on 400 cells; femheat uses its library table, its furnace program and its
finite elements.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from femheat.case import parse_case
from femheat.furnace import STEFAN_BOLTZMANN
from femheat.library import en1993_carbon_steel_c
from femheat.problem import build_problem
from femheat.run import run_problem

from .helpers import structured_rectangle

HALF = 0.03  # m, half-thickness of a 60 mm plate
HTC, EPS = 20.0, 0.8
RHO = 7850.0  # EN 1993-1-2:2005, 3.2.2
START, TOP, RATE = 300.0, 900.0, 300.0 / 3600.0  # furnace program: C, C, K/s
T0, TARGET = 20.0, 880.0


def _kirchhoff(theta):
    """int_0^theta k dT for EN 1993-1-2 carbon steel: k = 54 - 3.33e-2 th below 800 C, 27.3
    above (exact integral of the published formula)."""
    th = np.asarray(theta, dtype=float)
    low = 54.0 * th - 0.5 * 3.33e-2 * th**2
    at800 = 54.0 * 800 - 0.5 * 3.33e-2 * 800**2
    return np.where(th < 800, low, at800 + 27.3 * (th - 800))


def _gas(t):
    return min(START + RATE * t, TOP)


def _reference_time(cells: int = 400) -> float:
    """Time (s) for the plate centre to reach TARGET: vertex-centred finite volumes on
    [0, HALF], symmetry at 0, convection + radiation at HALF, integrated by Radau."""
    n = cells + 1
    dx = HALF / cells
    vol = np.full(n, dx)
    vol[0] = vol[-1] = dx / 2

    def rhs(t, temp):
        phi = _kirchhoff(temp)
        flow = np.zeros(n)
        between = (phi[1:] - phi[:-1]) / dx
        flow[:-1] += between
        flow[1:] -= between
        gas = _gas(t)
        flow[-1] += HTC * (gas - temp[-1]) + EPS * STEFAN_BOLTZMANN * (
            (gas + 273.15) ** 4 - (temp[-1] + 273.15) ** 4
        )
        return flow / (RHO * en1993_carbon_steel_c(temp) * vol)

    def reached(t, temp):
        return temp[0] - TARGET

    reached.terminal = True
    index = np.arange(n)
    sparsity = np.abs(index[:, None] - index[None, :]) <= 1  # tridiagonal Jacobian
    t_corner = (TOP - START) / RATE
    first = solve_ivp(
        rhs, (0.0, t_corner), np.full(n, T0), method="Radau", rtol=1e-8, atol=1e-6,
        jac_sparsity=sparsity, events=reached,
    )  # fmt: skip
    assert first.status == 0, "the reference reached the target during the ramp"
    second = solve_ivp(
        rhs, (t_corner, 20 * 3600.0), first.y[:, -1], method="Radau", rtol=1e-8, atol=1e-6,
        jac_sparsity=sparsity, events=reached,
    )  # fmt: skip
    assert second.status == 1
    return float(second.t_events[0][0])


def test_en1993_plate_with_radiation_and_ramp_agrees_with_method_of_lines():
    reference = _reference_time()
    case = parse_case(
        {
            "title": "60 mm plate, EN 1993 steel, ramping furnace",
            "part": {"model": "planar", "shape": "rectangle", "size": [HALF, HALF / 10]},
            "material": {"name": "carbon-steel-en1993"},
            "furnace": {
                "temperature": {
                    "start": f"{START} C",
                    "steps": [{"ramp_to": f"{TOP} C", "rate": f"{RATE * 3600} degC/h"}],
                },
                "htc": HTC,
                "emissivity": EPS,
            },
            "faces": {
                "xmin": {"condition": "symmetry"},
                "ymin": {"condition": "insulated"},
                "ymax": {"condition": "insulated"},
            },
            "initial": {"temperature": T0},
            "target": {"temperature": TARGET},
        }
    )
    mesh = structured_rectangle(HALF, HALF / 10, 30, 1)
    result = run_problem(build_problem(case, mesh=mesh))
    assert result.status == "reached"
    print(f"femheat {result.target.time:.1f} s, method of lines {reference:.1f} s")
    assert result.target.time == pytest.approx(reference, rel=0.01)
    # the last point is the centre plane, as in the reference
    assert result.target.last_point[0] == pytest.approx(0.0, abs=1e-12)
