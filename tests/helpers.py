"""Shared helpers for the numerical tests: small cases and structured meshes."""

from __future__ import annotations

import copy

import numpy as np

from femheat.case import parse_case
from femheat.mesh import PartMesh

BASE = {
    "title": "test slab",
    "part": {"model": "planar", "shape": "rectangle", "size": [0.05, 0.005]},
    "material": {"density": 7800, "conductivity": 40, "specific_heat": 460},
    "furnace": {"temperature": 900, "htc": 250, "emissivity": 0},
    "faces": {
        "xmin": {"condition": "symmetry"},
        "ymin": {"condition": "insulated"},
        "ymax": {"condition": "insulated"},
    },
    "initial": {"temperature": 20},
    "target": {"temperature": 880},
}


def slab_toml(
    title: str = "test slab",
    height: float = 0.005,
    emissivity: float = 0.0,
    initial: str = "temperature = 20",
    tail: str = "[target]\ntemperature = 880\n",
) -> str:
    """The base slab (`BASE`) as case-file text: half-thickness 0.05 m, mid-plane xmin,
    convection (and radiation when `emissivity` > 0) on xmax; `tail` adds sections."""
    return (
        f'title = "{title}"\n[part]\nmodel = "planar"\nshape = "rectangle"\n'
        f"size = [0.05, {height}]\n[material]\ndensity = 7800\nconductivity = 40\n"
        f"specific_heat = 460\n[furnace]\ntemperature = 900\nhtc = 250\n"
        f"emissivity = {emissivity}\n"
        '[faces.xmin]\ncondition = "symmetry"\n[faces.ymin]\ncondition = "insulated"\n'
        f'[faces.ymax]\ncondition = "insulated"\n[initial]\n{initial}\n{tail}'
    )


def make_case(**changes):
    """The base slab case with top-level sections replaced or updated (dicts merge one level)."""
    data = copy.deepcopy(BASE)
    for key, value in changes.items():
        if value is None:
            data.pop(key, None)
        elif isinstance(value, dict) and isinstance(data.get(key), dict):
            data[key] = {**data[key], **value}
        else:
            data[key] = value
    return parse_case(data)


def structured_rectangle(lx, ly, nx, ny, axisymmetric=False) -> PartMesh:
    """Right-triangle mesh of [0, lx] x [0, ly] with faces named by plane."""
    x = np.linspace(0.0, lx, nx + 1)
    y = np.linspace(0.0, ly, ny + 1)
    xx, yy = np.meshgrid(x, y, indexing="ij")
    points = np.column_stack([xx.ravel(), yy.ravel()])

    def node(i, j):
        return i * (ny + 1) + j

    i, j = np.meshgrid(np.arange(nx), np.arange(ny), indexing="ij")
    i, j = i.ravel(), j.ravel()
    a, b, c, d = node(i, j), node(i + 1, j), node(i + 1, j + 1), node(i, j + 1)
    cells = np.vstack([np.column_stack([a, b, c]), np.column_stack([a, c, d])])
    ii = np.arange(nx)
    jj = np.arange(ny)
    faces = {
        "xmin": np.column_stack([node(0, jj), node(0, jj + 1)]),
        "xmax": np.column_stack([node(nx, jj), node(nx, jj + 1)]),
        "ymin": np.column_stack([node(ii, 0), node(ii + 1, 0)]),
        "ymax": np.column_stack([node(ii, ny), node(ii + 1, ny)]),
    }
    return PartMesh(points, cells, faces, axisymmetric, lx / nx)
