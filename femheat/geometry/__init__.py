"""Part geometry: built-in shapes registered with their parameters and named faces.

Importing this package registers every built-in shape. gmsh is imported only when a shape is
built.
"""

from . import basic  # noqa: F401  (registers rectangle and box)
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
