"""Cross-sections of long parts for the planar model (per metre of length), in metres.

Each section is drawn in the x-y plane and its faces are named after the part of the section
they bound. Placement (so that probe points can be given):

============== ===============================================================================
plate          x from 0 to ``width``, y from 0 to ``thickness``
round_bar      centred on the origin
tube           centred on the origin
angle          heel (outer corner) at the origin; leg a along +x, leg b along +y
tee            symmetric about x = 0; tip of the web at y = 0, outer face of the flange at
               y = ``depth``
i_section      centred on the origin; web along y, flanges along x
channel        back of the web on x = 0, flanges pointing to +x; symmetric about y = 0
hollow_section centred on the origin; ``width`` along x, ``depth`` along y
============== ===============================================================================

Roundings (root, toe, heel and corner radii) are circular arcs tangent to both edges they join.
A face whose length comes out zero (a rounding that uses a whole edge) is left out of the
face list; faces that need a radius (``root``, ``heel``, ``roots``) exist only when it is > 0.
"""

from __future__ import annotations

from collections.abc import Callable

from .base import Built, Param, ShapeDef, ShapeParamError, register
from .loops import LoopError, Segment, Vertex, build_surface, face_names_of, segments

__all__ = ["section_loops"]

_V = Vertex


def _m(v: float) -> str:
    return f"{v:g} m"


def _circle(r: float, name: str, label: str) -> list[Vertex]:
    """A full circle of radius r about the origin as two half arcs."""
    return [_V(r, 0.0, name, through=(0.0, r), label=label), _V(-r, 0.0, name, through=(0.0, -r))]


def _rounded_rect(w: float, h: float, r: float, name: str, label: str) -> list[Vertex]:
    """Rectangle w x h centred on the origin, corners rounded with radius r."""
    x, y = w / 2.0, h / 2.0
    return [
        _V(-x, -y, name, r, radius_label=label),
        _V(x, -y, name, r, radius_label=label),
        _V(x, y, name, r, radius_label=label),
        _V(-x, y, name, r, radius_label=label),
    ]


# --- the sections: loops of vertices (outline first, then holes) ---------------------------


def _plate(p: dict) -> list[list[Vertex]]:
    w, t = p["width"], p["thickness"]
    return [
        [_V(0, 0, "bottom"), _V(w, 0, "right"), _V(w, t, "top"), _V(0, t, "left")],
    ]


def _round_bar(p: dict) -> list[list[Vertex]]:
    return [_circle(p["diameter"] / 2.0, "surface", "diameter")]


def _tube(p: dict) -> list[list[Vertex]]:
    ro = p["outer_diameter"] / 2.0
    return [_circle(ro, "outer", "outer_diameter"), _circle(ro - p["wall"], "inner", "wall")]


def _angle(p: dict) -> list[list[Vertex]]:
    a, t = p["leg_a"], p["thickness"]
    b = p["leg_b"] if p["leg_b"] is not None else a
    r1, r2, r0 = p["root_radius"], p["toe_radius"], p["heel_radius"]
    return [
        [
            _V(0, 0, "leg_a_outer", r0, round_name="heel", radius_label="heel_radius"),
            _V(a, 0, "leg_a_tip"),
            _V(a, t, "leg_a_inner", r2, round_name="leg_a_tip", radius_label="toe_radius"),
            _V(t, t, "leg_b_inner", r1, round_name="root", radius_label="root_radius"),
            _V(t, b, "leg_b_tip", r2, round_name="leg_b_tip", radius_label="toe_radius"),
            _V(0, b, "leg_b_outer"),
        ]
    ]


def _tee(p: dict) -> list[list[Vertex]]:
    b, d = p["width"], p["depth"]
    tf, tw, r = p["flange_thickness"], p["web_thickness"], p["root_radius"]
    x, y = tw / 2.0, d - tf
    return [
        [
            _V(-x, 0, "web_tip"),
            _V(x, 0, "web_sides"),
            _V(x, y, "flange_inner", r, round_name="roots", radius_label="root_radius"),
            _V(b / 2, y, "flange_tips"),
            _V(b / 2, d, "flange_outer"),
            _V(-b / 2, d, "flange_tips"),
            _V(-b / 2, y, "flange_inner"),
            _V(-x, y, "web_sides", r, round_name="roots", radius_label="root_radius"),
        ]
    ]


def _i_section(p: dict) -> list[list[Vertex]]:
    b, h = p["width"], p["depth"]
    tf, tw, r = p["flange_thickness"], p["web_thickness"], p["root_radius"]
    x, y, e = tw / 2.0, h / 2.0, b / 2.0
    f = y - tf

    def root(px, py, name):
        return _V(px, py, name, r, round_name="roots", radius_label="root_radius")

    return [
        [
            _V(-e, -y, "bottom_flange_outer"),
            _V(e, -y, "flange_tips"),
            _V(e, -f, "flange_inner"),
            root(x, -f, "web_sides"),
            root(x, f, "flange_inner"),
            _V(e, f, "flange_tips"),
            _V(e, y, "top_flange_outer"),
            _V(-e, y, "flange_tips"),
            _V(-e, f, "flange_inner"),
            root(-x, f, "web_sides"),
            root(-x, -f, "flange_inner"),
            _V(-e, -f, "flange_tips"),
        ]
    ]


def _channel(p: dict) -> list[list[Vertex]]:
    b, h = p["width"], p["depth"]
    tf, tw, r = p["flange_thickness"], p["web_thickness"], p["root_radius"]
    y = h / 2.0
    f = y - tf

    def root(px, py, name):
        return _V(px, py, name, r, round_name="roots", radius_label="root_radius")

    return [
        [
            _V(0, -y, "flange_outer"),
            _V(b, -y, "flange_tips"),
            _V(b, -f, "flange_inner"),
            root(tw, -f, "web_inner"),
            root(tw, f, "flange_inner"),
            _V(b, f, "flange_tips"),
            _V(b, y, "flange_outer"),
            _V(0, y, "web_back"),
        ]
    ]


def _hollow(p: dict) -> list[list[Vertex]]:
    b, h, t, ro = p["width"], p["depth"], p["wall"], p["outer_radius"]
    ri = max(ro - t, 0.0)
    return [
        _rounded_rect(b, h, ro, "outer", "outer_radius"),
        _rounded_rect(b - 2 * t, h - 2 * t, ri, "inner", "outer_radius"),
    ]


# --- consistency checks ----------------------------------------------------------------------


def _less(name: str, value: float, limit: float, what: str, fix: str) -> None:
    if not value < limit:
        raise ShapeParamError(name, f"{_m(value)} must be less than {what} ({_m(limit)})", fix)


def _at_most(name: str, value: float, limit: float, what: str, fix: str) -> None:
    if value > limit * (1 + 1e-12):
        raise ShapeParamError(
            name, f"{_m(value)} is larger than {what} allows ({_m(limit)} at most)", fix
        )


def _check_tube(p: dict, model: str) -> None:
    ro = p["outer_diameter"] / 2.0
    _less("wall", p["wall"], ro, "half the outer_diameter", "for a solid bar use shape 'round_bar'")


def _check_angle(p: dict, model: str) -> None:
    a, t = p["leg_a"], p["thickness"]
    b = p["leg_b"] if p["leg_b"] is not None else a
    r1, r2, r0 = p["root_radius"], p["toe_radius"], p["heel_radius"]
    short = "leg_a" if a <= b else "leg_b"
    _less("thickness", t, min(a, b), f"{short}", "give the leg thickness, smaller than the legs")
    _at_most("toe_radius", r2, t, "the thickness", "use a toe_radius no larger than the thickness")
    room = min(a, b) - t
    if r1 + r2 > room * (1 + 1e-12):
        raise ShapeParamError(
            "root_radius",
            f"{_m(r1)} is larger than the leg length allows: root_radius + toe_radius "
            f"({_m(r1 + r2)}) must not exceed {short} - thickness = {_m(room)}",
            "use smaller root and toe radii",
        )
    _at_most(
        "heel_radius",
        r0,
        r1 + t,
        "root_radius + thickness (a larger heel would make the corner thinner than the legs)",
        "use heel_radius = root_radius + thickness for a bent angle, 0 for a rolled one",
    )


def _check_tee(p: dict, model: str) -> None:
    b, d = p["width"], p["depth"]
    tf, tw, r = p["flange_thickness"], p["web_thickness"], p["root_radius"]
    _less("web_thickness", tw, b, "the flange width", "check web_thickness and width")
    _less("flange_thickness", tf, d, "the depth", "check flange_thickness and depth")
    _at_most(
        "root_radius",
        r,
        min((b - tw) / 2.0, d - tf),
        "the flange outstand (width - web_thickness)/2 and the web height below the flange",
        "use a smaller root_radius",
    )


def _check_i(p: dict, model: str) -> None:
    b, h = p["width"], p["depth"]
    tf, tw, r = p["flange_thickness"], p["web_thickness"], p["root_radius"]
    _less("web_thickness", tw, b, "the flange width", "check web_thickness and width")
    _less("flange_thickness", tf, h / 2.0, "half the depth", "check flange_thickness and depth")
    room = min((b - tw) / 2.0, (h - 2.0 * tf) / 2.0)
    _at_most(
        "root_radius",
        r,
        room,
        "the flange outstand (width - web_thickness)/2 and half the web height between the flanges",
        "use a smaller root_radius",
    )


def _check_channel(p: dict, model: str) -> None:
    b, h = p["width"], p["depth"]
    tf, tw, r = p["flange_thickness"], p["web_thickness"], p["root_radius"]
    _less("web_thickness", tw, b, "the flange width", "check web_thickness and width")
    _less("flange_thickness", tf, h / 2.0, "half the depth", "check flange_thickness and depth")
    _at_most(
        "root_radius",
        r,
        min(b - tw, (h - 2.0 * tf) / 2.0),
        "the flange outstand width - web_thickness and half the web height between the flanges",
        "use a smaller root_radius",
    )


def _check_hollow(p: dict, model: str) -> None:
    b, h, t, ro = p["width"], p["depth"], p["wall"], p["outer_radius"]
    _less("wall", t, min(b, h) / 2.0, "half the smaller side", "give the wall thickness")
    _at_most("outer_radius", ro, min(b, h) / 2.0, "half the smaller side", "use a smaller radius")


# --- registration ----------------------------------------------------------------------------


def section_loops(shape: str, params: dict) -> list[list[Segment]]:
    """The boundary loops (outline, then holes) of a registered section, corners rounded."""
    return [segments(v) for v in _LOOPS[shape](params)]


def _segments_or_error(shape: str, params: dict) -> list[list[Segment]]:
    try:
        return section_loops(shape, params)
    except LoopError as exc:
        raise ShapeParamError(exc.label or "shape", exc.problem, exc.fix) from None


def _builder(shape: str) -> Callable[..., Built]:
    def build(gmsh, params: dict, model: str) -> Built:
        return build_surface(gmsh, section_loops(shape, params))

    return build


def _checker(shape: str, check: Callable[[dict, str], None] | None):
    def run(params: dict, model: str) -> None:
        if check is not None:
            check(params, model)
        _segments_or_error(shape, params)  # roundings that do not fit, in the user's words

    return run


def _register(
    name: str,
    loops: Callable[[dict], list[list[Vertex]]],
    params: tuple[Param, ...],
    faces: tuple[str, ...],
    doc: str,
    thickness: Callable[[dict], float],
    check: Callable[[dict, str], None] | None = None,
) -> None:
    _LOOPS[name] = loops
    register(
        ShapeDef(
            name=name,
            models=("planar",),
            params=params,
            faces=faces,
            doc=doc,
            build=_builder(name),
            check=_checker(name, check),
            face_names=lambda p: face_names_of(section_loops(name, p)),
            thickness=thickness,
        )
    )


_LOOPS: dict[str, Callable[[dict], list[list[Vertex]]]] = {}

_ROOT = Param("root_radius", "length0", "radius of the fillets where web meets flange, m", 0.0)

_register(
    "plate",
    _plate,
    (
        Param("width", "length", "width of the plate (along x), m"),
        Param("thickness", "length", "thickness of the plate (along y), m"),
    ),
    ("bottom", "right", "top", "left"),
    "Section of a long plate or flat bar: x from 0 to width, y from 0 to thickness. Faces: "
    "bottom (y = 0), top (y = thickness), left (x = 0), right (x = width). Set left to "
    '"symmetry" to model half the width.',
    thickness=lambda p: min(p["width"], p["thickness"]),
)

_register(
    "round_bar",
    _round_bar,
    (Param("diameter", "length", "diameter of the bar, m"),),
    ("surface",),
    "Section of a long round bar, centred on the origin. Face: surface.",
    thickness=lambda p: p["diameter"],
)

_register(
    "tube",
    _tube,
    (
        Param("outer_diameter", "length", "outside diameter, m"),
        Param("wall", "length", "wall thickness, m"),
    ),
    ("outer", "inner"),
    "Section of a long round tube or pipe, centred on the origin. Faces: outer (outside "
    "surface), inner (bore surface; set it insulated if the ends are closed).",
    thickness=lambda p: p["wall"],
    check=_check_tube,
)

_register(
    "angle",
    _angle,
    (
        Param("leg_a", "length", "length of leg a (along x from the heel), m"),
        Param("leg_b", "length", "length of leg b (along y from the heel), m; default leg_a", None),
        Param("thickness", "length", "thickness of both legs, m"),
        Param("root_radius", "length0", "radius of the inside corner between the legs, m", 0.0),
        Param("toe_radius", "length0", "radius of the inside edge at each leg tip, m", 0.0),
        Param(
            "heel_radius",
            "length0",
            "radius of the outside corner, m (0 for a rolled angle; root_radius + thickness "
            "for a bent one)",
            0.0,
        ),
    ),
    (
        "heel",
        "leg_a_outer",
        "leg_a_tip",
        "leg_a_inner",
        "root",
        "leg_b_inner",
        "leg_b_tip",
        "leg_b_outer",
    ),
    "L section with equal or unequal legs. The heel (outside corner) is at the origin, leg a "
    "runs along +x and leg b along +y. Faces: leg_a_outer and leg_b_outer (the backs of the "
    "legs), leg_a_inner and leg_b_inner (the insides), leg_a_tip and leg_b_tip (the ends, with "
    "their toe rounding), root (the inside corner rounding, when root_radius > 0), heel (the "
    "outside corner rounding, when heel_radius > 0).",
    thickness=lambda p: p["thickness"],
    check=_check_angle,
)

_register(
    "tee",
    _tee,
    (
        Param("width", "length", "flange width (along x), m"),
        Param("depth", "length", "overall depth, flange included (along y), m"),
        Param("flange_thickness", "length", "flange thickness, m"),
        Param("web_thickness", "length", "web thickness, m"),
        _ROOT,
    ),
    ("web_tip", "web_sides", "roots", "flange_inner", "flange_tips", "flange_outer"),
    "T section, symmetric about x = 0: the web tip on y = 0, the outer face of the flange on "
    "y = depth. Faces: flange_outer (the flat back of the flange), flange_inner (the underside "
    "of the flange on both sides of the web), flange_tips, web_sides, web_tip, roots (the "
    "fillets between web and flange, when root_radius > 0).",
    thickness=lambda p: min(p["flange_thickness"], p["web_thickness"]),
    check=_check_tee,
)

_register(
    "i_section",
    _i_section,
    (
        Param("width", "length", "flange width (along x), m"),
        Param("depth", "length", "overall depth (along y), m"),
        Param("flange_thickness", "length", "flange thickness, m"),
        Param("web_thickness", "length", "web thickness, m"),
        _ROOT,
    ),
    (
        "bottom_flange_outer",
        "flange_tips",
        "flange_inner",
        "roots",
        "web_sides",
        "top_flange_outer",
    ),
    "I or H section with parallel flanges, centred on the origin; the web runs along y. "
    "Faces: top_flange_outer and bottom_flange_outer (the outer faces of the flanges; set one "
    "insulated for a beam lying on the hearth), flange_inner (the four inside faces of the "
    "flanges), flange_tips (the four flange edges), web_sides, roots (the four fillets, when "
    "root_radius > 0).",
    thickness=lambda p: min(p["flange_thickness"], p["web_thickness"]),
    check=_check_i,
)

_register(
    "channel",
    _channel,
    (
        Param("width", "length", "flange width, web included (along x), m"),
        Param("depth", "length", "overall depth (along y), m"),
        Param("flange_thickness", "length", "flange thickness, m"),
        Param("web_thickness", "length", "web thickness, m"),
        _ROOT,
    ),
    ("flange_outer", "flange_tips", "flange_inner", "roots", "web_inner", "web_back"),
    "Channel (U) section with parallel flanges: the back of the web on x = 0, the flanges "
    "pointing to +x, symmetric about y = 0. Faces: web_back, web_inner (the web face between "
    "the flanges), flange_outer, flange_inner, flange_tips, roots (the two fillets, when "
    "root_radius > 0).",
    thickness=lambda p: min(p["flange_thickness"], p["web_thickness"]),
    check=_check_channel,
)

_register(
    "hollow_section",
    _hollow,
    (
        Param("width", "length", "outside width (along x), m"),
        Param("depth", "length", "outside depth (along y), m"),
        Param("wall", "length", "wall thickness, m"),
        Param(
            "outer_radius",
            "length0",
            "outside corner radius, m (the inside corners get outer_radius - wall when that "
            "is > 0)",
            0.0,
        ),
    ),
    ("outer", "inner"),
    "Rectangular (or square) hollow section, centred on the origin. Faces: outer (outside "
    "surface), inner (inside surface; set it insulated if the ends are closed).",
    thickness=lambda p: p["wall"],
    check=_check_hollow,
)
