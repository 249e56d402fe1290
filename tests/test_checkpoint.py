"""Checkpoints in the library: the state survives the file, a stopped march resumes exactly,
and a changed case or mesh is refused.

The reference for "exactly" is the same run without a stop: the resumed run must reach the
uninterrupted time to target to 1e-6 relative (the march state is restored bit for bit; the
linear solver's kept preconditioner is rebuilt, so the solves agree to their tolerance only).
The case is the slab of ``validation/cases/slab_series.toml`` (exact series, Carslaw & Jaeger
2nd ed. 1959; Incropera 6th ed. sec. 5.5), whose time to target is also checked against the
series to 0.5 % as ``femheat.validate`` does, so the resumed run is right, not only repeatable.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

from femheat import exact
from femheat.api import recorder_for
from femheat.case import load_case
from femheat.checkpoint import (
    NPZ_NAME,
    CaseIdentity,
    CheckpointWriter,
    _decode,
    _encode,
    plain_state,
    read_checkpoint,
    restore_plain,
)
from femheat.errors import CaseError
from femheat.problem import build_problem
from femheat.run import run_problem
from femheat.watch import SettleWatch

ROOT = Path(__file__).parents[1]
SLAB = ROOT / "validation" / "cases" / "slab_series.toml"


def slab_exact_time() -> float:
    """Time for the mid-plane of the slab case to reach 880 C (exact series [computed])."""
    k, rho, c, h, half = 40.0, 7800.0, 460.0, 250.0, 0.05
    alpha = k / (rho * c)
    theta = (880.0 - 900.0) / (20.0 - 900.0)
    return exact.fourier_at("slab", h * half / k, theta) * half**2 / alpha


class StopAfter:
    """A stop request after `n` accepted steps (what a signal does, without the signal)."""

    def __init__(self, n: int):
        self.n = n
        self.calls = 0

    def __call__(self) -> str | None:
        self.calls += 1
        return "interrupted by a test" if self.calls >= self.n else None


@pytest.fixture(scope="module")
def slab():
    case = load_case(SLAB)
    problem = build_problem(case)
    reference = run_problem(problem)
    return case, problem, reference


def test_encoding_round_trip_keeps_values_and_types():
    value = {
        "a": np.arange(5.0),
        "rows": [[float(i), 2.0 * i, math.nan] for i in range(10)],
        "pairs": [(1.0, 2.0), (3.0, 4.0)],
        "inf": math.inf,
        "none": None,
        "text": "xmin",
        "n": np.int64(3),
        "flag": True,
    }
    arrays: dict = {}
    text = json.dumps(_encode(value, arrays, "v"), allow_nan=False)  # strict JSON
    back = _decode(json.loads(text), arrays)
    np.testing.assert_array_equal(back["a"], value["a"])
    assert len(back["rows"]) == 10 and back["rows"][3][:2] == [3.0, 6.0]
    assert math.isnan(back["rows"][3][2])
    assert back["pairs"] == [(1.0, 2.0), (3.0, 4.0)]
    assert back["inf"] == math.inf and back["none"] is None and back["text"] == "xmin"
    assert back["n"] == 3 and back["flag"] is True


def test_plain_state_leaves_out_references_and_restores():
    w = SettleWatch(100.0, 880.0)
    w._rates = [(1.0, 2.0)]
    w.remaining_K = math.inf
    state = plain_state(w)
    assert set(state) == {"last_change", "span", "_rates", "remaining_K", "settled"}
    fresh = SettleWatch(0.0, 1.0)
    restore_plain(fresh, state)
    assert (fresh.last_change, fresh._rates, fresh.remaining_K) == (100.0, [(1.0, 2.0)], math.inf)


def test_stopped_march_resumes_to_the_same_target_time(slab, tmp_path):
    case, problem, reference = slab
    # the uninterrupted run against the exact series (same 0.5 % as femheat.validate)
    assert reference.target.time == pytest.approx(slab_exact_time(), rel=5e-3)

    identity = CaseIdentity.of(case, SLAB.read_text(encoding="utf-8"), str(SLAB))
    recorder = recorder_for(problem, case.output, tmp_path)
    writer = CheckpointWriter(tmp_path, identity, every_s=None, keep={"recorder": recorder})
    first = run_problem(problem, [recorder, writer], stop=StopAfter(20))
    assert first.status == "interrupted" and "interrupted by a test" in first.reason
    assert not first.target.reached
    writer.write()
    assert (tmp_path / NPZ_NAME).is_file()

    ckpt = read_checkpoint(tmp_path)
    ckpt.check_case(identity)
    mesh = ckpt.load_mesh()  # the run continues on its own mesh
    np.testing.assert_array_equal(mesh.points, problem.mesh.points)
    assert set(mesh.faces) == set(problem.mesh.faces)
    problem2 = build_problem(load_case(SLAB), mesh=mesh)
    recorder2 = recorder_for(problem2, case.output, tmp_path)
    recorder2.restore(ckpt.observers["recorder"])
    second = run_problem(problem2, [recorder2], resume=ckpt.run)
    recorder2.finish()

    assert second.status == "reached"
    assert second.target.time == pytest.approx(reference.target.time, rel=1e-6)
    assert second.stats.steps == reference.stats.steps
    assert len(second.history.rows) == len(reference.history.rows)
    # the steps after the resume differ from the reference's by the linear solver's tolerance
    # (its preconditioner is rebuilt): the history agrees to 1e-4, well inside the step error
    np.testing.assert_allclose(
        np.asarray(second.history.rows), np.asarray(reference.history.rows), rtol=1e-4, atol=1e-4
    )
    assert abs(second.energy.relative_error) < 1e-3
    assert recorder2.target_time == pytest.approx(reference.target.time, rel=1e-6)
    assert len(recorder2.rates.time_s) == reference.stats.steps


def test_changed_case_is_refused_naming_the_file_and_the_change(slab, tmp_path):
    case, problem, _ = slab
    text = SLAB.read_text(encoding="utf-8")
    identity = CaseIdentity.of(case, text, str(SLAB))
    writer = CheckpointWriter(tmp_path, identity, every_s=None)
    run_problem(problem, [writer], stop=StopAfter(3))
    writer.write()
    ckpt = read_checkpoint(tmp_path)

    changed_path = tmp_path / "slab_changed.toml"
    changed_path.write_text(text.replace("htc = 250", "htc = 300"), encoding="utf-8")
    changed = load_case(changed_path)
    with pytest.raises(CaseError) as info:
        ckpt.check_case(CaseIdentity.of(changed, changed_path.read_text(), str(changed_path)))
    msg = str(info.value)
    assert info.value.where == str(changed_path)
    assert "furnace.htc: 250.0 -> 300.0" in msg
    assert msg.endswith("fix: run without --resume or restore the case")

    comment = text.replace("[part]", "# another comment\n[part]")
    with pytest.raises(CaseError, match="only comments or layout"):
        ckpt.check_case(CaseIdentity.of(case, comment, "slab_commented.toml"))


def test_other_mesh_is_refused(slab, tmp_path):
    case, problem, _ = slab
    identity = CaseIdentity.of(case, SLAB.read_text(encoding="utf-8"), str(SLAB))
    writer = CheckpointWriter(tmp_path, identity, every_s=None)
    run_problem(problem, [writer], stop=StopAfter(2))
    writer.write()
    ckpt = read_checkpoint(tmp_path)
    finer = build_problem(
        case.model_copy(update={"mesh": case.mesh.model_copy(update={"size": 0.002})})
    )
    with pytest.raises(CaseError, match=r"mesh made from the case differs .* nodes"):
        ckpt.check_mesh(finer.mesh, str(SLAB))


def test_missing_or_damaged_checkpoint_is_a_case_error(tmp_path):
    with pytest.raises(CaseError, match=r"^--resume: no checkpoint in"):
        read_checkpoint(tmp_path)
    (tmp_path / NPZ_NAME).write_bytes(b"PK\x03\x04 not a zip")
    with pytest.raises(CaseError, match="cannot be read"):
        read_checkpoint(tmp_path)
