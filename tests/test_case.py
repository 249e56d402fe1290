"""Tests for the case file schema: a good case loads, every bad one says where and how to fix."""

import copy
import textwrap
import tomllib
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from pydantic import ValidationError

import femheat.case
from femheat.case import CASE_KEYS, Case, load_case, parse_case
from femheat.errors import CaseError

BAD_CASES = sorted((Path(__file__).parent / "bad_cases").glob("*.toml"))

EXAMPLE = """\
title = "Slab heated from one face"
[part]
model = "planar"
shape = "rectangle"
size = [0.04, 0.01]
[material]
density = 7850
conductivity = 36
specific_heat = [[20, 440], [600, 760], [900, 650]]
[furnace]
temperature = [[0, 20], [3600, 850]]
wall_temperature = 860
htc = 180
emissivity = 0.8
[faces.xmin]
condition = "insulated"
[faces.ymax]
condition = "convection"
htc = 10
ambient = 20
[initial]
temperature = 20
[target]
temperature = 830
[mesh]
size = 0.002
[[probes]]
name = "core"
point = [0.0, 0.005]
"""


def example() -> dict:
    return tomllib.loads(EXAMPLE)


def check_message(err: CaseError) -> str:
    text = str(err)
    assert "\n" not in text, text
    assert "; fix: " in text, text
    return text


# --- a good case ------------------------------------------------------------------------------


def test_example_file_loads_with_values_and_types(tmp_path):
    path = tmp_path / "slab.toml"
    path.write_text(EXAMPLE)
    case = load_case(path)

    assert isinstance(case, Case)
    assert case.title == "Slab heated from one face"
    assert (case.part.model, case.part.shape, case.part.size) == (
        "planar",
        "rectangle",
        (0.04, 0.01),
    )
    assert case.material.density == 7850.0 and isinstance(case.material.density, float)
    assert case.material.conductivity == 36.0 and isinstance(case.material.conductivity, float)
    assert case.material.specific_heat == ((20.0, 440.0), (600.0, 760.0), (900.0, 650.0))
    assert all(isinstance(x, float) for row in case.material.specific_heat for x in row)
    assert case.material.name == ""
    assert case.furnace.temperature == ((0.0, 20.0), (3600.0, 850.0))
    assert case.furnace.wall_temperature == 860.0
    assert (case.furnace.htc, case.furnace.emissivity) == (180.0, 0.8)
    assert set(case.faces) == {"xmin", "ymax"}
    assert case.faces["xmin"].condition == "insulated"
    assert case.faces["xmin"].htc is None
    ymax = case.faces["ymax"]
    assert (ymax.condition, ymax.htc, ymax.ambient) == ("convection", 10.0, 20.0)
    assert ymax.emissivity == 0.0  # convection default
    assert ymax.wall == 20.0  # defaults to the ambient
    assert case.initial.temperature == 20.0
    assert case.target is not None
    assert (case.target.temperature, case.target.hold) == (830.0, 0.0)
    assert (case.mesh.size, case.mesh.element) == (0.002, "P1")
    assert [(p.name, p.point) for p in case.probes] == [("core", (0.0, 0.005))]
    assert case.solver.tolerance == 2e-5
    assert case.solver.end_time is None and case.solver.max_step is None
    assert case.solver.first_step is None


def test_module_docstring_example_is_the_example():
    doc = femheat.case.__doc__
    block = doc.split("Example::\n\n", 1)[1].split("\n\n", 1)[0]
    assert tomllib.loads(textwrap.dedent(block)) == example()


def test_case_is_frozen():
    case = parse_case(example())
    with pytest.raises(ValidationError):
        case.furnace.htc = 1.0


def test_dumped_case_parses_back_to_the_same_case():
    case = parse_case(example())
    assert parse_case(case.model_dump()) == case


def test_optional_sections_take_defaults():
    data = example()
    for key in ("title", "faces", "target", "mesh", "probes"):
        del data[key]
    case = parse_case(data)
    assert case.title == "" and case.faces == {} and case.probes == []
    assert case.target is None
    assert (case.mesh.size, case.mesh.element) == (None, "P1")
    assert case.solver.tolerance == 2e-5


def test_solid_box_with_all_face_conditions():
    data = example()
    data["part"] = {"model": "solid", "shape": "box", "size": [0.1, 0.2, 0.3]}
    data["faces"] = {
        "xmin": {"condition": "symmetry"},
        "xmax": {"condition": "furnace"},
        "ymin": {"condition": "fixed", "temperature": [[0, 20], [60, 400]]},
        "ymax": {"condition": "flux", "flux": -2500},
        "zmin": {
            "condition": "convection",
            "htc": 0,
            "ambient": [[0, 20]],
            "emissivity": 0.5,
            "wall": 300,
        },
    }
    data["probes"] = [{"name": "corner-1", "point": [0, 0, 0]}, {"name": "c_2", "point": [1, 1, 1]}]
    data["solver"] = {"end_time": 7200, "tolerance": 0.1, "max_step": 60, "first_step": 0.5}
    data["target"] = {"temperature": -20, "hold": 600}
    case = parse_case(data)
    assert case.faces["ymin"].temperature == ((0.0, 20.0), (60.0, 400.0))
    assert case.faces["ymax"].flux == -2500.0
    zmin = case.faces["zmin"]
    assert (zmin.htc, zmin.ambient, zmin.emissivity, zmin.wall) == (0.0, ((0.0, 20.0),), 0.5, 300.0)
    assert case.probes[1].point == (1.0, 1.0, 1.0)
    assert case.solver.end_time == 7200.0 and case.target.hold == 600.0


def test_axisymmetric_rectangle_is_fine():
    data = example()
    data["part"]["model"] = "axisymmetric"
    assert parse_case(data).part.model == "axisymmetric"


def test_case_keys_lists_valid_keys_per_table():
    assert CASE_KEYS[""][:3] == ("title", "part", "material")
    assert CASE_KEYS["furnace"] == ("temperature", "wall_temperature", "htc", "emissivity")
    assert "ambient" in CASE_KEYS["faces.NAME"]
    assert CASE_KEYS["probes"] == ("name", "point")


# --- bad cases ------------------------------------------------------------------------------


def test_enough_bad_cases():
    assert len(BAD_CASES) >= 25


@pytest.mark.parametrize("path", BAD_CASES, ids=[p.stem for p in BAD_CASES])
def test_bad_case_says_where_and_how_to_fix(path):
    first = path.read_bytes().split(b"\n", 1)[0].decode()
    assert first.startswith("# expect: "), f"{path.name}: first line must be '# expect: PLACE'"
    expected = first.removeprefix("# expect: ").replace("{file}", str(path))
    with pytest.raises(CaseError) as info:
        load_case(path)
    text = check_message(info.value)
    assert text.startswith(expected + ":") or text.startswith(expected + " "), text


def test_unknown_key_suggests_the_close_one():
    data = example()
    data["furnace"]["htcc"] = data["furnace"].pop("htc")
    with pytest.raises(CaseError) as info:
        parse_case(data)
    assert str(info.value) == (
        "furnace.htcc: unknown key; fix: did you mean 'htc'? "
        "valid keys here: temperature, wall_temperature, htc, emissivity"
    )
    assert info.value.where == "furnace.htcc"


def test_messages_hold_the_value():
    data = example()
    data["material"]["conductivity"] = -36
    with pytest.raises(CaseError, match=r"^material\.conductivity: must be > 0, got -36; fix: "):
        parse_case(data)
    data = example()
    data["furnace"]["temperature"] = [[0, 20], [180, 500], [120, 850]]
    with pytest.raises(CaseError, match=r"temperature\[2\]: times must increase; got t=120 after"):
        parse_case(data)


def test_missing_file_names_the_path(tmp_path):
    path = tmp_path / "nowhere" / "case.toml"
    with pytest.raises(CaseError) as info:
        load_case(path)
    assert info.value.where == str(path)
    assert str(path) in check_message(info.value)


def test_directory_is_not_a_case(tmp_path):
    with pytest.raises(CaseError, match="is a directory"):
        load_case(tmp_path)


@pytest.mark.parametrize("data", [[], "case", 3, None, {}])
def test_not_a_table_or_empty(data):
    with pytest.raises(CaseError) as info:
        parse_case(data, source="x.toml")
    assert info.value.where == "x.toml"
    check_message(info.value)


# --- fuzzing: any malformed input gives a CaseError, never another exception ------------------

KEY_NAMES = sorted({key for keys in CASE_KEYS.values() for key in keys} | {"xmin", "ymax"})
SCALARS = (
    st.none()
    | st.booleans()
    | st.integers()
    | st.floats()
    | st.text(max_size=6)
    | st.sampled_from(["planar", "box", "solid", "convection", "fixed", "P2", "core"])
)
KEYS = st.sampled_from(KEY_NAMES) | st.text(max_size=5)
VALUES = st.recursive(
    SCALARS,
    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(KEYS, inner, max_size=4),
    max_leaves=16,
)


def assert_case_error_only(data, top_level_ok: bool) -> None:
    try:
        parse_case(data)
    except CaseError as err:
        check_message(err)
        if top_level_ok:
            # "<case>" as the place would mean a fallback: the error was not traced to a key
            assert err.where != "<case>", str(err)


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.dictionaries(KEYS, VALUES, min_size=1, max_size=8))
def test_random_tables_raise_only_case_error(data):
    assert_case_error_only(data, top_level_ok=True)


def places(obj, prefix=()):
    """Every (path to a container, key or index in it) in nested dicts and lists."""
    items = obj.items() if isinstance(obj, dict) else enumerate(obj)
    for key, value in list(items):
        yield prefix, key
        if isinstance(value, dict | list):
            yield from places(value, (*prefix, key))


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.data())
def test_mutated_example_raises_only_case_error(draw):
    data = copy.deepcopy(example())
    for _ in range(draw.draw(st.integers(1, 3), label="mutations")):
        prefix, key = draw.draw(st.sampled_from(list(places(data))), label="place")
        container = data
        for step in prefix:
            container = container[step]
        if draw.draw(st.booleans(), label="delete"):
            del container[key]
        else:
            container[key] = draw.draw(VALUES, label="value")
        if not data:
            break
    assert_case_error_only(data, top_level_ok=bool(data))
