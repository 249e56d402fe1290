"""Mesh controls: finer elements near named faces and at corners; part sizes with units."""

from __future__ import annotations

import numpy as np
import pytest

from femheat.errors import CaseError
from femheat.problem import build_problem

from .helpers import make_case


def _edge_lengths_on(mesh, face):
    seg = mesh.faces[face]
    return np.linalg.norm(mesh.points[seg[:, 1]] - mesh.points[seg[:, 0]], axis=1)


def test_refinement_near_a_face_sets_the_edge_size_there():
    """The boundary edges of the refined face have about the requested size (gmsh meets a
    size field to within a factor of about 1.5; common practice, no source)."""
    base = dict(part={"model": "planar", "shape": "rectangle", "size": [0.05, 0.02]}, faces={})
    coarse = build_problem(make_case(**base, mesh={"size": 0.004}))
    fine = build_problem(
        make_case(**base, mesh={"size": 0.004, "refine": [{"faces": ["xmax"], "size": 0.0005}]})
    )
    assert np.mean(_edge_lengths_on(coarse.mesh, "xmax")) > 0.003
    assert np.mean(_edge_lengths_on(fine.mesh, "xmax")) == pytest.approx(0.0005, rel=0.5)
    # far from the refined face the mesh keeps the coarse size
    assert np.mean(_edge_lengths_on(fine.mesh, "xmin")) > 0.003
    assert fine.mesh.nodes > coarse.mesh.nodes


def test_corner_size_refines_every_corner():
    base = dict(part={"model": "planar", "shape": "rectangle", "size": [0.05, 0.02]}, faces={})
    mesh = build_problem(make_case(**base, mesh={"size": 0.004, "corner_size": 0.0004})).mesh
    seg = mesh.faces["ymin"]
    mid = 0.5 * (mesh.points[seg[:, 0]] + mesh.points[seg[:, 1]])
    length = np.linalg.norm(mesh.points[seg[:, 1]] - mesh.points[seg[:, 0]], axis=1)
    near_corner = length[np.argmin(mid[:, 0])]
    middle = length[np.argmin(np.abs(mid[:, 0] - 0.025))]
    assert near_corner < 0.001 < middle


def test_refining_an_unknown_face_names_the_place():
    case = make_case(mesh={"refine": [{"faces": ["xmx"], "size": 0.001}]})
    with pytest.raises(CaseError) as err:
        build_problem(case)
    assert str(err.value).startswith("mesh.refine[0].faces") and "xmax" in str(err.value)


def test_part_sizes_take_units():
    """25.4 mm = 1 in exactly (NIST SP 811, B.8)."""
    case = make_case(part={"model": "planar", "shape": "rectangle", "size": ["2 in", "5 mm"]})
    assert case.part.size == pytest.approx((0.0508, 0.005))
