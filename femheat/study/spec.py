"""The study file: a base case and the case values to vary.

A study is a TOML file::

    title = "Soak time against the least known inputs"
    [study]
    case = "billet.toml"        # the base case, relative to this file
    mode = "one_at_a_time"      # or "grid" (every combination) or "sample" (random draws)
    samples = 200               # sample mode: how many variants
    seed = 1                    # sample mode: the random seed (same seed, same variants)

    [vary."furnace.htc"]        # any case value by its dotted path
    values = [120, 150, 180]
    [vary."furnace.emissivity"]
    range = {start = 0.6, stop = 0.9, count = 4}          # evenly spaced, ends included
    [vary."faces.ymin.conductance"]
    distribution = "normal"   # mean, sd | "uniform": low, high | "triangular": low, mode, high
    mean = 300
    sd = 50

Paths are the keys of the case file joined by dots; list items are numbered from 0
(``"part.size.1"``). A path must name a value that exists in the base case, except for the
last key of a table that exists (so optional keys such as ``faces.ymin.conductance`` may be
set). Values are numbers as in the case file (SI units, C).

Modes:
    ``one_at_a_time``: the base case, then each varied value on its own with all others at
    their base value (the tornado chart of sensitivities). Lists and ranges only.
    ``grid``: every combination of the lists and ranges.
    ``sample``: ``samples`` random variants; a distribution is drawn, a list or range is
    picked from uniformly. Draws use ``numpy.random.default_rng(seed)``.

Default mode: ``sample`` when any distribution is given, else ``one_at_a_time``.
"""

from __future__ import annotations

import copy
import hashlib
import itertools
import json
import tomllib
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import CaseError

__all__ = [
    "Variable",
    "Variant",
    "Study",
    "load_study",
    "parse_study",
    "get_path",
    "set_path",
    "geometry_key",
]

_MODES = ("one_at_a_time", "grid", "sample")
_DISTS = {
    "normal": ("mean", "sd"),
    "uniform": ("low", "high"),
    "triangular": ("low", "mode", "high"),
}


@dataclass(frozen=True)
class Variable:
    """One varied case value.

    Attributes:
        path: dotted path into the case table.
        values: the listed values (lists and ranges); empty for a distribution.
        distribution: "normal", "uniform" or "triangular" ("" for a list).
        params: the distribution's parameters by name.
    """

    path: str
    values: tuple[float, ...] = ()
    distribution: str = ""
    params: tuple[tuple[str, float], ...] = ()

    def draw(self, rng: np.random.Generator) -> float:
        """One random value (a distribution draw, or one of the listed values)."""
        if not self.distribution:
            return float(self.values[int(rng.integers(len(self.values)))])
        p = dict(self.params)
        if self.distribution == "normal":
            return float(rng.normal(p["mean"], p["sd"]))
        if self.distribution == "uniform":
            return float(rng.uniform(p["low"], p["high"]))
        return float(rng.triangular(p["low"], p["mode"], p["high"]))


@dataclass(frozen=True)
class Variant:
    """One case of the study.

    Attributes:
        id: a stable name: the index and a hash of the values (``v0003-1a2b3c4d``), so a
            resumed study recognises finished variants even if the file was edited.
        index: position in the study.
        values: the changed case values by dotted path (empty for the base case).
        varied: for one-at-a-time studies, the path that was changed ("" for the base case
            and other modes).
    """

    id: str
    index: int
    values: tuple[tuple[str, float], ...]
    varied: str = ""


@dataclass(frozen=True)
class Study:
    """A parsed study: the base case table and the variants to run.

    Attributes:
        title: free text.
        base: the base case as a table (as the TOML file reads), with ``base_dir`` for paths.
        base_dir: the base case's folder (relative paths in the case are taken from it).
        mode: "one_at_a_time", "grid" or "sample".
        variables: the varied values.
        variants: the variants, in order.
        seed: the random seed (sample mode).
    """

    title: str
    base: dict
    base_dir: Path
    mode: str
    variables: tuple[Variable, ...]
    variants: tuple[Variant, ...]
    seed: int | None = None

    def case_for(self, variant: Variant) -> dict:
        """The case table of a variant (a deep copy of the base with its values set)."""
        data = copy.deepcopy(self.base)
        for path, value in variant.values:
            set_path(data, path, value)
        return data

    def base_value(self, path: str):
        """The base case's value at `path` (None when the base case leaves it out)."""
        try:
            return get_path(self.base, path)
        except KeyError:
            return None


def _split(path: str) -> list:
    return [int(k) if k.isdigit() else k for k in path.split(".")]


def get_path(data: dict, path: str):
    """The value at a dotted path of a case table; KeyError when it is not there."""
    node = data
    for key in _split(path):
        try:
            node = node[key]
        except (KeyError, IndexError, TypeError):
            raise KeyError(path) from None
    return node


def set_path(data: dict, path: str, value) -> None:
    """Set the value at a dotted path (the parent table or list must exist)."""
    keys = _split(path)
    parent = get_path(data, ".".join(str(k) for k in keys[:-1])) if len(keys) > 1 else data
    last = keys[-1]
    if isinstance(parent, list):
        if not isinstance(last, int) or last >= len(parent):
            raise KeyError(path)
        parent[last] = value
    elif isinstance(parent, dict):
        parent[last] = value
    else:
        raise KeyError(path)


def geometry_key(case: dict) -> str:
    """A key equal for cases whose ``[part]`` and ``[mesh]`` tables (and folder) are equal, so
    they can share one mesh."""
    parts = {k: case.get(k) for k in ("part", "mesh")}
    return json.dumps(parts, sort_keys=True, default=str)


def _number(value, where: str) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise CaseError(where, f"expected a number, got {value!r}", "give a number in SI units")
    return float(value)


def _variable(path: str, spec, base: dict) -> Variable:
    where = f'vary."{path}"'
    try:
        keys = path.split(".")
        if len(keys) > 1:
            parent = get_path(base, ".".join(keys[:-1]))
            if not isinstance(parent, dict | list):
                raise KeyError(path)
            if isinstance(parent, list):
                get_path(base, path)
        elif path not in base:
            raise KeyError(path)
    except KeyError:
        raise CaseError(
            where,
            f"the base case has no table for {path!r}",
            "use the dotted keys of the case file, e.g. furnace.htc or faces.ymin.conductance",
        ) from None
    if not isinstance(spec, dict):
        raise CaseError(where, f"expected a table, got {spec!r}", "give values = [...]")
    given = [k for k in ("values", "range", "distribution") if k in spec]
    if len(given) != 1:
        raise CaseError(
            where,
            f"give exactly one of values, range or distribution; got {given or 'none'}",
            'e.g. values = [100, 150] or distribution = "normal" with mean and sd',
        )
    if "values" in spec:
        vals = spec["values"]
        if not isinstance(vals, list) or not vals:
            raise CaseError(f"{where}.values", f"expected a list, got {vals!r}", "values = [1, 2]")
        return Variable(path, tuple(_number(v, f"{where}.values") for v in vals))
    if "range" in spec:
        r = spec["range"]
        if not isinstance(r, dict) or set(r) != {"start", "stop", "count"}:
            raise CaseError(
                f"{where}.range", f"got {r!r}", "range = {start = 1, stop = 2, count = 5}"
            )
        count = r["count"]
        if isinstance(count, bool) or not isinstance(count, int) or count < 2:
            raise CaseError(f"{where}.range.count", f"got {count!r}", "give an integer >= 2")
        lo, hi = _number(r["start"], f"{where}.range"), _number(r["stop"], f"{where}.range")
        return Variable(path, tuple(float(x) for x in np.linspace(lo, hi, count)))
    dist = spec["distribution"]
    if dist not in _DISTS:
        raise CaseError(
            f"{where}.distribution", f"unknown distribution {dist!r}", f"use one of {list(_DISTS)}"
        )
    names = _DISTS[dist]
    extra = set(spec) - {"distribution", *names}
    missing = [n for n in names if n not in spec]
    if missing or extra:
        raise CaseError(
            where,
            f"a {dist} distribution takes {', '.join(names)}; "
            f"missing {missing}, unknown {sorted(extra)}",
            f"give {', '.join(names)}",
        )
    p = {n: _number(spec[n], f"{where}.{n}") for n in names}
    if dist == "normal" and p["sd"] <= 0:
        raise CaseError(f"{where}.sd", f"must be > 0, got {p['sd']:g}", "give a positive sd")
    if dist in ("uniform", "triangular") and not p["low"] < p["high"]:
        raise CaseError(where, f"low {p['low']:g} >= high {p['high']:g}", "give low < high")
    if dist == "triangular" and not p["low"] <= p["mode"] <= p["high"]:
        raise CaseError(f"{where}.mode", f"{p['mode']:g} outside low..high", "low <= mode <= high")
    return Variable(path, (), dist, tuple(p.items()))


def _make_id(index: int, values) -> str:
    text = json.dumps([[p, repr(v)] for p, v in values])
    return f"v{index:04d}-{hashlib.sha1(text.encode()).hexdigest()[:8]}"


def _variants(mode: str, variables, samples: int, seed) -> list[Variant]:
    out: list[tuple[tuple, str]] = []
    if mode == "one_at_a_time":
        out.append(((), ""))
        for v in variables:
            out.extend((((v.path, x),), v.path) for x in v.values)
    elif mode == "grid":
        for combo in itertools.product(*(v.values for v in variables)):
            out.append((tuple(zip((v.path for v in variables), combo, strict=True)), ""))
    else:
        rng = np.random.default_rng(seed)
        for _ in range(samples):
            out.append((tuple((v.path, v.draw(rng)) for v in variables), ""))
    return [Variant(_make_id(i, vals), i, vals, varied) for i, (vals, varied) in enumerate(out)]


def parse_study(data: dict, base_dir: Path | str = ".") -> Study:
    """Check a study table (as read from TOML) and list its variants.

    Args:
        data: the study table.
        base_dir: the study file's folder (the base case path is taken from it).

    Raises:
        CaseError: bad study file or base case path.
    """
    from ..case import load_case

    base_dir = Path(base_dir)
    unknown = set(data) - {"title", "study", "vary"}
    if unknown:
        raise CaseError(
            sorted(unknown)[0], "unknown key", "a study file has title, [study] and [vary.PATH]"
        )
    st = data.get("study")
    if not isinstance(st, dict) or "case" not in st:
        raise CaseError("study.case", "missing", 'give case = "base_case.toml"')
    bad = set(st) - {"case", "mode", "samples", "seed"}
    if bad:
        raise CaseError(
            f"study.{sorted(bad)[0]}", "unknown key", "valid keys: case, mode, samples, seed"
        )
    case_path = base_dir / str(st["case"])
    if not case_path.is_file():
        raise CaseError("study.case", f"no file {str(case_path)!r}", "give the base case file")
    load_case(case_path)  # the base case itself must be valid
    with open(case_path, "rb") as f:
        base = tomllib.load(f)
    vary = data.get("vary")
    if not isinstance(vary, dict) or not vary:
        raise CaseError("vary", "no values to vary", 'add [vary."furnace.htc"] values = [...]')
    variables = tuple(_variable(p, s, base) for p, s in vary.items())
    has_dist = any(v.distribution for v in variables)
    mode = st.get("mode", "sample" if has_dist else "one_at_a_time")
    if mode not in _MODES:
        raise CaseError("study.mode", f"unknown mode {mode!r}", f"use one of {list(_MODES)}")
    if mode != "sample" and has_dist:
        name = next(v.path for v in variables if v.distribution)
        raise CaseError(
            f'vary."{name}"',
            f"a distribution needs mode = 'sample', got mode = {mode!r}",
            'use mode = "sample" or give values = [...]',
        )
    samples = st.get("samples", 0 if mode != "sample" else None)
    if mode == "sample" and (
        isinstance(samples, bool) or not isinstance(samples, int) or samples < 1
    ):
        raise CaseError("study.samples", f"got {samples!r}", "give the number of samples, >= 1")
    seed = st.get("seed")
    if seed is not None and (isinstance(seed, bool) or not isinstance(seed, int)):
        raise CaseError("study.seed", f"got {seed!r}", "give an integer seed")
    return Study(
        title=str(data.get("title", "")),
        base=base,
        base_dir=case_path.parent.resolve(),
        mode=mode,
        variables=variables,
        variants=tuple(_variants(mode, variables, samples or 0, seed)),
        seed=seed,
    )


def load_study(path: str | Path) -> Study:
    """Read and check a study file (TOML)."""
    path = Path(path)
    try:
        with open(path, "rb") as f:
            data = tomllib.load(f)
    except OSError as exc:
        raise CaseError(str(path), f"cannot read ({exc.strerror})", "give a study file") from None
    except tomllib.TOMLDecodeError as exc:
        raise CaseError(str(path), f"not valid TOML ({exc})", "fix the TOML syntax") from None
    return parse_study(data, path.parent)
