"""The material library: published check values, exact enthalpy of the tables, lookups, CSV
property files, overrides in the case file and the valid-range warning."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad

from femheat import library
from femheat.case import parse_case
from femheat.errors import CaseError
from femheat.library import entries, find, suggest
from femheat.materials import Table
from femheat.problem import build_problem, material_from_case
from femheat.property_csv import read_property_csv
from femheat.run import run_problem

from .helpers import BASE, make_case, structured_rectangle

# --- EN 1993-1-2 carbon steel -----------------------------------------------------------------


@pytest.mark.parametrize(
    "theta, c",
    # EN 1993-1-2:2005, 3.4.1.2 check values as given in REFERENCES.md section 3
    [(20, 439.8), (600, 760.2), (700, 1008.2), (735, 5000.0), (800, 803.3)],
)
def test_carbon_steel_specific_heat_check_values(theta, c):
    """The formula gives the published check values; the library table agrees within 0.05 %
    (its interpolation tolerance) and exactly at the 735 C peak, which is a knot."""
    assert float(library.en1993_carbon_steel_c(theta)) == pytest.approx(c, abs=0.05)
    table = find("carbon-steel-en1993").specific_heat
    assert float(table(theta)) == pytest.approx(c, rel=5e-4)
    assert 735.0 in table.temperatures
    assert float(table(735.0)) == 5000.0


def test_carbon_steel_conductivity_check_values():
    """k(400 C) = 40.68 W/(m K), and 27.3 above 800 C (EN 1993-1-2:2005, 3.4.1.3)."""
    entry = find("carbon-steel-en1993")
    assert float(library.en1993_carbon_steel_k(400)) == pytest.approx(40.68, abs=1e-9)
    assert float(entry.conductivity(400)) == pytest.approx(40.68, rel=1e-9)
    assert float(entry.conductivity(1000)) == pytest.approx(27.3, rel=1e-12)


def test_carbon_steel_enthalpy_20_to_900_is_632_kj_per_kg():
    """int c dT from 20 to 900 C = 632 kJ/kg (REFERENCES.md sec. 3, [computed] from the
    EN 1993-1-2 formula). The table's exact integral is within 0.05 % of scipy's quad of the
    formula itself, so the enthalpy stored by the solver is the standard's."""
    table = find("carbon-steel-en1993").specific_heat
    h_table = table.integral(900.0) - table.integral(20.0)
    h_formula, _ = quad(library.en1993_carbon_steel_c, 20, 900, points=[600, 735], limit=400)
    assert h_table / 1e3 == pytest.approx(632.0, abs=0.5)
    assert h_table == pytest.approx(h_formula, rel=5e-4)


# --- EN 1993-1-2 Annex C stainless, EN 1999-1-2 aluminium ------------------------------------


def test_stainless_check_values():
    """c(500 C) = 534.0 J/(kg K) and k(500 C) = 20.95 W/(m K); EN 1993-1-2:2005 Annex C
    (values as in REFERENCES.md sec. 3, [memory])."""
    entry = find("stainless-steel-en1993")
    assert float(library.en1993_stainless_c(500)) == pytest.approx(534.0, abs=0.05)
    assert float(entry.specific_heat(500)) == pytest.approx(534.0, rel=5e-4)
    assert float(entry.conductivity(500)) == pytest.approx(20.95, rel=1e-12)


@pytest.mark.parametrize(
    "key, k200",
    # EN 1999-1-2:2007, 3.3.1 (REFERENCES.md sec. 3, [memory]): k = 0.07 th + 190 for series
    # 1000/3000/6000, k = 0.1 th + 140 for 2000/4000/5000/7000; at 200 C: 204 and 160
    [("aluminium-en1999-a", 204.0), ("aluminium-en1999-b", 160.0)],
)
def test_aluminium_check_values(key, k200):
    """c = 0.41 th + 903: c(200 C) = 985 J/(kg K) [derived]; density 2700 kg/m3."""
    entry = find(key)
    assert float(entry.conductivity(200)) == pytest.approx(k200, rel=1e-12)
    assert float(entry.specific_heat(200)) == pytest.approx(985.0, rel=1e-12)
    assert entry.density == 2700.0
    assert entry.valid_range == (0.0, 500.0)


@pytest.mark.parametrize(
    "key, k, c",
    # near room temperature: Incropera et al. 6th ed. Table A.1 at 300 K [memory]: copper
    # k 401, c 385; titanium k 21.9, c 522. Alloy 600 data sheet at 20 C [memory]: 14.9, 444.
    [("copper", 401.0, 385.0), ("titanium", 21.9, 522.0), ("nickel-alloy-600", 14.9, 444.0)],
)
def test_handbook_entries_room_temperature(key, k, c):
    entry = find(key)
    t = 26.85 if key != "nickel-alloy-600" else 20.0
    assert float(entry.conductivity(t)) == pytest.approx(k, rel=1e-9)
    assert float(entry.specific_heat(t)) == pytest.approx(c, rel=1e-9)
    assert "[memory]" in entry.source


def test_every_entry_names_source_and_range():
    keys = [e.key for e in entries()]
    assert len(keys) == len(set(keys)) >= 7
    for e in entries():
        lo, hi = e.valid_range
        assert lo < hi and e.source and e.density > 0
        for table in (e.conductivity, e.specific_heat):
            assert np.all(table.values > 0)
            assert table.range[0] <= lo + 1e-9 and table.range[1] >= hi - 1e-9


def test_lookup_is_forgiving_and_suggests():
    assert find("Carbon Steel").key == "carbon-steel-en1993"
    assert find("aluminum_6000").key == "aluminium-en1999-a"
    assert find("unobtainium") is None
    assert suggest("stainles-steel") == "stainless-steel-en1993"


def test_tabulate_is_exact_at_knots_and_within_tolerance():
    """A tabulated formula matches the formula at every knot and within the tolerance between."""

    def func(t):
        return 1.0 + np.exp(-(((np.asarray(t) - 50.0) / 3.0) ** 2))

    table = library.tabulate(func, [(0, 100)], rel_tol=1e-3)
    assert np.allclose(table.values, func(table.temperatures), rtol=0, atol=0)
    x = np.linspace(0, 100, 5001)
    assert np.max(np.abs(table(x) / func(x) - 1)) < 1.5e-3


def test_table_lines_and_listing():
    lines = library.table_lines(find("carbon-steel-en1993"), 100.0, "us")
    assert lines[0].startswith("carbon-steel-en1993")
    assert any(line.split()[:2] == ["420.0", "40.01"] for line in lines)
    assert any("EN 1999-1-2" in line for line in library.listing_lines())


# --- the case file picks entries, files and overrides ----------------------------------------


def _parse_material(material):
    """The base test case with its [material] table replaced."""
    return parse_case({**BASE, "material": material})


def test_case_name_picks_entry_and_keys_override():
    # every property given: the entry supplies nothing, so no stated range applies
    full = {**BASE["material"], "name": "stainless-steel"}
    mat = material_from_case(_parse_material(full).material)
    assert mat.density == 7800.0 and mat.valid_range is None
    # one override: the rest from EN 1993-1-2 Annex C
    mat = material_from_case(
        _parse_material({"name": "stainless-steel", "conductivity": 18}).material
    )
    assert float(mat.conductivity(500)) == 18.0
    assert float(mat.specific_heat(500)) == pytest.approx(534.0, rel=5e-4)
    assert mat.density == 7900.0 and mat.valid_range == (20.0, 1200.0)
    assert "EN 1993-1-2" in mat.source


def test_unknown_name_without_properties_is_an_error():
    with pytest.raises(CaseError, match=r"^material\.name: 'carbon stel' is not in the material"):
        _parse_material({"name": "carbon stel"})


def test_csv_file_with_units(tmp_path):
    """Columns in US units convert exactly: 1 Btu_IT/(h ft F) = 1.730735 W/(m K) and
    1 Btu_IT/(lb F) = 4186.8 J/(kg K) (NIST SP 811, 2008, App. B.9 [memory])."""
    path = tmp_path / "props.csv"
    path.write_text(
        "# a test file\n"
        "temperature [degF], conductivity [Btu/(h*ft*degF)], specific_heat [Btu/(lb*degF)]\n"
        "32, 30, 0.1\n"
        "932, 20, 0.15\n",
        encoding="utf-8",
    )
    out = read_property_csv(path)
    k, c = out["conductivity"], out["specific_heat"]
    assert np.allclose(k.temperatures, [0.0, 500.0], atol=1e-9)
    assert np.allclose(k.values, [30 * 1.730735, 20 * 1.730735], rtol=1e-6)
    assert np.allclose(c.values, [418.68, 628.02], rtol=1e-9)


def test_csv_file_through_the_case(tmp_path):
    (tmp_path / "steel.csv").write_text(
        "temperature, conductivity, specific_heat, density\n20, 50, 450, 7800\n800, 27, 650, 7800\n"
    )
    case = _parse_material({"table_file": "steel.csv"})
    mat = material_from_case(case.material, tmp_path)
    assert mat.density == 7800.0 and float(mat.conductivity(410)) == pytest.approx(38.5)


@pytest.mark.parametrize(
    "text, problem",
    [
        ("temperature, colour\n20, 1\n", "unknown column 'colour'"),
        ("temperature, conductivity\n20, 1\n10, 2\n", "temperatures must increase"),
        ("temperature, conductivity [mm]\n20, 1\n", "is a length"),
        ("temperature, conductivity\n20, x\n", "'x' is not a number"),
        ("temperature, density\n20, 7800\n900, 7600\n", "density varies"),
        ("temperature, conductivity\n20, -1\n", "must be > 0"),
    ],
)
def test_csv_errors_name_the_file_and_line(tmp_path, text, problem):
    path = tmp_path / "bad.csv"
    path.write_text(text)
    with pytest.raises(CaseError, match="material.table_file") as info:
        read_property_csv(path)
    assert problem in str(info.value) and "; fix: " in str(info.value)


# --- a run with a library steel: energy across the peak and the range warning ----------------


def _library_case(name, furnace, target):
    data = {**BASE, "material": {"name": name}, "furnace": furnace, "target": target}
    return parse_case(data)


def test_run_across_the_735_peak_keeps_the_energy_balance():
    """EN 1993 steel heated through the 735 C peak: the heat in through the face equals the
    enthalpy stored (energy balance of the enthalpy method) to 1e-4."""
    case = _library_case(
        "carbon-steel-en1993",
        {"temperature": 950, "htc": 30, "emissivity": 0.8},
        {"temperature": 900},
    )
    mesh = structured_rectangle(0.02, 0.002, 20, 1)
    result = run_problem(build_problem(case, mesh=mesh))
    assert result.status == "reached"
    assert abs(result.energy.relative_error) < 1e-4
    assert not any("stated for" in w for w in result.warnings)


def test_leaving_the_stated_range_warns():
    """Aluminium data are stated to 500 C (EN 1999-1-2); a run to 550 C says so, once."""
    case = _library_case(
        "aluminium-6000", {"temperature": 560, "htc": 200, "emissivity": 0}, {"temperature": 550}
    )
    mesh = structured_rectangle(0.02, 0.002, 10, 1)
    result = run_problem(build_problem(case, mesh=mesh))
    stated = [w for w in result.warnings if "stated for 0..500 C" in w]
    assert len(stated) == 1 and "EN 1999-1-2" in stated[0]
    assert not any("table covers" in w for w in result.warnings)


def test_material_table_class_unchanged_for_user_rows():
    """User tables still work as before: rows become a Table with no stated range."""
    case = make_case()
    mat = material_from_case(case.material)
    assert isinstance(mat.conductivity, Table) and mat.valid_range is None


def test_materials_command_lists_shows_and_plots(tmp_path, capsys):
    from femheat.cli import main

    assert main(["materials"]) == 0
    listing = capsys.readouterr().out
    assert "carbon-steel-en1993" in listing and "valid 0 to 500 C" in listing
    png = tmp_path / "steel.png"
    assert main(["materials", "carbon steel", "--step", "100", "--plot", str(png)]) == 0
    shown = capsys.readouterr().out
    assert "420.0      40.01" in shown and png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert main(["materials", "carbon stel"]) == 2
    assert "did you mean 'carbon-steel-en1993'?" in capsys.readouterr().err
