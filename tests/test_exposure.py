"""Per-face exposure: a face on the hearth (contact conductance), a shielded face (radiation
factor) and a face in another zone, against closed-form and exact solutions."""

from __future__ import annotations

import math

import numpy as np
import pytest

from femheat import exact
from femheat.case import parse_case
from femheat.furnace import Contact, Exposure, contact_flux
from femheat.problem import build_problem
from femheat.run import run_problem

from .helpers import BASE, structured_rectangle

K, RHO, C = 40.0, 7800.0, 460.0  # BASE material: W/(m K), kg/m3, J/(kg K)


def _case(faces, furnace=None, target=None, initial=20.0, solver=None):
    data = {
        **BASE,
        "furnace": furnace or BASE["furnace"],
        "faces": faces,
        "initial": {"temperature": initial},
        "target": target,
    }
    if target is None:
        del data["target"]
    if solver:
        data["solver"] = solver
    return parse_case(data)


def test_contact_flux_law():
    q, dq = contact_flux(np.array([100.0, 300.0]), 200.0, 50.0)
    assert q.tolist() == [5000.0, -5000.0] and dq.tolist() == [-50.0, -50.0]


def test_hearth_steady_state_is_series_resistances():
    """Steady 1D conduction from a hearth at 800 C through a contact conductance h_c = 100
    W/(m2 K) into a slab of L = 50 mm, k = 40 W/(m K), whose far face is held at 200 C.
    Series resistances (Incropera et al., 6th ed., sec. 3.1, thermal circuits with contact
    resistance [memory for the section]): q = (800 - 200)/(1/h_c + L/k) = 53333.3 W/m2 and
    the face on the hearth sits at 800 - q/h_c = 266.67 C [derived]. 1D linear elements are
    nodally exact for this linear profile."""
    length, height = 0.05, 0.005
    mesh = structured_rectangle(length, height, 10, 1)
    case = _case(
        {
            "xmin": {"condition": "hearth", "conductance": 100, "hearth_temperature": 800},
            "xmax": {"condition": "fixed", "temperature": 200},
            "ymin": {"condition": "insulated"},
            "ymax": {"condition": "insulated"},
        },
        initial=200.0,
    )
    problem = build_problem(case, mesh=mesh)
    assert isinstance(problem.model.faces[0].condition, Contact)
    result = run_problem(problem)
    assert result.settled
    q = 600.0 / (1 / 100 + length / K)
    on_hearth = mesh.points[:, 0] == 0.0
    assert np.allclose(result.final[on_hearth], 800.0 - q / 100.0, atol=1e-2)
    flows = problem.model.face_flows(result.final, result.end_time, np.zeros(mesh.nodes))
    assert flows["xmin"] == pytest.approx(q * height, rel=1e-4)  # W per m of depth
    assert flows["xmax"] == pytest.approx(-q * height, rel=1e-4)


def test_hearth_heats_on_a_program_and_keeps_the_energy_balance():
    """A hearth that follows a ramp (its own program) heats the part through the contact:
    heat in = enthalpy stored."""
    mesh = structured_rectangle(0.04, 0.004, 16, 1)
    hearth = {"start": 20, "steps": [{"ramp_to": 700, "rate": "600 degC/h"}, {"hold": "4 h"}]}
    case = _case(
        {
            "xmin": {"condition": "hearth", "conductance": 300, "hearth_temperature": hearth},
            "xmax": {"condition": "insulated"},
            "ymin": {"condition": "insulated"},
            "ymax": {"condition": "insulated"},
        },
        target={"temperature": 650},
    )
    problem = build_problem(case, mesh=mesh)
    assert 4080.0 in problem.settings.breakpoints  # 680 K at 600 K/h = 1.1333 h
    result = run_problem(problem)
    assert result.status == "reached"
    assert abs(result.energy.relative_error) < 1e-4
    assert result.energy.heat_in["xmin"] > 0.0


def _slab_time(faces, furnace, target):
    mesh = structured_rectangle(0.05, 0.005, 25, 1)
    case = _case(faces, furnace=furnace, target={"temperature": target})
    return run_problem(build_problem(case, mesh=mesh))


SYMMETRIC = {
    "xmin": {"condition": "symmetry"},
    "ymin": {"condition": "insulated"},
    "ymax": {"condition": "insulated"},
}


def test_radiation_factor_zero_is_convection_only():
    """A fully shielded face (radiation factor 0) under a furnace with emissivity 0.8 heats by
    convection alone: the time to 880 C equals the exact slab series with Bi = hL/k = 0.125
    (Carslaw & Jaeger, 2nd ed., 1959; Incropera 6th ed. sec. 5.5), and equals the run with
    emissivity 0."""
    furnace = {"temperature": 900, "htc": 100, "emissivity": 0.8}
    shielded = _slab_time(
        {**SYMMETRIC, "xmax": {"condition": "furnace", "radiation_factor": 0}}, furnace, 880
    )
    plain = _slab_time(SYMMETRIC, {**furnace, "emissivity": 0.0}, 880)
    fo = exact.fourier_at("slab", 100 * 0.05 / K, (880 - 900) / (20 - 900), 0.0)
    t_exact = fo * 0.05**2 / (K / (RHO * C))
    assert shielded.target.time == pytest.approx(t_exact, rel=2e-3)
    assert shielded.target.time == pytest.approx(plain.target.time, rel=1e-7)


def test_radiation_factor_scales_the_emissivity():
    """Factor 0.5 on emissivity 0.8 is emissivity 0.4 times view (the flux law is linear in
    it), and lies between the open and the shielded face."""
    furnace = {"temperature": 900, "htc": 20, "emissivity": 0.8}
    half = _slab_time(
        {**SYMMETRIC, "xmax": {"condition": "furnace", "radiation_factor": 0.5}}, furnace, 850
    )
    same = _slab_time(SYMMETRIC, {**furnace, "emissivity": 0.4}, 850)
    open_ = _slab_time(SYMMETRIC, furnace, 850)
    assert half.target.time == pytest.approx(same.target.time, rel=1e-7)
    assert open_.target.time < half.target.time


def test_zone_face_has_its_own_temperature():
    """A face in a zone at 600 C (furnace htc, shielded from radiation) heats toward 600 C,
    not the 900 C furnace: exact slab series with T_inf = 600 C, Bi = 0.125 (as above)."""
    furnace = {"temperature": 900, "htc": 100, "emissivity": 0.8}
    zone = {"condition": "zone", "ambient": "600 C", "radiation_factor": 0}
    result = _slab_time({**SYMMETRIC, "xmax": zone}, furnace, 590)
    cond = result.problem.model.faces[1].condition
    assert isinstance(cond, Exposure) and (cond.htc, cond.emissivity) == (100.0, 0.0)
    fo = exact.fourier_at("slab", 100 * 0.05 / K, (590 - 600) / (20 - 600), 0.0)
    assert result.target.time == pytest.approx(fo * 0.05**2 * RHO * C / K, rel=2e-3)
    assert math.isclose(cond.gas(1e5), 600.0)
