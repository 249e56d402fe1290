"""Quantities with units in the case file: conversions against NIST SP 811, kinds that do not
fit, temperature scales against differences, and results printed in US customary units."""

from __future__ import annotations

import json

import numpy as np
import pytest

from femheat.case import parse_case
from femheat.cli import main
from femheat.errors import CaseError
from femheat.units import UnitError, to_si

from .helpers import BASE

# NIST Special Publication 811 (2008 ed.), Guide for the Use of the SI, Appendix B.8 and B.9
# [memory]: exact definitions (inch, foot, pound, hour, Btu_IT per pound per degree F) and
# factors given to 7 digits (Btu_IT, W-based heat transfer units).
NIST = [
    ("1 in", "length", 0.0254, 0.0),  # exact
    ("1 ft", "length", 0.3048, 0.0),  # exact
    ("1 h", "time", 3600.0, 0.0),  # exact
    ("1 Btu/(lb*degF)", "specific_heat", 4186.8, 0.0),  # exact (Btu_IT)
    ("1 Btu/(h*ft**2*degF)", "htc", 5.678263, 1e-6),
    ("1 Btu/(h*ft*degF)", "conductivity", 1.730735, 1e-6),
    ("1 Btu/(h*ft**2)", "flux", 3.154591, 1e-6),
    ("1 lb/ft**3", "density", 16.01846, 1e-6),
]


@pytest.mark.parametrize("text, kind, si, rel", NIST)
def test_nist_sp811_factors(text, kind, si, rel):
    assert to_si(text, kind) == pytest.approx(si, rel=max(rel, 1e-12))


def test_btu_is_the_international_table_btu():
    """1 Btu_IT = 1055.05585262 J exactly (NIST SP 811, 2008, B.8 footnote [memory]); the
    energy kind is not a case field, so check it through a flux per hour and area."""
    per_hour_m2 = to_si("1 Btu/(h*m**2)", "flux")
    assert per_hour_m2 * 3600.0 == pytest.approx(1055.05585262, rel=1e-11)


@pytest.mark.parametrize(
    "text, celsius",
    # NIST SP 811 B.9: t/C = (t/F - 32)/1.8, T/K = t/C + 273.15 (exact)
    [("1650 degF", 898.8888888888889), ("32 F", 0.0), ("-40 °F", -40.0), ("300 K", 26.85)],
)
def test_temperature_scales(text, celsius):
    assert to_si(text, "temperature") == pytest.approx(celsius, abs=1e-9)


def test_rates_and_coefficients_use_temperature_differences():
    """In every field but a temperature, degF is a difference of 5/9 K (NIST SP 811 B.9):
    400 degF/h = 222.22 K/h, not an offset temperature."""
    assert to_si("400 degF/h", "rate") * 3600.0 == pytest.approx(400 / 1.8, rel=1e-12)
    assert to_si("100 C/h", "rate") * 3600.0 == pytest.approx(100.0, rel=1e-12)
    assert to_si("30 W/(m2 K)", "htc") == 30.0
    assert to_si("0.11 Btu/(lb*F)", "specific_heat") == pytest.approx(0.11 * 4186.8, rel=1e-12)


@pytest.mark.parametrize(
    "text, kind, says",
    [
        ("25 mm", "htc", "'25 mm' is a length, expected a heat transfer coefficient"),
        ("45 W/m2/K", "conductivity", "is a heat transfer coefficient, expected a thermal"),
        ("2 h", "temperature", "'2 h' is a time, expected a temperature"),
        ("25", "length", "'25' has no unit"),
        ("25 furlongz", "length", "unknown unit"),
        ("mm", "length", "does not start with a number"),
        ("10 delta_degC", "temperature", "a temperature difference, expected a temperature"),
    ],
)
def test_wrong_units_say_what_they_are(text, kind, says):
    with pytest.raises(UnitError) as info:
        to_si(text, kind)
    assert says in info.value.problem and info.value.fix


def _case(**sections):
    data = {key: dict(value) if isinstance(value, dict) else value for key, value in BASE.items()}
    for key, value in sections.items():
        data[key] = {**data.get(key, {}), **value}
    return parse_case(data)


def test_units_everywhere_in_a_case():
    case = _case(
        material={"density": "490 lb/ft**3", "conductivity": "26 Btu/(h*ft*degF)"},
        furnace={
            "temperature": [["0 h", "1200 degF"], ["2 h", "1650 degF"]],
            "htc": "5 Btu/(h*ft2*F)",
        },
        initial={"temperature": "70 degF"},
        target={"temperature": "1600 F", "hold": "30 min"},
        mesh={"size": "2 mm"},
        solver={"end_time": "10 h", "max_step": "5 min"},
    )
    assert case.material.density == pytest.approx(490 * 16.01846337, rel=1e-9)
    assert case.furnace.temperature[1] == pytest.approx((7200.0, 898.8888889), rel=1e-9)
    assert case.furnace.htc == pytest.approx(5 * 5.678263, rel=1e-6)
    assert case.initial.temperature == pytest.approx(21.1111111, rel=1e-8)
    assert case.target.hold == 1800.0 and case.mesh.size == 0.002
    assert (case.solver.end_time, case.solver.max_step) == (36000.0, 300.0)


def test_tables_with_a_units_row():
    case = _case(
        furnace={"temperature": {"units": ["h", "degF"], "rows": [[0, 212], [1, 1112]]}},
        material={
            "specific_heat": {"units": ["degF", "Btu/(lb*degF)"], "rows": [[32, 0.1], [932, 0.2]]}
        },
    )
    assert np.allclose(case.furnace.temperature, [[0.0, 100.0], [3600.0, 600.0]], atol=1e-9)
    assert np.allclose(case.material.specific_heat, [[0.0, 418.68], [500.0, 837.36]], atol=1e-9)


@pytest.mark.parametrize(
    "section, key, value, where",
    [
        ("furnace", "htc", "25 mm", "furnace.htc"),
        ("furnace", "emissivity", "2 m", "furnace.emissivity"),
        ("material", "density", "7850 kg/m2", "material.density"),
        ("initial", "temperature", "20 mm", "initial.temperature"),
        ("target", "hold", "600 C", "target.hold"),
        ("furnace", "temperature", [[0, 20], ["1 kg", 850]], "furnace.temperature[1]"),
        (
            "furnace",
            "temperature",
            {"units": ["h", "W"], "rows": [[0, 1]]},
            "furnace.temperature.units[1]",
        ),
    ],
)
def test_case_errors_name_the_field(section, key, value, where):
    with pytest.raises(CaseError) as info:
        _case(**{section: {key: value}})
    assert info.value.where == where, str(info.value)
    assert "; fix: " in str(info.value) and "\n" not in str(info.value)


def test_run_prints_us_units_and_keeps_summary_si(tmp_path, capsys):
    """`femheat run --units us` adds F and inches to the printout; summary.json stays SI/C."""
    path = tmp_path / "plate.toml"
    path.write_text(
        """
title = "plate in US units"
[part]
model = "planar"
shape = "rectangle"
size = [0.0254, 0.00254]
[material]
name = "carbon-steel-en1993"
[furnace]
temperature = "1650 degF"
htc = "5 Btu/(h*ft**2*degF)"
emissivity = 0.8
[faces.xmin]
condition = "symmetry"
[faces.ymin]
condition = "insulated"
[faces.ymax]
condition = "insulated"
[initial]
temperature = "70 degF"
[target]
temperature = "1600 degF"
[output]
fields = false
pictures = false
report = false
""",
        encoding="utf-8",
    )
    out = tmp_path / "res"
    assert main(["run", str(path), "--out", str(out), "--units", "us"]) == 0
    text = capsys.readouterr().out
    assert "871.111 C (1600 F)" in text  # (1600 - 32)/1.8 = 871.11 C
    assert "furnace temperature:" in text and "constant 899 C (1650 F)" in text
    assert " in" in text.split("last point to reach it")[1].splitlines()[0]
    summary = json.loads((out / "summary.json").read_text())
    assert summary["target"]["temperature_C"] == pytest.approx(871.1111111, rel=1e-9)
