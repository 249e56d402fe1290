"""Runs stopped from outside: SIGINT, SIGTERM and SIGKILL at a random moment of the march.

Each run is a subprocess (``python -m femheat run``) of a planar plate section, charged cold
into a furnace that recovers from 650 C to 900 C (an invented case, about 4 s of stepping).
The signal comes a random 0.2 to 0.8 s after the run has started stepping (history.csv has
appeared; for SIGKILL, after its first checkpoint). Afterwards every file left must be
readable: history.csv, the field frames listed in fields.pvd, summary.json (``"complete":
false``, status "interrupted" and the signal for SIGINT/SIGTERM; status "running" after
SIGKILL, which gives the run no chance to write) and the checkpoint. ``--resume`` must then
reach the time to target of an uninterrupted run to 1e-6 relative (the reference is that run
itself; the exit codes are the shell's 128 + signal number).
"""

from __future__ import annotations

import csv
import json
import os
import random
import signal
import subprocess
import sys
import time
import xml.etree.ElementTree as ET
from pathlib import Path

import meshio
import numpy as np
import pytest

from femheat.checkpoint import read_checkpoint
from femheat.cli import main

CASE = """\
title = "plate section for interruption tests (invented)"
[part]
model = "planar"
shape = "rectangle"
size = [0.06, 0.03]
[material]
density = 7850
conductivity = [[20, 53.3], [800, 27.4], [1200, 27.3]]
specific_heat = [[20, 440], [600, 760], [735, 5000], [900, 650], [1200, 650]]
[furnace]
temperature = [[0, 650], [1800, 900]]
htc = 25
emissivity = 0.85
[faces.xmin]
condition = "symmetry"
[initial]
temperature = 20
[target]
temperature = 880
[mesh]
size = 0.0007
[solver]
tolerance = 1e-6
[output]
interval = 300
pictures = false
report = false
"""

SIGNALS = {"SIGINT": signal.SIGINT, "SIGTERM": signal.SIGTERM, "SIGKILL": signal.SIGKILL}
EXIT = {"SIGINT": 130, "SIGTERM": 143, "SIGKILL": -signal.SIGKILL}


@pytest.fixture(autouse=True)
def _plain_console(monkeypatch):
    monkeypatch.delenv("FORCE_COLOR", raising=False)
    monkeypatch.delenv("TTY_COMPATIBLE", raising=False)


def _wait_for(path: Path, proc: subprocess.Popen, timeout: float = 120.0) -> None:
    end = time.monotonic() + timeout
    while not path.exists():
        if proc.poll() is not None:
            raise AssertionError(f"the run ended (code {proc.returncode}) before {path.name}")
        if time.monotonic() > end:
            proc.kill()
            raise AssertionError(f"{path.name} did not appear within {timeout} s")
        time.sleep(0.02)


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """The reference run and one run per signal, all started together; returns folders etc."""
    base = tmp_path_factory.mktemp("interrupt")
    case = base / "plate.toml"
    case.write_text(CASE, encoding="utf-8")
    env = {**os.environ, "PYTHONUNBUFFERED": "1"}
    env.pop("FORCE_COLOR", None)

    def start(folder: Path, *extra: str) -> subprocess.Popen:
        cmd = [sys.executable, "-m", "femheat", "run", str(case), "--out", str(folder)]
        cmd += ["--quiet", *extra]
        return subprocess.Popen(
            cmd, cwd=base, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True
        )

    seed = int.from_bytes(os.urandom(4), "little")
    rng = random.Random(seed)
    reference = start(base / "reference", "--checkpoint-every", "0")
    procs = {name: start(base / name, "--checkpoint-every", "0.3") for name in SIGNALS}
    delays = {}
    for name, proc in procs.items():
        folder = base / name
        _wait_for(folder / ("checkpoint.json" if name == "SIGKILL" else "history.csv"), proc)
        delays[name] = rng.uniform(0.2, 0.8)
        time.sleep(delays[name])
        assert proc.poll() is None, f"{name}: the run ended before the signal (too fast)"
        proc.send_signal(SIGNALS[name])
    outcome = {}
    for name, proc in procs.items():
        out, err = proc.communicate(timeout=120)
        outcome[name] = (proc.returncode, out, err)
    out, err = reference.communicate(timeout=300)
    assert reference.returncode == 0, err
    ref = json.loads((base / "reference" / "summary.json").read_text(encoding="utf-8"))
    return {
        "base": base,
        "case": case,
        "reference": ref,
        "outcome": outcome,
        "note": f"seed {seed}, signal delays {delays}",
    }


def _read_history(path: Path) -> np.ndarray:
    with path.open(newline="", encoding="utf-8") as f:
        rows = list(csv.reader(f))
    assert rows[0][:5] == ["time_s", "min_C", "max_C", "mean_C", "spread_C"]
    data = np.array([[float(v) for v in row] for row in rows[1:]])
    assert data.shape[0] >= 2 and data.shape[1] == len(rows[0])
    assert np.all(np.diff(data[:, 0]) > 0)
    return data


def _read_frames(folder: Path) -> int:
    root = ET.parse(folder / "fields.pvd").getroot()
    files = [d.get("file") for d in root.iter("DataSet")]
    assert files
    for name in files:
        m = meshio.read(folder / name)
        temp = m.point_data["temperature_C"]
        assert temp.shape == (m.points.shape[0],) and np.all(np.isfinite(temp))
    return len(files)


@pytest.mark.parametrize("name", list(SIGNALS))
def test_stopped_run_leaves_readable_files_then_resumes(runs, name, capsys):
    code, out, err = runs["outcome"][name]
    note = runs["note"]
    assert code == EXIT[name], f"{note}; {err}"
    assert "Traceback" not in err, err
    folder = runs["base"] / name

    history = _read_history(folder / "history.csv")
    frames = _read_frames(folder)
    summary = json.loads((folder / "summary.json").read_text(encoding="utf-8"))
    assert summary["complete"] is False
    if name == "SIGKILL":
        assert summary["status"] == "running"
    else:
        assert summary["status"] == "interrupted"
        assert name in summary["reason"]
        assert summary["target"]["reached"] is False
        # the history holds every step up to the stop, the last at the summary's end time
        assert history[-1, 0] == pytest.approx(summary["solver"]["end_time_s"], rel=1e-9)
        assert f"--resume {folder}" in out
    ckpt = read_checkpoint(folder)
    assert ckpt.time_s > 0
    if name != "SIGKILL":  # the last checkpoint is written at the stop
        assert ckpt.time_s == pytest.approx(summary["solver"]["end_time_s"], rel=1e-12)

    rc = main(["run", str(runs["case"]), "--resume", str(folder), "--quiet"])
    capsys.readouterr()
    assert rc == 0, note
    resumed = json.loads((folder / "summary.json").read_text(encoding="utf-8"))
    ref = runs["reference"]
    assert resumed["complete"] is True and resumed["status"] == "reached"
    assert resumed["target"]["time_s"] == pytest.approx(ref["target"]["time_s"], rel=1e-6), note
    # nodes near the centre reach the target within round-off of each other: the last one
    # may be a neighbour, within two elements (0.7 mm)
    assert resumed["target"]["last_point"] == pytest.approx(ref["target"]["last_point"], abs=1.4e-3)
    full = _read_history(folder / "history.csv")
    assert full.shape[0] == pytest.approx(ref["solver"]["steps"] + 1, abs=3)
    assert _read_frames(folder) >= frames
    assert not (folder / "checkpoint.npz").exists()  # removed once the run is complete
