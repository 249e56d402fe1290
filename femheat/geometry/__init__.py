"""Part geometry: built-in shapes registered with their parameters and named faces.

Importing this package registers every built-in shape. gmsh is imported only when a shape is
built.
"""

# importing registers: rectangle and box (basic); 2D sections, profiles, outlines; solids,
# CAD files, mesh files
from . import basic, cad, meshfile, outline, profiles, sections, solids  # noqa: F401
from .base import (
    REQUIRED,
    SHAPES,
    Built,
    Param,
    ShapeDef,
    ShapeParamError,
    check_params,
    get_shape,
    register,
    resolve_paths,
)

__all__ = [
    "REQUIRED",
    "SHAPES",
    "Built",
    "Param",
    "ShapeDef",
    "ShapeParamError",
    "check_params",
    "get_shape",
    "register",
    "resolve_paths",
]
