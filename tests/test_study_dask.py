"""Studies on a real Dask cluster (LocalCluster, 2 worker processes).

Reference: the same study run serially in this process (and, through it, the exact series
checked in test_study_sweep.py). A worker process killed with SIGKILL while it runs a variant
must not lose or duplicate any result: Dask reschedules the task on the surviving or restarted
worker, and only the client writes results.
"""

from __future__ import annotations

import json
import os
import signal

import pytest

from femheat.study.runner import run_study
from femheat.study.spec import load_study

from .helpers import slab_toml

distributed = pytest.importorskip("distributed")

SLAB = slab_toml(
    "Slab for the Dask test",
    height=0.004,
    emissivity=0.6,
    tail="[target]\ntemperature = 880\n[mesh]\nsize = 0.002\n",
)

STUDY = """
[study]
case = "slab.toml"
mode = "grid"
[vary."furnace.htc"]
values = [100, 250, 400, 550]
[vary."part.size.0"]
values = [0.04, 0.05]
"""


@pytest.fixture(scope="module")
def client():
    cluster = distributed.LocalCluster(
        n_workers=2,
        threads_per_worker=1,
        processes=True,
        dashboard_address=None,
        env={"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1"},
    )
    c = distributed.Client(cluster)
    yield c
    c.close()
    cluster.close()


def test_dask_equals_serial_and_survives_a_killed_worker(tmp_path, client):
    (tmp_path / "slab.toml").write_text(SLAB, encoding="utf-8")
    (tmp_path / "study.toml").write_text(STUDY, encoding="utf-8")
    study = load_study(tmp_path / "study.toml")
    serial = run_study(study, tmp_path / "serial", engine="serial")
    assert len(serial.rows) == 8 and all(r["reached"] for r in serial.rows)

    killed = {}

    def kill_a_busy_worker(row):
        if killed:
            return
        busy = {addr: keys for addr, keys in client.processing().items() if keys}
        addr = next(iter(busy))
        pid = client.run(os.getpid, workers=[addr])[addr]
        killed.update(addr=addr, pid=pid, running=list(busy[addr]))
        os.kill(pid, signal.SIGKILL)

    res = run_study(study, tmp_path / "dask", client=client, on_row=kill_a_busy_worker)
    assert killed["running"], "the killed worker was running a variant"
    lines = (tmp_path / "dask" / "results.jsonl").read_text().splitlines()
    ids = [json.loads(x)["id"] for x in lines]
    assert sorted(ids) == sorted(v.id for v in study.variants)  # none lost, none twice
    for a, b in zip(serial.rows, res.rows, strict=True):
        assert a["id"] == b["id"]
        # same mesh and numerics; repeated runs agree to ~1e-8 relative (iterative solves)
        assert b["time_to_target_s"] == pytest.approx(a["time_to_target_s"], rel=1e-7)
        assert b["largest_difference_C"] == pytest.approx(a["largest_difference_C"], rel=1e-6)
        assert b["nodes"] == a["nodes"]


def test_dask_resume_runs_only_the_rest(tmp_path, client):
    (tmp_path / "slab.toml").write_text(SLAB, encoding="utf-8")
    (tmp_path / "study.toml").write_text(STUDY, encoding="utf-8")
    study = load_study(tmp_path / "study.toml")
    out = tmp_path / "out"
    first = []

    def stop(row):
        first.append(row["id"])
        if len(first) == 4:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        run_study(study, out, client=client, on_row=stop)
    again = []
    res = run_study(study, out, client=client, resume=True, on_row=lambda r: again.append(r["id"]))
    assert res.skipped == 4 and sorted(first + again) == sorted(v.id for v in study.variants)
    lines = (out / "results.jsonl").read_text().splitlines()
    assert len(lines) == len(study.variants)
