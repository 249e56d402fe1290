"""Property tables: values, exact integrals (enthalpy, Kirchhoff potential), end behaviour."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad

from femheat.materials import Material, Table


def en1993_c(th):
    """Carbon steel specific heat, EN 1993-1-2:2005 3.4.1 (J/(kg K), th in C)."""
    if th < 600:
        return 425 + 0.773 * th - 1.69e-3 * th**2 + 2.22e-6 * th**3
    if th < 735:
        return 666 + 13002 / (738 - th)
    if th < 900:
        return 545 + 17820 / (th - 731)
    return 650.0


def test_integral_matches_quadrature():
    """The antiderivative of a piecewise-linear table equals scipy.integrate.quad of it."""
    table = Table.from_rows([[20, 440], [600, 760], [735, 5000], [800, 803], [1200, 650]])
    for lo, hi in [(20, 900), (-50, 20), (700, 760), (1100, 1500)]:
        ref, _ = quad(table, lo, hi, points=[600, 735, 800, 1200], limit=200)
        assert table.integral(hi) - table.integral(lo) == pytest.approx(ref, rel=1e-10)


def test_values_held_at_table_ends():
    table = Table.from_rows([[20, 1.0], [100, 2.0]])
    assert table(-100) == 1.0 and table(500) == 2.0
    assert table.integral(200) - table.integral(100) == pytest.approx(200.0)


def test_en1993_enthalpy_from_a_fine_table():
    """int c dT from 20 to 900 C for EN 1993-1-2 carbon steel is 632 kJ/kg (REFERENCES.md,
    [computed] from EN 1993-1-2:2005 3.4.1); a 1 K table reproduces it to 0.1 %."""
    temps = np.arange(20.0, 901.0, 1.0)
    table = Table(temps, np.array([en1993_c(t) for t in temps]))
    assert (table.integral(900) - table.integral(20)) / 1e3 == pytest.approx(632, rel=1e-3)
    # spot values of the standard's formula (REFERENCES.md, EN 1993-1-2 check values)
    for th, c in [(20, 439.8), (600, 760.2), (700, 1008.2), (800, 803.3)]:
        assert en1993_c(th) == pytest.approx(c, abs=0.1)


def test_material_enthalpy_and_kirchhoff():
    mat = Material(7850.0, Table.constant(40.0), Table.constant(500.0))
    assert mat.enthalpy(100.0) - mat.enthalpy(0.0) == pytest.approx(7850 * 500 * 100)
    assert mat.kirchhoff(100.0) - mat.kirchhoff(20.0) == pytest.approx(40 * 80)
    assert mat.diffusivity(300.0) == pytest.approx(40 / (7850 * 500))
