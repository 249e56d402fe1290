"""CAD parts (model "solid"): STEP and BREP files read through gmsh's OpenCASCADE kernel.

::

    [part]
    model = "solid"
    shape = "step"                 # or "brep"
    file = "housing.step"          # relative to the case file's folder
    scale = 1                      # optional factor on the coordinates
    [[part.select]]                # optional named faces, see femheat.geometry.select
    name = "hearth"
    plane = "z = 0"

Units. A STEP file states its length unit and is converted to metres on reading, so a file
drawn in millimetres needs no scale. A BREP file carries no unit: its numbers are taken as
metres and ``scale`` converts them (0.001 for a file in mm). ``scale`` multiplies the
coordinates after that conversion in both cases, for a file whose unit is wrong. A part whose
largest dimension comes out over 20 m or under 1 mm is refused as a likely unit slip.

Faces. Every boundary surface is a face named ``surface_<id>``, the gmsh surface tag (listed
by ``femheat check``), unless a ``[[part.select]]`` selection gives it another name. A file
with several solids is fragmented into one conforming part (touching solids conduct into each
other); the ids are those after fragmenting.
"""

from __future__ import annotations

import contextlib
import logging
import os
import tempfile
from pathlib import Path

from ..errors import CaseError
from .base import Built, Param, ShapeDef, ShapeParamError, register
from .select import apply_selections, parse_selections

__all__ = ["MAX_SPAN", "MIN_SPAN", "import_cad", "quiet_output"]

log = logging.getLogger(__name__)

MAX_SPAN = 20.0  # m, largest plausible part dimension
MIN_SPAN = 1e-3  # m, smallest plausible part dimension
_SUFFIXES = {"step": (".step", ".stp"), "brep": (".brep", ".brp")}


@contextlib.contextmanager
def quiet_output():
    """Send what the C++ libraries write to stdout/stderr into the log instead.

    OpenCASCADE prints reader messages straight to file descriptor 1; the library must not
    print, so both descriptors go to a temporary file for the duration, then to the debug log.
    """
    import sys

    try:
        saved = [os.dup(1), os.dup(2)]
    except OSError:  # no usable descriptors (embedded interpreter): nothing to redirect
        yield
        return
    with tempfile.TemporaryFile(mode="w+b") as sink:
        for stream in (sys.stdout, sys.stderr):
            with contextlib.suppress(Exception):
                stream.flush()
        os.dup2(sink.fileno(), 1)
        os.dup2(sink.fileno(), 2)
        try:
            yield
        finally:
            for stream in (sys.stdout, sys.stderr):
                with contextlib.suppress(Exception):
                    stream.flush()
            os.dup2(saved[0], 1)
            os.dup2(saved[1], 2)
            for fd in saved:
                os.close(fd)
            sink.seek(0)
            text = sink.read().decode("utf-8", "replace").strip()
            if text:
                log.debug("CAD reader output: %s", text)


def _check_cad(kind: str):
    def check(params: dict, model: str) -> None:
        suffix = Path(params["file"]).suffix.lower()
        if suffix not in _SUFFIXES[kind]:
            other = next((k for k, v in _SUFFIXES.items() if suffix in v), None)
            fix = (
                f'use shape = "{other}" for a {suffix} file'
                if other
                else f"give a {' or '.join(_SUFFIXES[kind])} file"
            )
            raise ShapeParamError("file", f"{params['file']!r} is not a {kind.upper()} file", fix)
        parse_selections(params["select"])

    return check


def import_cad(gmsh, path: Path, kind: str, scale: float = 1.0) -> list[int]:
    """Read a STEP or BREP file into the current gmsh model, in metres.

    Args:
        path: the file (absolute). kind: "step" or "brep".
        scale: factor on the coordinates after the file's own unit conversion.

    Returns:
        The volume tags of the part (several solids fragmented into one conforming part).

    Raises:
        CaseError: missing or unreadable file, no solid in it, implausible size.
    """
    if not path.is_file():
        where = "is a folder" if path.is_dir() else "no such file"
        raise CaseError(
            "part.file",
            f"{str(path)!r}: {where}",
            "check the path; a relative path is taken from the case file's folder",
        )
    # STEP files state their unit: let OpenCASCADE convert to metres (a global OCC setting)
    gmsh.option.setString("Geometry.OCCTargetUnit", "M")
    # scale on reading: an exact similarity (occ.dilate would turn the faces into B-splines)
    gmsh.option.setNumber("Geometry.OCCScaling", scale)
    try:
        with quiet_output():
            gmsh.model.occ.importShapes(str(path))
            gmsh.model.occ.synchronize()
    except Exception as exc:
        raise CaseError(
            "part.file",
            f"{path.name} could not be read as {kind.upper()} ({exc})",
            f"export the part again as a {kind.upper()} solid and check the file is complete",
        ) from None
    finally:
        gmsh.option.setNumber("Geometry.OCCScaling", 1.0)
    vols = [t for _, t in gmsh.model.getEntities(3)]
    if not vols:
        counts = {d: len(gmsh.model.getEntities(d)) for d in (2, 1, 0)}
        raise CaseError(
            "part.file",
            f"{path.name} holds no solid (found {counts[2]} surfaces, {counts[1]} curves, "
            f"{counts[0]} points)",
            "export the part as a closed solid body, not as surfaces or a wireframe",
        )
    gmsh.model.removePhysicalGroups()
    if len(vols) > 1:
        out, _ = gmsh.model.occ.fragment([(3, v) for v in vols], [])
        gmsh.model.occ.synchronize()
        vols = [t for d, t in out if d == 3]
    _check_span(gmsh, scale, kind)
    return vols


def _check_span(gmsh, scale: float, kind: str) -> None:
    b = gmsh.model.getBoundingBox(-1, -1)
    span = max(b[3] - b[0], b[4] - b[1], b[5] - b[2])
    unit = "read in the file's own unit, " if kind == "step" else ""
    if span > MAX_SPAN:
        raise CaseError(
            "part.scale",
            f"the part's largest dimension is {span:.4g} m ({unit}scale {scale:g}), over "
            f"{MAX_SPAN:g} m: probably a unit slip",
            f"if the file's numbers are millimetres, set scale = {scale * 0.001:g}",
        )
    if span < MIN_SPAN:
        raise CaseError(
            "part.scale",
            f"the part's largest dimension is {span:.4g} m ({unit}scale {scale:g}), under "
            f"{MIN_SPAN * 1000:g} mm: probably a unit slip",
            f"if the file's numbers are metres read as millimetres, set scale = {scale * 1000:g}",
        )


def _build_cad(kind: str):
    def build(gmsh, params: dict, model: str) -> Built:
        vols = import_cad(gmsh, Path(params["file"]), kind, params["scale"])
        boundary = gmsh.model.getBoundary([(3, v) for v in vols], combined=True)
        faces = {
            f"surface_{abs(t)}": [abs(t)] for _, t in sorted(boundary, key=lambda e: abs(e[1]))
        }
        faces = apply_selections(gmsh, vols, faces, parse_selections(params["select"]))
        return Built(3, faces, vols)

    return build


def _params(kind: str) -> tuple[Param, ...]:
    unit = (
        "factor on the coordinates after the file's own unit (normally 1)"
        if kind == "step"
        else "factor from the file's numbers to metres, e.g. 0.001 for mm"
    )
    return (
        Param("file", "path", f"the {kind.upper()} file, relative to the case file"),
        Param("scale", "length", unit, 1.0),
        Param("select", "any", "[[part.select]] named face selections", ()),
    )


for _kind, _text in (
    ("step", "A STEP file (converted to metres from the unit it states)"),
    ("brep", "An OpenCASCADE BREP file (no unit: numbers are metres times scale)"),
):
    register(
        ShapeDef(
            name=_kind,
            models=("solid",),
            params=_params(_kind),
            faces=(),
            doc=f"{_text}, read through gmsh. Faces: surface_<id> for every boundary surface, "
            "unless renamed by [[part.select]] (plane, box, normal or surfaces).",
            build=_build_cad(_kind),
            check=_check_cad(_kind),
            face_names=lambda p: (),
        )
    )
