"""Furnace program design (`femheat plan`).

The part is a 300 mm thick carbon-steel slab (half modelled, 1D across the thickness), loaded
cold with the furnace at 20 C. The limits have the form of the pressure-vessel post-weld
heat-treatment rules (ASME BPVC Section VIII Div. 1, UCS-56 and Table UCS-56-1, as remembered
[memory], to be checked against the code in force): above 425 C at most 222 C/h per inch of
thickness but need not be below 56 C/h, so 56 C/h for 300 mm [derived: 222 * 25.4 / 300 =
18.8 < 56]; soak at 595 C minimum for 2 h + 15 min per 25 mm over 50 mm = 4.5 h [derived];
difference limit 40 K (the test's own, tighter than the 83 C hold rule).

Checks:

* the designed program, re-run as an ordinary case through the public API (`femheat.run` of
  the written ``designed_case.toml``, read through its own history and field frames, not the
  planner's observer), keeps every limit;
* it is shorter than one constant furnace ramp keeping the same limits, and the limit rate
  itself as one ramp breaks the rate limit at the part (the lagging part crosses 425 C while
  still catching up with the furnace);
* the planner's readings of difference and rate against the exact quasi-steady slab
  (Carslaw & Jaeger, *Conduction of Heat in Solids*, 2nd ed., 1959, sec. 3.3, surface
  temperature rising linearly [memory]);
* bad limits give one-line errors naming the field.
"""

from __future__ import annotations

import copy
import json
import math
import tomllib
from pathlib import Path

import numpy as np
import pytest

import femheat
from femheat.api import toml_text
from femheat.case import parse_case
from femheat.cli import main
from femheat.errors import CaseError
from femheat.plan import Evaluator, design_program, load_plan, parse_plan
from femheat.plan.design import Design, constant_rate, program_of, rounded
from femheat.program import to_schedule

SLAB = {
    "title": "300 mm slab, both faces in the furnace (test)",
    "part": {"model": "planar", "shape": "rectangle", "size": [0.15, 0.02]},
    "material": {"name": "carbon-steel-en1993"},
    "furnace": {"temperature": 20, "htc": 15, "emissivity": 0.85},
    "faces": {
        "xmin": {"condition": "symmetry"},
        "ymin": {"condition": "insulated"},
        "ymax": {"condition": "insulated"},
    },
    "initial": {"temperature": 20},
    "mesh": {"size": 0.01},
}

PLAN = {
    "title": "PWHT of a 300 mm slab (test)",
    "plan": {
        "case": "slab.toml",
        "max_difference": "40 degC",
        "heating_limit": {
            "heating": "222 degC/h",
            "min_rate": "56 degC/h",
            "above": "425 C",
            "thickness": "300 mm",
        },
        "soak": {"minimum": "595 C", "maximum": "650 C", "hold": "4.5 h"},
        "furnace": {"fastest": "250 degC/h", "slowest": "10 degC/h"},
        "search": {"runs": 16, "max_step": "10 min"},
    },
}

LIMIT_RATE = max(222.0 * 25.4 / 300.0, 56.0)  # C/h, UCS-56 form [memory], see the docstring
SOAK_MIN, SOAK_MAX, SOAK_HOLD = 595.0, 650.0, 4.5 * 3600.0
MAX_DIFFERENCE = 40.0


def _write(folder, case=SLAB, plan=PLAN):
    (folder / "slab.toml").write_text(toml_text(case), encoding="utf-8")
    path = folder / "plan.toml"
    path.write_text(toml_text(plan), encoding="utf-8")
    return path


def _plan(**changes):
    """The test plan with [plan] keys changed (dotted keys into nested tables)."""
    data = copy.deepcopy(PLAN)
    for key, value in changes.items():
        node = data["plan"]
        *head, last = key.split(".")
        for k in head:
            node = node.setdefault(k, {})
        if value is None:
            node.pop(last, None)
        else:
            node[last] = value
    return data


@pytest.fixture(scope="module")
def planned(tmp_path_factory):
    """`femheat plan` on the test plan: the results folder and its plan.json."""
    folder = tmp_path_factory.mktemp("plan")
    path = _write(folder)
    out = folder / "out"
    code = main(["plan", str(path), "--out", str(out), "--quiet"])
    summary = json.loads((out / "plan.json").read_text(encoding="utf-8"))
    return code, out, summary


def test_plan_writes_its_results(planned):
    code, out, summary = planned
    assert code == 0
    assert summary["status"] == "designed" and summary["complete"] is True
    for name in ("program.csv", "program.toml", "designed_case.toml", "history.csv", "plan.png"):
        assert (out / name).stat().st_size > 0, name
    lines = (out / "results.jsonl").read_text(encoding="utf-8").splitlines()
    assert len(lines) == summary["search"]["runs"]  # every run stored as it finished
    assert summary["limits"]["heating_limit_C_per_h"] == pytest.approx(LIMIT_RATE)
    assert all(m["ok"] for m in summary["margins"])


def test_designed_program_keeps_its_limits_as_an_ordinary_case(planned):
    """Limits from the docstring (UCS-56 form [memory]; 40 K the test's own)."""
    _, out, summary = planned
    table = tomllib.loads((out / "designed_case.toml").read_text(encoding="utf-8"))
    table["output"] = {"interval": 120.0}  # field frames every 2 min for the rates
    res = femheat.run(table)
    assert res.result.status == "reached"
    # the program the ordinary run used is the one pasted into program.toml
    pasted = tomllib.loads((out / "program.toml").read_text(encoding="utf-8"))
    schedule = parse_case(
        {**table, "furnace": {**table["furnace"], **pasted["furnace"]}}
    ).furnace.temperature
    used = res.result.problem.furnace_gas
    np.testing.assert_allclose(to_schedule(schedule).times, used.times, rtol=1e-12)
    np.testing.assert_allclose(to_schedule(schedule).values, used.values, rtol=1e-12)
    end = used.times[-1]
    assert end == pytest.approx(summary["program"]["length_s"])
    # (i) hottest minus coldest point, every step
    assert np.max(res.history["spread_C"]) <= MAX_DIFFERENCE
    # (ii) heating rate of every point above 425 C, from the field frames
    worst = -math.inf
    for frame in res.frames:
        hot = frame.temperature > 425.0
        if hot.any() and np.isfinite(frame.heating_rate[hot]).all():
            worst = max(worst, float(frame.heating_rate[hot].max()))
    assert 0.8 * LIMIT_RATE < worst <= LIMIT_RATE  # near the limit, not over it
    # (iii) the whole part at 595 C or more for 4.5 h before the program ends, none above 650
    through = res.summary["target"]["time_s"]
    assert through + SOAK_HOLD <= end + 1e-6
    t = res.history["time_s"]
    assert np.all(res.history["min_C"][t >= through] >= SOAK_MIN - 1e-6)
    assert np.max(res.history["max_C"]) <= SOAK_MAX


def test_designed_program_is_shorter_than_one_constant_ramp(planned):
    _, _, summary = planned
    length = summary["program"]["length_s"]
    one_ramp = summary["comparison"]["fastest_one_ramp_keeping_limits"]
    assert one_ramp["keeps_limits"]
    assert length < 0.9 * one_ramp["length_s"]
    # the limit rate as one ramp: the part lags the furnace at low temperature and crosses
    # 425 C while catching up, faster than the furnace ramp and the limit
    at_limit = summary["comparison"]["limit_rate_as_one_ramp"]
    assert at_limit["largest_rate_above_C_per_h"] > LIMIT_RATE
    assert not at_limit["keeps_limits"]
    assert length < at_limit["length_s"]


def test_readings_match_the_quasi_steady_slab(tmp_path):
    """A slab whose surface follows a furnace ramp r (h = 1e6 W/(m2 K), no radiation, constant
    properties): long after the start every point heats at r and the difference settles at
    r L^2 / (2 alpha) (Carslaw & Jaeger 2nd ed. sec. 3.3 [memory]; from alpha T'' = r with
    the mid-plane insulated [derived]). Linear elements with lumped capacity are exact at the
    nodes for this parabola [derived]."""
    k, rho, c, half = 40.0, 7850.0, 500.0, 0.05
    case = copy.deepcopy(SLAB)
    case["part"]["size"] = [half, 0.01]
    case["material"] = {"density": rho, "conductivity": k, "specific_heat": c}
    case["furnace"] = {"temperature": 20, "htc": 1e6, "emissivity": 0}
    case["mesh"] = {"size": 0.0025}
    _write(tmp_path, case=case)
    plan = parse_plan(_plan(), "plan.toml", tmp_path)
    r = 100.0 / 3600.0  # K/s
    e = Evaluator(plan)(constant_rate(r, 20.0, 650.0), "test")
    exact = r * half**2 / (2 * k / (rho * c))  # 3.41 K
    assert e.difference.value == pytest.approx(exact, rel=0.01)
    assert e.rate.value == pytest.approx(100.0, rel=0.01)


def test_limit_no_program_keeps_is_refused_naming_it(tmp_path, capsys):
    path = _write(tmp_path, plan=_plan(max_difference="1 degC"))
    out = tmp_path / "out"
    assert main(["plan", str(path), "--out", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert err.count("\n") == 0 and "Traceback" not in err
    assert err.startswith("error: plan.max_difference: 1 K cannot be kept") and "; fix: " in err
    summary = json.loads((out / "plan.json").read_text(encoding="utf-8"))
    assert summary["status"] == "bad input" and summary["complete"] is False
    # the run that showed it is kept
    assert len((out / "results.jsonl").read_text(encoding="utf-8").splitlines()) == 1


@pytest.mark.parametrize(
    ("change", "where"),
    [
        ({"heating_limit.heating": "-222 degC/h"}, "plan.heating_limit.heating"),
        ({"heating_limit.thickness": None}, "plan.heating_limit.thickness"),
        ({"heating_limit.thickness": "30 kg"}, "plan.heating_limit.thickness"),
        ({"max_difference": -5}, "plan.max_difference"),
        ({"max_difference": "83 mm"}, "plan.max_difference"),
        ({"soak.maximum": "590 C"}, "plan.soak.maximum"),
        ({"soak.setpoint": "700 C"}, "plan.soak.setpoint"),
        ({"soak.hold": None}, "plan.soak.hold"),
        ({"start": "600 C"}, "plan.start"),
        ({"furnace.slowest": "300 degC/h"}, "plan.furnace.slowest"),
        ({"search.margin": 0.7}, "plan.search.margin"),
        ({"max_diference": "83 degC"}, "plan.max_diference"),
        ({"case": "missing.toml"}, "plan.case"),
    ],
)
def test_bad_plan_gives_one_line_naming_the_field(tmp_path, change, where):
    _write(tmp_path)
    data = _plan(**change)
    with pytest.raises(CaseError) as info:
        parse_plan(data, "plan.toml", tmp_path)
    text = str(info.value)
    assert info.value.where == where, text
    assert "\n" not in text and "; fix: " in text


def test_bad_limit_exits_2_from_the_command_line(tmp_path, capsys):
    path = _write(tmp_path, plan=_plan(**{"heating_limit.heating": "-222 degC/h"}))
    assert main(["plan", str(path), "--out", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith("error: plan.heating_limit.heating: must be > 0")
    assert err.count("\n") == 0 and "Traceback" not in err


def test_rounded_program_and_its_case_text():
    """Rates down to three figures in C/h, holds up to whole minutes, the equalising setpoint
    down to a whole C [derived arithmetic]; the pasted text gives the same schedule."""
    d = Design(fast_rate=1237.7 / 3600, hold_at=424.6, hold_time=61.0, slow_rate=28.99 / 3600)
    p = rounded(program_of(d, 20.0, 650.0, below=True))
    ramp1, hold, ramp2, soak = p.steps
    assert ramp1.setpoint == 424.0 and ramp1.rate * 3600 == pytest.approx(1230.0)
    assert hold.duration == 120.0
    assert ramp2.rate * 3600 == pytest.approx(28.9)
    p = p.with_soak(303 * 60.0)
    text = p.case_text()
    case = parse_case(
        {**SLAB, "furnace": {**tomllib.loads(text)["furnace"], "htc": 15, "emissivity": 0.85}}
    )
    schedule = to_schedule(case.furnace.temperature)
    corners = np.array(p.corners())
    np.testing.assert_allclose(schedule.times, corners[:, 0], rtol=1e-12)
    np.testing.assert_allclose(schedule.values, corners[:, 1], rtol=1e-12)


@pytest.mark.slow
def test_search_is_deterministic(tmp_path):
    _write(tmp_path)
    plan = parse_plan(_plan(**{"search.runs": 8}), "plan.toml", tmp_path)
    a, b = design_program(plan), design_program(plan)
    assert a.program == b.program
    assert [e.through_s for e in a.evaluations] == [e.through_s for e in b.evaluations]


EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "plan" / "pwht_plan.toml"


def test_example_plan_reads_as_its_rule_says():
    """The example's 300 mm ring: 222 C/h * 25.4 / 300 = 18.8 C/h, raised to the 56 C/h floor;
    soak 2 h + 15 min per 25 mm over 50 mm = 4.5 h (UCS-56 form [memory], docstring)."""
    plan = load_plan(EXAMPLE)
    assert plan.limit_rate * 3600 == pytest.approx(56.0)
    assert plan.soak.hold == pytest.approx((2 + 0.25 * (300 - 50) / 25) * 3600)
    assert plan.case.part.shape == "ring" and plan.below_phase


@pytest.mark.slow
def test_example_plan_runs(tmp_path):
    out = tmp_path / "ring"
    assert main(["plan", str(EXAMPLE), "--out", str(out), "--quiet"]) == 0
    summary = json.loads((out / "plan.json").read_text(encoding="utf-8"))
    one_ramp = summary["comparison"]["fastest_one_ramp_keeping_limits"]["length_s"]
    assert summary["program"]["length_s"] < one_ramp
    assert all(m["ok"] for m in summary["margins"])


def test_a_failed_plan_keeps_the_runs_it_made(tmp_path, monkeypatch):
    """A run failing mid-search (here the third, made to raise) leaves the finished runs in
    results.jsonl and runs.csv and a plan.json that says what happened."""
    import femheat.plan.search as search
    from femheat.errors import SolverError

    class Failing(search.Evaluator):
        def __call__(self, *args, **kwargs):
            if self.count == 2:
                raise SolverError("Newton failed at the smallest step (made up by the test)")
            return super().__call__(*args, **kwargs)

    monkeypatch.setattr(search, "Evaluator", Failing)
    path = _write(tmp_path)
    out = tmp_path / "out"
    assert main(["plan", str(path), "--out", str(out), "--quiet"]) == 1
    summary = json.loads((out / "plan.json").read_text(encoding="utf-8"))
    assert summary["status"] == "failed" and summary["complete"] is False
    assert "made up by the test" in summary["reason"]
    assert len((out / "results.jsonl").read_text(encoding="utf-8").splitlines()) == 2
    assert len((out / "runs.csv").read_text(encoding="utf-8").splitlines()) == 3  # + header
    assert summary["best_so_far"]["label"] == "slowest ramp"  # the only run keeping the limits
