"""Bad input through the whole pipeline: the command line refuses it in one line, exit code 2.

The corpus is ``tests/bad_cases/*.toml`` (wrong at the case-file level, also read by
``test_case.py``) and ``tests/bad_cases/problem/*.toml`` (valid files whose geometry, names,
targets, sizes or referenced files are wrong: missing or corrupt CAD, outline, mesh and CSV
files, unknown face names, targets above every surrounding, parts given in millimetres). The
first line of each names the place the message must start with: ``# expect: PLACE``. The
geometry files the problem cases point at are in ``tests/bad_cases/problem/files/``.

The fuzz tests mutate a valid case and build the problem (meshing included): nothing but
`CaseError` may come out.
"""

from __future__ import annotations

import copy
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from femheat.case import parse_case
from femheat.cli import main
from femheat.errors import CaseError
from femheat.problem import build_problem

HERE = Path(__file__).parent / "bad_cases"
LOADER_CASES = sorted(HERE.glob("*.toml"))
PROBLEM_CASES = sorted((HERE / "problem").glob("*.toml"))
CORPUS = LOADER_CASES + PROBLEM_CASES


@pytest.fixture(autouse=True)
def _plain_console(monkeypatch):
    """Keep rich from adding colour codes when the environment forces them."""
    monkeypatch.delenv("FORCE_COLOR", raising=False)
    monkeypatch.delenv("TTY_COMPATIBLE", raising=False)


def expected_place(path: Path) -> str:
    first = path.read_bytes().split(b"\n", 1)[0].decode()
    assert first.startswith("# expect: "), f"{path.name}: first line must be '# expect: PLACE'"
    return first.removeprefix("# expect: ").replace("{file}", str(path))


def assert_one_line_refusal(rc: int, out: str, err: str, place: str) -> str:
    assert rc == 2, (rc, out, err)
    assert "Traceback" not in out + err, err
    lines = [line for line in err.splitlines() if line.strip()]
    assert len(lines) == 1, err
    line = lines[0]
    assert line.startswith(f"error: {place}:") or line.startswith(f"error: {place} "), line
    assert "; fix: " in line, line
    return line


def test_corpus_is_large_and_covers_the_kinds():
    names = {p.stem for p in CORPUS}
    assert len(CORPUS) >= 50
    kinds = {
        "CAD file": ("cad_missing_file", "cad_corrupt_file", "cad_surface_only"),
        "outline file": ("outline_missing_file", "outline_unknown_word", "outline_not_utf8"),
        "mesh file": ("mesh_file_missing", "mesh_file_corrupt", "mesh_file_wrong_model"),
        "material name": ("material_unknown_name",),
        "face name": ("face_unknown_name", "face_misspelt_name"),
        "impossible target": ("target_above_furnace", "target_below_cooling_air"),
        "unit that does not fit": ("unit_wrong_kind", "unit_htc_as_power"),
        "millimetres as metres": ("size_in_millimetres", "box_in_millimetres"),
        "syntax": ("syntax_error",),
    }
    for kind, stems in kinds.items():
        missing = [s for s in stems if s not in names]
        assert not missing, f"{kind}: {missing}"


@pytest.mark.parametrize("path", CORPUS, ids=[p.stem for p in CORPUS])
def test_check_refuses_bad_case_in_one_line(path, capfd):
    place = expected_place(path)
    rc = main(["check", str(path)])
    out, err = capfd.readouterr()
    assert_one_line_refusal(rc, out, err, place)
    assert out == ""


RUN_SAMPLE = [
    "size_in_millimetres",
    "target_above_furnace",
    "face_unknown_name",
    "mesh_file_corrupt",
    "cad_corrupt_file",
    "syntax_error",
]


@pytest.mark.parametrize("stem", RUN_SAMPLE)
def test_run_refuses_the_same_way_and_writes_no_results(stem, tmp_path, capfd):
    path = next(p for p in CORPUS if p.stem == stem)
    out_dir = tmp_path / "results"
    rc = main(["run", str(path), "--out", str(out_dir)])
    out, err = capfd.readouterr()
    assert_one_line_refusal(rc, out, err, expected_place(path))
    assert not (out_dir / "summary.json").exists()


def test_millimetre_slip_says_so(capfd):
    path = HERE / "problem" / "size_in_millimetres.toml"
    main(["check", str(path)])
    err = capfd.readouterr().err
    assert "20 m" in err and "did you give millimetres?" in err


# --- fuzzing the whole build (meshing included) ------------------------------------------------

VALID = {
    "title": "fuzzed plate",
    "part": {"model": "planar", "shape": "rectangle", "size": [0.04, 0.02]},
    "material": {"density": 7850, "conductivity": [[20, 53], [800, 27]], "specific_heat": 460},
    "furnace": {"temperature": [[0, 600], [3600, 860]], "htc": 40, "emissivity": 0.8},
    "faces": {"xmin": {"condition": "symmetry"}},
    "initial": {"temperature": 20},
    "target": {"temperature": 840},
    "mesh": {"size": 0.004},
    "probes": [{"name": "core", "point": [0.0, 0.01]}],
}

FACE_NAMES = ["xmin", "xmax", "ymin", "ymax", "zmax", "top", "surface_1", ""]
FACE_TABLES = [
    {"condition": "insulated"},
    {"condition": "symmetry"},
    {"condition": "convection", "htc": 10, "ambient": 20},
    {"condition": "convection", "htc": 10},
    {"condition": "fixed", "temperature": 900},
    {"condition": "flux", "flux": -5000},
    {"condition": "hearth", "conductance": 100},
    {"condition": "zone", "ambient": 2000},
    {"condition": "furnace", "radiation_factor": 0.5},
]
MUTATIONS = {
    ("part", "size"): st.sampled_from(
        [[40, 20], [0.04, 60.0], [1e-5, 1e-5], [0.04], [0.04, 0.02, 0.01], [0.2, 0.1], [0, 1]]
    ),
    ("part", "model"): st.sampled_from(["planar", "axisymmetric", "solid"]),
    ("part", "shape"): st.sampled_from(["rectangle", "box", "disc", "cylinder", "step"]),
    ("material", "name"): st.sampled_from(["carbon-steel-en1993", "unobtainium", "copper"]),
    ("material", "conductivity"): st.sampled_from([36, -1, [[20, 53]], [[800, 27], [20, 53]]]),
    ("furnace", "temperature"): st.sampled_from([860, 20, -300, [[0, 600]], "900 degF"]),
    ("furnace", "htc"): st.sampled_from([0, 40, -3, "40 W"]),
    ("initial", "temperature"): st.floats(-400, 2000) | st.sampled_from(["20 mm", 840]),
    ("target", "temperature"): st.floats(-400, 2000),
    ("target", "hold"): st.sampled_from([0, 600, -1]),
    ("mesh", "size"): st.sampled_from([0.002, 0.004, 0.05, 1e-7, 0, -0.001]),
    ("probes", 0, "point"): st.lists(st.floats(-0.1, 0.1), min_size=1, max_size=4),
    ("solver", "tolerance"): st.sampled_from([2e-5, 0.5, 0]),
}


def _set(data: dict, place: tuple, value) -> None:
    container = data
    for key in place[:-1]:
        if isinstance(container, dict):
            container = container.setdefault(key, {})
        else:
            container = container[key]
    container[place[-1]] = value


@st.composite
def mutated_cases(draw):
    data = copy.deepcopy(VALID)
    places = draw(st.lists(st.sampled_from(sorted(MUTATIONS, key=str)), min_size=1, max_size=3))
    for place in places:
        _set(data, place, draw(MUTATIONS[place], label=str(place)))
    if draw(st.booleans(), label="change a face"):
        name = draw(st.sampled_from(FACE_NAMES), label="face name")
        data["faces"][name] = draw(st.sampled_from(FACE_TABLES), label="face table")
    return data


@settings(
    max_examples=40,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)
@given(mutated_cases())
def test_building_mutated_cases_raises_only_case_error(data):
    try:
        build_problem(parse_case(data))
    except CaseError as err:
        text = str(err)
        assert "\n" not in text and "; fix: " in text, text
