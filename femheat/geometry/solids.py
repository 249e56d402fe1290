"""Solid parts (model "solid"): cylinder, any planar section extruded, any profile revolved.

Placement and faces:

========== ==================================================================================
cylinder   axis along z from z = 0 to ``length``, centred on x = y = 0. Faces ``side``,
           ``end_bottom`` (z = 0) and ``end_top`` (z = ``length``).
extruded   the section (a planar shape, drawn in x-y as for the planar model) swept along z
           from 0 to ``length``. Each face of the section carries its name along the length;
           the two ends are ``end_bottom`` (z = 0) and ``end_top`` (z = ``length``).
revolved   the profile (an axisymmetric shape: x the radius, y the axis) turned about the
           y axis by ``angle`` degrees, from the x-y plane towards +z. Each face of the profile
           carries its name around (faces on the axis vanish); below 360 degrees the two cut
           planes are ``cut_start`` (the x-y plane, x >= 0) and ``cut_end``. Set the cuts of a
           symmetry sector insulated.
========== ==================================================================================

The section or profile is a sub-table checked like a ``[part]`` of its own model::

    [part]
    model = "solid"
    shape = "extruded"
    length = 0.5
    [part.section]
    shape = "angle"
    leg_a = 0.1
    thickness = 0.01

Extruded and revolved parts also take ``[[part.select]]`` face selections (see
`femheat.geometry.select`). Volumes are exact up to the OpenCASCADE geometry: pi r^2 L for the
cylinder, A L for an extrusion of a section of area A, and (angle in rad) x_c A for a
revolution of a profile of area A and centroid radius x_c (Pappus).
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import CaseError
from .base import Built, Param, ShapeDef, ShapeParamError, check_params, get_shape, register
from .select import apply_selections, parse_selections, surface_samples

__all__ = ["inner_shape", "END_FACES", "CUT_FACES"]

END_FACES = ("end_bottom", "end_top")
CUT_FACES = ("cut_start", "cut_end")


def inner_shape(value, model: str, param: str) -> tuple[ShapeDef, dict]:
    """The shape and checked parameters of a ``[part.section]``/``[part.profile]`` sub-table.

    Raises:
        ShapeParamError: on `param`, naming the inner key in the problem.
    """
    if not isinstance(value, dict):
        raise ShapeParamError(
            param,
            f"expected a table, got {value!r}",
            f'write it as [part.{param}] with shape = "..." and its parameters',
        )
    given = dict(value)
    name = given.pop("shape", None)
    if not isinstance(name, str):
        kind = "planar section" if model == "planar" else "axisymmetric profile"
        raise ShapeParamError(
            param,
            "missing shape",
            f'add shape = "..." to [part.{param}] (a {kind}; list them with femheat shapes)',
        )
    if "model" in given:
        raise ShapeParamError(
            param, "model is implied here", f"remove model from [part.{param}] ({model})"
        )
    try:
        params = check_params(name, model, given)
    except ShapeParamError as exc:
        inner = exc.param if exc.index is None else f"{exc.param}[{exc.index}]"
        fix = exc.fix.replace("valid keys here: model, shape,", "valid keys here: shape,")
        raise ShapeParamError(param, f"{inner}: {exc.problem}", fix) from None
    return get_shape(name), params


def _span(gmsh) -> float:
    """Largest extent of the model, m."""
    b = gmsh.model.getBoundingBox(-1, -1)
    return max(b[3] - b[0], b[4] - b[1], b[5] - b[2])


def _boundary(gmsh, volumes: list[int]) -> list[int]:
    return [abs(t) for _, t in gmsh.model.getBoundary([(3, v) for v in volumes], combined=True)]


def _sample_point(gmsh, tag: int) -> np.ndarray:
    """A point on the trimmed surface, near the middle of its parameter range."""
    lo, hi = gmsh.model.getParametrizationBounds(2, tag)
    mid = 0.5 * (np.asarray(lo) + np.asarray(hi))
    uv = surface_samples(gmsh, tag)
    best = uv[np.argmin(((uv - mid) ** 2).sum(axis=1))]
    return np.asarray(gmsh.model.getValue(2, tag, list(best)), dtype=float)


def carry_names(gmsh, groups: dict[str, list[int]], surfaces: list[int], project) -> dict:
    """Name swept surfaces after the section curves they were swept from.

    Args:
        groups: face name -> curve tags of the 2D section or profile.
        surfaces: tags of the swept (side) surfaces.
        project: maps a 3D point on a swept surface to its (x, y, 0) point on the section.

    Returns:
        Face name -> surface tags, in the order of `groups`; names with no surface are left out.

    Raises:
        ValueError: a surface lies on no named curve (a bug in a shape builder).
    """
    curve_name = {c: name for name, tags in groups.items() for c in tags}
    tol = 1e-4 * _span(gmsh)
    out: dict[str, list[int]] = {name: [] for name in groups}
    for s in surfaces:
        p = project(_sample_point(gmsh, s))
        best, dist = None, math.inf
        for c in curve_name:
            q, _ = gmsh.model.getClosestPoint(1, c, [float(p[0]), float(p[1]), 0.0])
            d = math.dist(q, (p[0], p[1], 0.0))
            if d < dist:
                best, dist = c, d
        if best is None or dist > tol:
            raise ValueError(f"swept surface {s} matches no named edge of the section")
        out[curve_name[best]].append(s)
    return {k: v for k, v in out.items() if v}


def _section_surfaces(gmsh, built: Built) -> list[int]:
    return list(built.volume_tags) or [t for _, t in gmsh.model.getEntities(2)]


# --- cylinder ---------------------------------------------------------------------------------


def _build_cylinder(gmsh, params: dict, model: str) -> Built:
    r, length = params["radius"], params["length"]
    vol = gmsh.model.occ.addCylinder(0.0, 0.0, 0.0, 0.0, 0.0, length, r)
    gmsh.model.occ.synchronize()
    tol = max(1e-6 * _span(gmsh), 1e-7)
    faces: dict[str, list[int]] = {"side": [], "end_bottom": [], "end_top": []}
    for s in _boundary(gmsh, [vol]):
        b = gmsh.model.getBoundingBox(2, s)
        if b[5] - b[2] > 2 * tol:
            faces["side"].append(s)
        elif abs(b[2]) < 2 * tol:
            faces["end_bottom"].append(s)
        else:
            faces["end_top"].append(s)
    return Built(3, faces, [vol])


register(
    ShapeDef(
        name="cylinder",
        models=("solid",),
        params=(
            Param("radius", "length", "radius in m"),
            Param("length", "length", "length along z in m"),
        ),
        faces=("side", "end_bottom", "end_top"),
        doc="Round bar or billet, axis along z from z = 0 to length, centred on x = y = 0. "
        "Faces: side, end_bottom (z = 0), end_top (z = length).",
        build=_build_cylinder,
        thickness=lambda p: min(p["radius"], p["length"]),
    )
)


# --- extruded ---------------------------------------------------------------------------------


def _check_extruded(params: dict, model: str) -> None:
    # the section's face names may need its file: they are checked when the part is built
    inner_shape(params["section"], "planar", "section")
    parse_selections(params["select"])


def _no_clash(names, reserved: tuple[str, ...], param: str) -> None:
    for name in reserved:
        if name in names:
            raise CaseError(
                f"part.{param}",
                f"the {param} already has a face named {name!r}, a name the solid gives to "
                "its own faces",
                f"rename that face of the {param}",
            )


def _extruded_faces(params: dict) -> tuple[str, ...]:
    if params.get("select"):
        return ()  # known once built
    shape, sp = inner_shape(params["section"], "planar", "section")
    names = shape.names_of_faces(sp)
    return (*names, *END_FACES) if names else ()


def _extruded_thickness(params: dict) -> float:
    shape, sp = inner_shape(params["section"], "planar", "section")
    inner = shape.thickness(sp) if shape.thickness else None
    return min(inner, params["length"]) if inner is not None else params["length"]


def _build_extruded(gmsh, params: dict, model: str) -> Built:
    shape, sp = inner_shape(params["section"], "planar", "section")
    built = shape.build(gmsh, sp, "planar")
    if built.dim != 2:
        raise ValueError(f"section {shape.name!r} is not a 2D shape")
    _no_clash(built.faces, END_FACES, "section")
    bottoms = _section_surfaces(gmsh, built)
    out = gmsh.model.occ.extrude([(2, s) for s in bottoms], 0.0, 0.0, params["length"])
    gmsh.model.occ.synchronize()
    vols = [t for d, t in out if d == 3]
    tops = [out[k - 1][1] for k, (d, _) in enumerate(out) if d == 3]
    boundary = _boundary(gmsh, vols)
    sides = [s for s in boundary if s not in bottoms and s not in tops]
    faces = carry_names(gmsh, built.faces, sides, lambda p: (p[0], p[1], 0.0))
    faces["end_bottom"] = [s for s in bottoms if s in boundary]
    faces["end_top"] = [s for s in tops if s in boundary]
    faces = apply_selections(gmsh, vols, faces, parse_selections(params["select"]))
    return Built(3, faces, vols)


register(
    ShapeDef(
        name="extruded",
        models=("solid",),
        params=(
            Param("section", "any", "[part.section]: a planar shape and its parameters"),
            Param("length", "length", "length along z in m"),
            Param("select", "any", "[[part.select]] named face selections", ()),
        ),
        faces=END_FACES,
        doc="A planar section (any planar shape, in x-y) extruded along z from 0 to length. "
        "Faces: the section's faces carried along, end_bottom (z = 0), end_top (z = length); "
        "[[part.select]] renames chosen faces.",
        build=_build_extruded,
        check=_check_extruded,
        face_names=_extruded_faces,
        thickness=_extruded_thickness,
    )
)


# --- revolved ---------------------------------------------------------------------------------


def _check_revolved(params: dict, model: str) -> None:
    inner_shape(params["profile"], "axisymmetric", "profile")
    parse_selections(params["select"])


def _revolved_faces(params: dict) -> tuple[str, ...]:
    if params.get("select"):
        return ()
    shape, sp = inner_shape(params["profile"], "axisymmetric", "profile")
    names = tuple(n for n in shape.names_of_faces(sp) if n not in shape.axis_faces)
    if not names:
        return ()
    return (*names, *CUT_FACES) if params["angle"] < 360 else names


def _revolved_thickness(params: dict) -> float | None:
    shape, sp = inner_shape(params["profile"], "axisymmetric", "profile")
    return shape.thickness(sp) if shape.thickness else None


def _build_revolved(gmsh, params: dict, model: str) -> Built:
    shape, sp = inner_shape(params["profile"], "axisymmetric", "profile")
    built = shape.build(gmsh, sp, "axisymmetric")
    if built.dim != 2:
        raise ValueError(f"profile {shape.name!r} is not a 2D shape")
    _no_clash(built.faces, CUT_FACES, "profile")
    starts = _section_surfaces(gmsh, built)
    angle = math.radians(params["angle"])
    # about +y by -angle: (r, y, 0) goes to (r cos a, y, r sin a), i.e. towards +z
    out = gmsh.model.occ.revolve([(2, s) for s in starts], 0, 0, 0, 0, 1, 0, -angle)
    gmsh.model.occ.synchronize()
    vols = [t for d, t in out if d == 3]
    ends = [out[k - 1][1] for k, (d, _) in enumerate(out) if d == 3]
    boundary = _boundary(gmsh, vols)
    sides = [s for s in boundary if s not in starts and s not in ends]
    groups = {n: t for n, t in built.faces.items() if n not in shape.axis_faces}
    faces = carry_names(gmsh, groups, sides, lambda p: (math.hypot(p[0], p[2]), p[1], 0.0))
    if params["angle"] < 360:
        faces["cut_start"] = [s for s in starts if s in boundary]
        faces["cut_end"] = [s for s in ends if s in boundary]
    faces = apply_selections(gmsh, vols, faces, parse_selections(params["select"]))
    return Built(3, faces, vols)


register(
    ShapeDef(
        name="revolved",
        models=("solid",),
        params=(
            Param("profile", "any", "[part.profile]: an axisymmetric shape and its parameters"),
            Param("angle", "angle", "degrees turned about the y axis, e.g. 90 for a quarter"),
            Param("select", "any", "[[part.select]] named face selections", ()),
        ),
        faces=CUT_FACES,
        doc="An axisymmetric profile (x the radius, y the axis) turned about the y axis by "
        "angle degrees, from the x-y plane towards +z. Faces: the profile's faces carried "
        "around (not those on the axis), cut_start and cut_end (below 360 degrees; set them "
        "insulated for a symmetry sector); [[part.select]] renames chosen faces.",
        build=_build_revolved,
        check=_check_revolved,
        face_names=_revolved_faces,
        thickness=_revolved_thickness,
    )
)
