"""Sweeps: the study file, the variants, the result store and `femheat sweep`.

The reference for the run results is the exact series for a plane wall cooled or heated by
convection from a uniform start (Carslaw & Jaeger, Conduction of Heat in Solids, 2nd ed. 1959,
sec. 3.11; Incropera, Fundamentals of Heat and Mass Transfer, 6th ed., sec. 5.5.1, eq. 5.39),
evaluated by `femheat.exact.fourier_at`.
"""

from __future__ import annotations

import csv
import json
import tomllib

import numpy as np
import pytest

from femheat.cli import main
from femheat.errors import CaseError
from femheat.exact import fourier_at
from femheat.study.runner import run_study
from femheat.study.spec import get_path, load_study, parse_study

from .helpers import slab_toml

# Plane wall, constant properties, convection only; the rectangle's other three faces are
# insulated, so the mid-plane (face xmin) is the slab's centre. Coarse mesh (the time at the
# mid-plane converges fast in the 1D direction; checked below against the series).
SLAB = slab_toml(
    "Slab for the sweep test",
    height=0.004,
    tail="[target]\ntemperature = 880\n[mesh]\nsize = 0.004\n",
)

STUDY = """
title = "slab grid"
[study]
case = "slab.toml"
mode = "{mode}"
[vary."furnace.htc"]
values = [120, 400]
[vary."part.size.0"]
values = [0.03, 0.05]
[vary."material.conductivity"]
range = {{start = 25, stop = 55, count = 2}}
"""


def _exact_time(row) -> float:
    """Exact series time to 880 C at the mid-plane (Carslaw & Jaeger 1959 sec. 3.11)."""
    inp = row["inputs"]
    h, length, k = inp["furnace.htc"], inp["part.size.0"], inp["material.conductivity"]
    alpha = k / (7800 * 460)
    theta = (880 - 900) / (20 - 900)
    return fourier_at("slab", h * length / k, theta, xi=0.0) * length**2 / alpha


@pytest.fixture
def slab_study(tmp_path):
    (tmp_path / "slab.toml").write_text(SLAB, encoding="utf-8")

    def make(mode="grid", text=STUDY):
        path = tmp_path / f"study_{mode}.toml"
        path.write_text(text.format(mode=mode), encoding="utf-8")
        return path

    return make


def test_grid_sweep_matches_exact_series(slab_study, tmp_path):
    """Every variant of a grid over h, thickness and k meets the exact series within 0.5 %
    (Carslaw & Jaeger 1959 sec. 3.11; Incropera 6th ed. eq. 5.39), run through the CLI."""
    out = tmp_path / "grid"
    code = main(["sweep", str(slab_study("grid")), "--engine", "serial", "--out", str(out)])
    assert code == 0
    rows = [json.loads(line) for line in (out / "results.jsonl").read_text().splitlines()]
    assert len(rows) == 8
    for row in rows:
        exact = _exact_time(row)
        assert row["reached"], row
        err = row["time_to_target_s"] / exact - 1
        assert abs(err) < 0.005, (row["inputs"], row["time_to_target_s"], exact)
        # the last point to reach the target lies on the insulated mid-plane x = 0
        assert row["last_point_x_m"] == pytest.approx(0.0, abs=1e-12)
    # two geometries (thickness 0.03 and 0.05): the node counts show the mesh followed it
    assert len({r["nodes"] for r in rows}) == 2
    with open(out / "table.csv", newline="") as f:
        table = list(csv.DictReader(f))
    assert [int(r["index"]) for r in table] == list(range(8))
    assert float(table[0]["time_to_target_s"]) == pytest.approx(rows_by_index(rows)[0])
    assert (out / "time_to_target.png").is_file()


def rows_by_index(rows):
    return {r["index"]: r["time_to_target_s"] for r in rows}


def test_one_at_a_time_tornado_order(slab_study, tmp_path):
    """One-at-a-time: base case plus one variant per value; the tornado's bars (shortest and
    longest time per input) and their order match those of the exact series (Carslaw &
    Jaeger 1959 sec. 3.11) within 0.5 %."""
    from femheat.study.plots import sensitivities

    study = load_study(slab_study("one_at_a_time"))
    assert len(study.variants) == 1 + 2 + 2 + 2
    assert study.variants[0].values == ()
    res = run_study(study, tmp_path / "oat", engine="serial")
    for row in res.rows:
        assert abs(row["time_to_target_s"] / _exact_time(row) - 1) < 0.005
    sens = sensitivities(res.rows, [v.path for v in study.variables])
    exact = {}
    for row in res.rows:
        if row["varied"]:
            exact.setdefault(row["varied"], []).append(_exact_time(row))
    order = sorted(exact, key=lambda p: max(exact[p]) - min(exact[p]), reverse=True)
    assert [s.path for s in sens] == order
    for s in sens:
        assert s.shortest_s == pytest.approx(min(exact[s.path]), rel=0.005)
        assert s.longest_s == pytest.approx(max(exact[s.path]), rel=0.005)
        # the base value is one of the listed values here; repeated runs of one case agree to
        # about 1e-8 relative (iterative linear solves), not bit for bit
        assert s.shortest_s * (1 - 1e-6) <= s.base_s <= s.longest_s * (1 + 1e-6)


def test_sampled_variants_follow_the_seed(slab_study):
    text = """
[study]
case = "slab.toml"
mode = "sample"
samples = 400
seed = SEED
[vary."furnace.htc"]
distribution = "triangular"
low = 100
mode = 150
high = 300
[vary."material.conductivity"]
distribution = "normal"
mean = 40
sd = 2
"""

    def study(seed):
        return load_study(slab_study("sample", text.replace("SEED", seed).replace("{", "{{")))

    a, b, c = study("7"), study("7"), study("8")
    assert [v.id for v in a.variants] == [v.id for v in b.variants]
    assert [v.id for v in a.variants] != [v.id for v in c.variants]
    h = np.array([dict(v.values)["furnace.htc"] for v in a.variants])
    k = np.array([dict(v.values)["material.conductivity"] for v in a.variants])
    assert h.min() >= 100 and h.max() <= 300
    # triangular mean (low + mode + high) / 3 = 183.3 [derived]; sd of the sample mean of 400
    # draws is about 41/20 = 2 W/(m2 K), so 4 sd = 8
    assert abs(h.mean() - 550 / 3) < 8
    assert abs(k.mean() - 40) < 4 * 2 / 20
    case = a.case_for(a.variants[3])
    assert get_path(case, "furnace.htc") == dict(a.variants[3].values)["furnace.htc"]
    assert a.base["furnace"]["htc"] == 250  # the base is not changed


@pytest.mark.parametrize(
    ("vary", "where"),
    [
        ('[vary."furnace.htcc.x"]\nvalues = [1]', 'vary."furnace.htcc.x"'),
        ('[vary."furnace.htc"]\ndistribution = "normal"\nmean = 3', 'vary."furnace.htc"'),
        ('[vary."furnace.htc"]\ndistribution = "lognormal"', "distribution"),
        ('[vary."furnace.htc"]\nvalues = []', "values"),
        ('[vary."furnace.htc"]\nrange = {start = 1, stop = 2}', "range"),
    ],
)
def test_bad_study_names_the_place(tmp_path, vary, where):
    (tmp_path / "slab.toml").write_text(SLAB, encoding="utf-8")
    text = f'[study]\ncase = "slab.toml"\nmode = "sample"\nsamples = 2\n{vary}\n'
    with pytest.raises(CaseError) as exc:
        parse_study(tomllib.loads(text), tmp_path)
    assert where in str(exc.value) and "; fix: " in str(exc.value)


def test_interrupted_study_resumes_without_loss_or_duplicates(slab_study, tmp_path):
    """A study stopped after 3 variants (and a line cut short, as by a crash) resumes with
    the other variants only; every variant is stored once, in study order."""
    study = load_study(slab_study("grid"))
    out = tmp_path / "resume"
    seen = []

    def stop_after_three(row):
        seen.append(row["id"])
        if len(seen) == 3:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        run_study(study, out, engine="serial", on_row=stop_after_three)
    store = out / "results.jsonl"
    assert len(store.read_text().splitlines()) == 3
    with open(store, "a") as f:
        f.write('{"id": "v0007-cut", "index": 7, "sta')  # a line cut short
    ran = []
    res = run_study(study, out, engine="serial", resume=True, on_row=lambda r: ran.append(r["id"]))
    assert res.skipped == 3 and res.ran == 5
    assert set(ran).isdisjoint(seen)
    ids = [json.loads(x)["id"] for x in store.read_text().splitlines()]
    assert sorted(ids) == sorted(v.id for v in study.variants)
    assert [r["index"] for r in res.rows] == list(range(8))


def test_bad_study_exits_2_without_running(tmp_path, capsys):
    (tmp_path / "slab.toml").write_text(SLAB, encoding="utf-8")
    study = tmp_path / "bad.toml"
    study.write_text(
        '[study]\ncase = "slab.toml"\nmode = "everything"\n[vary."furnace.htc"]\nvalues = [1, 2]\n',
        encoding="utf-8",
    )
    assert main(["sweep", str(study), "--out", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err
    assert "study.mode" in err and "fix:" in err and "Traceback" not in err
    assert not (tmp_path / "out").exists()
