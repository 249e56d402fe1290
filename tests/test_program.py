"""Furnace programs: ramp-and-hold curves, the thickness-dependent rate limit, and what a run
prints about the schedule it uses."""

from __future__ import annotations

import numpy as np
import pytest

from femheat.case import Program, parse_case
from femheat.cli import main
from femheat.errors import CaseError
from femheat.problem import build_problem
from femheat.program import program_schedule, schedule_lines, schedule_segments

from .helpers import BASE, structured_rectangle

HOUR = 3600.0


def _program(**data) -> Program:
    return Program.model_validate(data)


def test_ramp_hold_cool_reproduces_the_furnace_curve():
    """400 C, up to 620 C at 100 C/h, hold 2 h, down to 400 C at 150 C/h. Corners [derived]:
    220 K / 100 K/h = 2.2 h; + 2 h hold = 4.2 h; + 220 K / 150 K/h = 1.4667 h -> 5.6667 h."""
    prog = _program(
        start="400 C",
        steps=[
            {"ramp_to": "620 C", "rate": "100 degC/h"},
            {"hold": "2 h"},
            {"cool_to": "400 C", "rate": "150 degC/h"},
        ],
    )
    sched = program_schedule(prog, "furnace.temperature")
    assert np.allclose(sched.times, [0.0, 2.2 * HOUR, 4.2 * HOUR, (4.2 + 220 / 150) * HOUR])
    assert np.allclose(sched.values, [400.0, 620.0, 620.0, 400.0])
    # points along the curve: half way up the ramp, in the hold, during cooling, after the end
    assert sched(1.1 * HOUR) == pytest.approx(510.0)
    assert sched(3.0 * HOUR) == pytest.approx(620.0)
    assert sched(4.2 * HOUR + 1800.0) == pytest.approx(620.0 - 75.0)
    assert sched(100 * HOUR) == pytest.approx(400.0)
    kinds = [s.kind for s in schedule_segments(sched)]
    assert kinds == ["ramp", "hold", "cool"]


def test_ramp_by_duration_and_fahrenheit_rates():
    """A ramp given by its duration; and 180 degF/h is exactly 100 K/h (NIST SP 811 B.9)."""
    prog = _program(
        start=20,
        steps=[{"ramp_to": 620, "duration": "3 h"}, {"ramp_to": 820, "rate": "180 degF/h"}],
    )
    sched = program_schedule(prog, "x")
    assert np.allclose(sched.times, [0.0, 3 * HOUR, 5 * HOUR])


# ASME BPVC Section VIII Div. 1, UCS-56 (as remembered in REFERENCES.md sec. 4, [memory]):
# above 425 C heat at most 222 C/h divided by the thickness in inches, need not be below
# 56 C/h; cool at most 278 C/h divided by the thickness. The ceiling 222 C/h is the default
# max_rate (the rate as given).
PWHT_LIMIT = {
    "heating": "222 degC/h",
    "cooling": "278 degC/h",
    "min_rate": "56 degC/h",
    "above": "425 C",
}


@pytest.mark.parametrize(
    "thickness_mm, expected_c_per_h",
    [(50.0, 222 * 25.4 / 50), (150.0, 56.0), (10.0, 222.0)],  # [derived] from the rule
)
def test_thickness_rate_limit_like_pwht_rules(thickness_mm, expected_c_per_h):
    prog = _program(
        start="300 C",
        steps=[{"ramp_to": "620 C", "rate": "300 degC/h"}, {"hold": "1 h"}],
        limit={**PWHT_LIMIT, "thickness": f"{thickness_mm} mm"},
    )
    notes: list[str] = []
    sched = program_schedule(prog, "furnace.temperature", notes=notes)
    # below 425 C the requested 300 C/h; above it the limit
    t_split = (425 - 300) / 300 * HOUR
    t_end = t_split + (620 - 425) / expected_c_per_h * HOUR
    assert np.allclose(sched.times[:3], [0.0, t_split, t_end], rtol=1e-12)
    assert np.allclose(sched.values[:3], [300.0, 425.0, 620.0])
    assert len(notes) == 1 and "slowed from 300 C/h" in notes[0]


def test_ramp_without_rate_runs_at_the_limit_and_cooling_has_its_own():
    """50 mm: heating 222/1.9685 = 112.78 C/h, cooling 278/1.9685 = 141.22 C/h [derived]."""
    prog = _program(
        start="425 C",
        steps=[{"ramp_to": "620 C"}, {"hold": "2 h"}, {"cool_to": "425 C"}],
        limit={**PWHT_LIMIT, "thickness": "50 mm"},
    )
    sched = program_schedule(prog, "furnace.temperature")
    up = 195 / (222 * 25.4 / 50) * HOUR
    down = 195 / (278 * 25.4 / 50) * HOUR
    assert np.allclose(sched.times, [0.0, up, up + 2 * HOUR, up + 2 * HOUR + down], rtol=1e-12)


def test_ramp_needs_a_rate_where_no_limit_applies():
    prog = _program(
        start="20 C", steps=[{"ramp_to": "620 C"}], limit=PWHT_LIMIT | {"thickness": 0.05}
    )
    with pytest.raises(CaseError) as info:
        program_schedule(prog, "furnace.temperature")
    assert info.value.where == "furnace.temperature.steps[0].rate"
    assert "only above 425 C" in str(info.value)
    prog = _program(start="20 C", steps=[{"ramp_to": "620 C"}])
    with pytest.raises(CaseError, match="no rate limit sets it"):
        program_schedule(prog, "furnace.temperature")


def test_limit_without_any_thickness_is_an_error():
    prog = _program(start=425, steps=[{"ramp_to": 620}], limit=PWHT_LIMIT)
    with pytest.raises(CaseError) as info:
        program_schedule(prog, "furnace.temperature", thickness=None)
    assert info.value.where == "furnace.temperature.limit.thickness"


@pytest.mark.parametrize(
    "steps, where",
    [
        ([{"ramp_to": 600, "hold": 60}], "furnace.temperature.steps[0]"),
        ([{"cool_to": 900, "rate": 0.01}], "furnace.temperature.steps[0].cool_to"),
        ([{"ramp_to": 400, "rate": 0.01}], "furnace.temperature.steps[0].ramp_to"),
        ([{"hold": "2 h", "rate": 1}], "furnace.temperature.steps[0].rate"),
        ([{"ramp_to": 600, "rate": "-5 degC/h"}], "furnace.temperature.steps[0].rate"),
        ([{"ramp_to": 600, "speed": 1}], "furnace.temperature.steps[0].speed"),
        ([], "furnace.temperature.steps"),
    ],
)
def test_bad_programs_name_the_step(steps, where):
    data = {**BASE, "furnace": {**BASE["furnace"], "temperature": {"start": 400, "steps": steps}}}
    with pytest.raises(CaseError) as info:
        parse_case(data)
    assert info.value.where == where, str(info.value)


def _program_case(limit=None, faces=None):
    furnace = {
        "temperature": {
            "start": "425 C",
            "steps": [{"ramp_to": "650 C", "rate": "200 degC/h"}, {"hold": "1 h"}],
            **({"limit": limit} if limit else {}),
        },
        "htc": 40,
        "emissivity": 0.8,
    }
    data = {**BASE, "furnace": furnace, "target": {"temperature": 640}}
    if faces:
        data["faces"] = {**BASE["faces"], **faces}
    return parse_case(data)


def test_program_drives_the_run_and_its_corners_are_breakpoints():
    mesh = structured_rectangle(0.05, 0.005, 20, 1)
    problem = build_problem(_program_case(), mesh=mesh)
    t_ramp = 225 / 200 * HOUR
    assert np.allclose(problem.furnace_gas.times, [0.0, t_ramp, t_ramp + HOUR])
    assert np.allclose(problem.settings.breakpoints, [t_ramp, t_ramp + HOUR])


def test_limit_thickness_from_the_part_is_noted():
    """Without limit.thickness the part's thinnest modelled section (here 5 mm) is used, and a
    warning says so: a half-model would halve the real thickness."""
    mesh = structured_rectangle(0.05, 0.005, 20, 1)
    problem = build_problem(_program_case(limit=PWHT_LIMIT), mesh=mesh)
    assert any("thinnest modelled section, 5 mm" in w for w in problem.warnings)
    # 5 mm: 222 * 25.4 / 5 > 222, so the ceiling (222 C/h) governs; the 200 C/h ramp stands
    assert np.allclose(problem.furnace_gas.times[1], 225 / 200 * HOUR)


def test_schedule_lines():
    prog = _program(start=400, steps=[{"ramp_to": 620, "rate": "100 C/h"}, {"hold": "2 h"}])
    lines = schedule_lines(program_schedule(prog, "x"), "us")
    assert " ".join(lines[0].split()) == (
        "0:00 - 2:12 ramp 400 C (752 F) -> 620 C (1148 F) at +100 C/h (+180 F/h)"
    )
    assert "hold" in lines[1] and lines[-1] == "after 4:12: held at 620 C (1148 F)"


def test_run_prints_the_schedule(tmp_path, capsys):
    path = tmp_path / "prog.toml"
    path.write_text(
        """
[part]
model = "planar"
shape = "rectangle"
size = [0.01, 0.002]
[material]
name = "carbon-steel"
[furnace]
htc = 40
emissivity = 0.8
[furnace.temperature]
start = "400 C"
steps = [{ramp_to = "620 C", rate = "300 degC/h"}, {hold = "1 h"}]
[initial]
temperature = 20
[target]
temperature = 600
[output]
fields = false
pictures = false
report = false
""",
        encoding="utf-8",
    )
    assert main(["run", str(path), "--out", str(tmp_path / "out")]) == 0
    text = capsys.readouterr().out
    assert "furnace temperature:" in text
    assert "0:00 - 0:44 ramp 400 C -> 620 C at +300 C/h" in " ".join(text.split())


def test_bare_number_rate_is_per_second_and_a_fast_one_is_noted():
    """Bare numbers are SI: rate = 100 is 100 K/s, which the program keeps but notes, since a
    rate per hour was probably meant."""
    prog = _program(start=20, steps=[{"ramp_to": 620, "rate": 100}])
    notes: list[str] = []
    sched = program_schedule(prog, "furnace.temperature", notes=notes)
    assert sched.times[-1] == pytest.approx(6.0)
    assert len(notes) == 1 and "very fast" in notes[0] and "degC/h" in notes[0]
