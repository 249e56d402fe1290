"""Calibration: a synthetic thermocouple log made by femheat itself with known h and
emissivity plus Gaussian noise; the fit must recover the values within its reported 95 %
intervals, and the intervals must be informative.

Independent reference for the noise level: with the true values the residual standard
deviation is the noise's (the fitted s must be near 2 K, chi-square with ~180 degrees of
freedom, so within about 15 % [derived]). The furnace lag helper is checked against a
schedule shifted by hand.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from femheat.cli import main
from femheat.errors import CaseError
from femheat.study.fit import ThermocoupleLog, fit_case, read_log, shift_rows, simulate_probes
from femheat.study.outcome import mesh_for_table

TABLE = {
    "title": "fit test",
    "part": {"model": "planar", "shape": "rectangle", "size": [0.04, 0.005]},
    "material": {"density": 7800, "conductivity": 30, "specific_heat": 500},
    "furnace": {"temperature": [[0, 100], [1800, 850], [7200, 850]], "htc": 40, "emissivity": 0.5},
    "faces": {
        "xmin": {"condition": "symmetry"},
        "ymin": {"condition": "insulated"},
        "ymax": {"condition": "insulated"},
    },
    "initial": {"temperature": 20},
    "mesh": {"size": 0.005},
    "probes": [{"name": "surface", "point": [0.04, 0.0]}, {"name": "core", "point": [0.0, 0.0]}],
}
TRUE_HTC, TRUE_EPS, NOISE_K = 70.0, 0.8, 2.0


def _synthetic(tmp_path, seed=3):
    times = np.arange(0.0, 3 * 3600 + 1, 120.0)
    true = json.loads(json.dumps(TABLE))
    true["furnace"].update(htc=TRUE_HTC, emissivity=TRUE_EPS)
    mesh = mesh_for_table(TABLE, tmp_path)
    sim = simulate_probes(true, tmp_path, times, mesh)
    rng = np.random.default_rng(seed)
    noisy = {k: v + rng.normal(0.0, NOISE_K, v.size) for k, v in sim.items()}
    return ThermocoupleLog(times, noisy, "synthetic"), mesh


def test_fit_recovers_htc_and_emissivity_within_its_intervals(tmp_path):
    log, mesh = _synthetic(tmp_path)
    fit = fit_case(TABLE, tmp_path, log, ["htc", "emissivity"], mesh)
    rows = {r["name"]: r for r in fit.table()}
    for name, true in (("htc", TRUE_HTC), ("emissivity", TRUE_EPS)):
        r = rows[name]
        assert r["low"] <= true <= r["high"], (name, r, true)
        assert 0 < r["half_width"] < 0.05 * true, (name, r)  # informative, not vacuous
    assert fit.sigma == pytest.approx(NOISE_K, rel=0.15)
    for res in fit.residuals.values():
        assert abs(res["mean_K"]) < 1.0 and res["readings"] == log.time_s.size


def test_shift_rows_by_hand():
    rows = [[0, 100], [1800, 850], [7200, 850]]
    assert shift_rows(rows, 600) == [[0.0, 100.0], [600.0, 100.0], [2400.0, 850.0], [7800.0, 850.0]]
    # 900 s earlier: the ramp is half done at the new time 0 (100 + 0.5 * 750 = 475) [derived]
    assert shift_rows(rows, -900) == [[0.0, 475.0], [900.0, 850.0], [6300.0, 850.0]]
    assert shift_rows(rows, 0.0) == [[0.0, 100.0], [1800.0, 850.0], [7200.0, 850.0]]


def test_fit_cli_writes_table_and_rejects_bad_names(tmp_path):
    log, _ = _synthetic(tmp_path, seed=5)
    from femheat.api import toml_text

    case = tmp_path / "plate.toml"
    start = json.loads(json.dumps(TABLE))
    start["furnace"].update(htc=60.0, emissivity=TRUE_EPS)  # fit h alone, from nearby
    case.write_text(toml_text(start), encoding="utf-8")
    lines = ["time_s,surface,core"] + [
        f"{t:g},{s:.2f},{c:.2f}"
        for t, s, c in zip(log.time_s, log.values["surface"], log.values["core"], strict=True)
    ]
    lines[5] = lines[5].rsplit(",", 1)[0] + ","  # an empty cell is skipped
    (tmp_path / "log.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    assert read_log(tmp_path / "log.csv", ["surface", "core"]).values["core"][4] != 0
    out = tmp_path / "fit"
    code = main(["fit", str(case), str(tmp_path / "log.csv"), "--fit", "htc", "--out", str(out)])
    assert code == 0
    data = json.loads((out / "fit.json").read_text())
    fitted = data["parameters"][0]
    assert fitted["name"] == "htc" and fitted["low"] <= TRUE_HTC <= fitted["high"]
    assert data["residuals"]["core"]["readings"] == log.time_s.size - 1
    assert (out / "fit.png").is_file() and (out / "fit_curves.csv").is_file()
    with pytest.raises(CaseError, match="unknown parameter"):
        fit_case(TABLE, tmp_path, log, ["conductivity"])
    bad = ["fit", str(case), str(tmp_path / "log.csv"), "--fit", "lag,conductance"]
    assert main([*bad, "--out", str(tmp_path / "bad")]) == 2
    assert not (tmp_path / "bad").exists()


@pytest.mark.slow
def test_demo_log_fit_recovers_the_invented_values(tmp_path):
    """examples/studies/survey_log.csv was made by make_survey_log.py with h = 32, emissivity
    0.78 and a 600 s furnace lag (invented); the fit of all three must bracket them."""
    from pathlib import Path

    here = Path(__file__).resolve().parents[1] / "examples" / "studies"
    out = tmp_path / "demo"
    argv = ["fit", str(here / "plate.toml"), str(here / "survey_log.csv")]
    assert main([*argv, "--fit", "htc,emissivity,lag", "--out", str(out)]) == 0
    rows = {r["name"]: r for r in json.loads((out / "fit.json").read_text())["parameters"]}
    for name, true in (("htc", 32.0), ("emissivity", 0.78), ("lag", 600.0)):
        assert rows[name]["low"] <= true <= rows[name]["high"], rows[name]
