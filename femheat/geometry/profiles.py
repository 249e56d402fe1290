"""Bodies of revolution for the axisymmetric model, drawn as their half-profile in metres.

x is the radius (x >= 0) and y runs along the axis. Every profile starts at y = 0. The face on
the axis of a solid body is named ``axis``; it is listed in ``axis_faces`` and takes no
condition (no heat crosses the axis).

============== ===============================================================================
disc           solid disc or short cylinder: radius diameter/2, y from 0 to thickness
ring           annulus between inner and outer diameter, y from 0 to height
sphere         half-disc of radius ``radius`` centred on the origin (y from -radius to radius);
               also a 3D ball centred on the origin in the solid model
stepped_shaft  steps stacked along +y from y = 0, the first step first
flange         raised face at y = 0 (gasket side), then the disc, then the hub along +y
============== ===============================================================================
"""

from __future__ import annotations

from collections.abc import Callable

from .base import Built, Param, ShapeDef, ShapeParamError, register
from .loops import LoopError, Segment, Vertex, build_surface, face_names_of, segments

__all__ = ["profile_loops", "shaft_face_names"]

_V = Vertex


def _m(v: float) -> str:
    return f"{v:g} m"


# --- profiles ---------------------------------------------------------------------------------


def _disc(p: dict) -> list[list[Vertex]]:
    r, t = p["diameter"] / 2.0, p["thickness"]
    return [[_V(0, 0, "bottom"), _V(r, 0, "rim"), _V(r, t, "top"), _V(0, t, "axis")]]


def _ring(p: dict) -> list[list[Vertex]]:
    ro, ri, h = p["outer_diameter"] / 2.0, p["inner_diameter"] / 2.0, p["height"]
    return [[_V(ri, 0, "bottom"), _V(ro, 0, "outer"), _V(ro, h, "top"), _V(ri, h, "inner")]]


def _sphere(p: dict) -> list[list[Vertex]]:
    r = p["radius"]
    return [[_V(0, -r, "surface", through=(r, 0.0)), _V(0, r, "axis")]]


def _shaft(p: dict) -> list[list[Vertex]]:
    steps = p["steps"]
    n = len(steps)
    verts = [_V(0, 0, "first_end")]
    y = 0.0
    for i, (d, length) in enumerate(steps, start=1):
        r = d / 2.0
        verts.append(_V(r, y, f"step_{i}"))
        y += length
        if i < n:
            verts.append(_V(r, y, f"shoulder_{i}_{i + 1}"))
    verts.append(_V(steps[-1][0] / 2.0, y, "last_end"))
    verts.append(_V(0, y, "axis"))
    return [verts]


def _flange(p: dict) -> list[list[Vertex]]:
    rb = p["bore_diameter"] / 2.0
    ro = p["outer_diameter"] / 2.0
    rh = p["hub_diameter"] / 2.0
    rhe = (p["hub_end_diameter"] or p["hub_diameter"]) / 2.0
    rr, f = p["raised_face_diameter"] / 2.0, p["raised_face_height"]
    t, length = p["disc_thickness"], p["hub_length"]
    top = f + t + length
    verts = []
    if f > 0:
        verts += [_V(rb, 0, "raised_face"), _V(rr, 0, "raised_face_rim"), _V(rr, f, "disc_face")]
    else:
        verts += [_V(rb, 0, "disc_face")]
    verts += [
        _V(ro, f, "disc_rim"),
        _V(ro, f + t, "back_face"),
        _V(rh, f + t, "hub_outer", p["hub_fillet"], radius_label="hub_fillet"),
        _V(rhe, top, "hub_end"),
        _V(rb, top, "bore"),
    ]
    return [verts]


# --- checks -----------------------------------------------------------------------------------


def _less(name: str, value: float, limit: float, what: str, fix: str) -> None:
    if not value < limit:
        raise ShapeParamError(name, f"{_m(value)} must be less than {what} ({_m(limit)})", fix)


def _check_ring(p: dict, model: str) -> None:
    _less(
        "inner_diameter",
        p["inner_diameter"],
        p["outer_diameter"],
        "the outer_diameter",
        "for a solid disc use shape 'disc'",
    )


def _check_shaft(p: dict, model: str) -> None:
    steps = p["steps"]
    for i in range(1, len(steps)):
        if steps[i][0] == steps[i - 1][0]:
            raise ShapeParamError(
                "steps",
                f"step {i + 1} has the same diameter as step {i} ({_m(steps[i][0])})",
                "merge them into one step with the summed length",
                i,
            )


def _check_flange(p: dict, model: str) -> None:
    bore, od = p["bore_diameter"], p["outer_diameter"]
    hub, hub_end = p["hub_diameter"], p["hub_end_diameter"] or p["hub_diameter"]
    rf, rfh = p["raised_face_diameter"], p["raised_face_height"]
    _less("bore_diameter", bore, hub_end, "the hub_end_diameter", "check the bore and the hub")
    _less("bore_diameter", bore, hub, "the hub_diameter", "check the bore and the hub")
    _less("hub_diameter", hub, od, "the outer_diameter", "check the hub and the outer diameter")
    if hub_end > hub:
        raise ShapeParamError(
            "hub_end_diameter",
            f"{_m(hub_end)} is larger than the hub_diameter at the disc ({_m(hub)})",
            "give the hub's diameter at its free end, at most hub_diameter (a tapered hub "
            "narrows towards the end)",
        )
    if (rf > 0) != (rfh > 0):
        given, missing = (
            ("raised_face_diameter", "raised_face_height")
            if rf > 0
            else ("raised_face_height", "raised_face_diameter")
        )
        raise ShapeParamError(
            missing,
            f"missing (or 0) while {given} is given",
            "give both raised_face_diameter and raised_face_height, or neither for a flat face",
        )
    if rf > 0:
        _less(
            "raised_face_diameter", rf, od, "the outer_diameter", "check the raised face diameter"
        )
        if rf <= bore:
            raise ShapeParamError(
                "raised_face_diameter",
                f"{_m(rf)} must be larger than the bore_diameter ({_m(bore)})",
                "check the raised face diameter",
            )


# --- registration -----------------------------------------------------------------------------

_LOOPS: dict[str, Callable[[dict], list[list[Vertex]]]] = {}


def profile_loops(shape: str, params: dict) -> list[list[Segment]]:
    """The boundary loop of a registered profile, corners rounded."""
    return [segments(v) for v in _LOOPS[shape](params)]


def _builder(shape: str) -> Callable[..., Built]:
    def build(gmsh, params: dict, model: str) -> Built:
        return build_surface(gmsh, profile_loops(shape, params))

    return build


def _checker(shape: str, check: Callable[[dict, str], None] | None):
    def run(params: dict, model: str) -> None:
        if check is not None:
            check(params, model)
        try:
            profile_loops(shape, params)
        except LoopError as exc:
            raise ShapeParamError(exc.label or "shape", exc.problem, exc.fix) from None

    return run


def _register(
    name: str,
    loops: Callable[[dict], list[list[Vertex]]],
    params: tuple[Param, ...],
    faces: tuple[str, ...],
    doc: str,
    thickness: Callable[[dict], float],
    check: Callable[[dict, str], None] | None = None,
    axis: bool = True,
    dynamic_faces: Callable[[dict], tuple[str, ...]] | None = None,
) -> None:
    _LOOPS[name] = loops
    register(
        ShapeDef(
            name=name,
            models=("axisymmetric",),
            params=params,
            faces=faces,
            doc=doc,
            build=_builder(name),
            check=_checker(name, check),
            face_names=dynamic_faces,
            thickness=thickness,
            axis_faces=("axis",) if axis else (),
        )
    )


_register(
    "disc",
    _disc,
    (
        Param("diameter", "length", "diameter, m"),
        Param("thickness", "length", "thickness along the axis, m"),
    ),
    ("bottom", "rim", "top", "axis"),
    "Solid disc or short round bar about the y axis, y from 0 to thickness. Faces: bottom "
    "(y = 0), top (y = thickness), rim (the cylindrical surface), axis.",
    thickness=lambda p: min(p["diameter"], p["thickness"]),
)

_register(
    "ring",
    _ring,
    (
        Param("outer_diameter", "length", "outside diameter, m"),
        Param("inner_diameter", "length", "inside (bore) diameter, m"),
        Param("height", "length", "height along the axis, m"),
    ),
    ("bottom", "outer", "top", "inner"),
    "Ring, hollow cylinder or thick-walled tube about the y axis, y from 0 to height. Faces: "
    "bottom (y = 0), top (y = height), outer (the outside surface), inner (the bore).",
    thickness=lambda p: min(p["height"], (p["outer_diameter"] - p["inner_diameter"]) / 2.0),
    check=_check_ring,
    axis=False,
)


def shaft_face_names(params: dict) -> tuple[str, ...]:
    """Face names of a stepped shaft with the given steps."""
    return face_names_of(profile_loops("stepped_shaft", params))


def _shaft_thickness(p: dict) -> float:
    """Smallest diameter, and the length of every step wider than its neighbours (a collar or
    a head, heated through its length from both sides)."""
    steps = p["steps"]
    sizes = [d for d, _ in steps]
    for i, (d, length) in enumerate(steps):
        around = [steps[j][0] for j in (i - 1, i + 1) if 0 <= j < len(steps)]
        if all(d > e for e in around):
            sizes.append(length)
    return min(sizes)


_register(
    "stepped_shaft",
    _shaft,
    (
        Param(
            "steps",
            "pairs",
            "[[diameter, length], ...] in m, from the end at y = 0 along the axis",
        ),
    ),
    ("first_end", "step_1", "shoulder_1_2", "step_2", "...", "step_N", "last_end", "axis"),
    "Shaft of round steps stacked along the y axis from y = 0. Faces: first_end (the end "
    "face of the first step, at y = 0), step_1 ... step_N (the cylindrical surface of each "
    "step, N the number of steps), shoulder_1_2 ... (the ring-shaped face where step i meets "
    "step i+1), last_end (the end face of the last step), axis.",
    thickness=_shaft_thickness,
    check=_check_shaft,
    dynamic_faces=shaft_face_names,
)


def _flange_faces(p: dict) -> tuple[str, ...]:
    return face_names_of(profile_loops("flange", p))


def _flange_thickness(p: dict) -> float:
    hub_end = p["hub_end_diameter"] or p["hub_diameter"]
    return min(p["disc_thickness"], (hub_end - p["bore_diameter"]) / 2.0)


_register(
    "flange",
    _flange,
    (
        Param("outer_diameter", "length", "outside diameter of the disc, m"),
        Param("bore_diameter", "length", "diameter of the bore through disc and hub, m"),
        Param("disc_thickness", "length", "thickness of the disc (raised face not included), m"),
        Param("hub_diameter", "length", "outside diameter of the hub where it meets the disc, m"),
        Param("hub_length", "length", "length of the hub beyond the back of the disc, m"),
        Param(
            "hub_end_diameter",
            "length",
            "outside diameter of the hub at its free end, m (default hub_diameter; smaller "
            "for a tapered hub)",
            None,
        ),
        Param("hub_fillet", "length0", "radius where the hub meets the back of the disc, m", 0.0),
        Param(
            "raised_face_diameter",
            "length0",
            "outside diameter of the raised face, m (0: flat face)",
            0.0,
        ),
        Param("raised_face_height", "length0", "height of the raised face, m (0: flat face)", 0.0),
    ),
    (
        "raised_face",
        "raised_face_rim",
        "disc_face",
        "disc_rim",
        "back_face",
        "hub_outer",
        "hub_end",
        "bore",
    ),
    "Hub flange about the y axis: the front (gasket) side at y = 0, the hub along +y. Faces: "
    "raised_face (the gasket face, when raised_face_height > 0) and raised_face_rim (its "
    "edge), disc_face (the front of the disc outside the raised face), disc_rim (the outside "
    "of the disc), back_face (the back of the disc around the hub), hub_outer (the hub surface, "
    "with its fillet), hub_end (the free end of the hub), bore. Bolt holes cannot be drawn in "
    "an axisymmetric model.",
    thickness=_flange_thickness,
    check=_check_flange,
    axis=False,
    dynamic_faces=_flange_faces,
)


# --- the sphere: axisymmetric half-profile or solid ball under one name -----------------------

_LOOPS["sphere"] = _sphere


def _build_sphere(gmsh, params: dict, model: str) -> Built:
    if model != "solid":
        return build_surface(gmsh, profile_loops("sphere", params))
    tag = gmsh.model.occ.addSphere(0.0, 0.0, 0.0, params["radius"])
    gmsh.model.occ.synchronize()
    surfaces = [abs(t) for _, t in gmsh.model.getBoundary([(3, tag)], oriented=False)]
    return Built(3, {"surface": surfaces}, [tag])


register(
    ShapeDef(
        name="sphere",
        models=("axisymmetric", "solid"),
        params=(Param("radius", "length", "radius of the sphere, m"),),
        faces=("surface", "axis"),
        doc="Solid sphere centred on the origin. Axisymmetric: its half-profile (x >= 0), faces "
        "surface and axis. Solid: the whole ball, face surface.",
        build=_build_sphere,
        face_names=lambda p: ("surface", "axis"),
        thickness=lambda p: 2.0 * p["radius"],
        axis_faces=("axis",),
    )
)
