"""VTK field series for review in any VTK reader (ParaView, pyvista, meshio).

Files written into the results folder:

* ``fields.pvd``: the time-series collection; one ``DataSet`` per frame with its time (s).
* ``fields/frame_NNNN.vtu``: one unstructured grid per saved time (triangles in 2D,
  tetrahedra in 3D) with point data

  - ``temperature_C``: temperature, C;
  - ``time_to_target_s``: when the node first reached the target, s; NaN where it had not by
    the frame time (and everywhere when the case has no target);
  - ``heating_rate_C_per_h``: dT/dt, C/h (negative when cooling; NaN at time 0);

  and field data ``TimeValue`` (s, read by ParaView as the frame time), ``target_C`` (when
  there is a target), ``at_target`` (1 in the frame taken at the moment the whole part reached
  the target) and ``axisymmetric_rz_section`` (1 for an axisymmetric part).
* ``faces.vtu``: the boundary of the part, segments in 2D and triangles in 3D, with cell data
  ``face_id`` and one field-data entry per face, named after the face and holding its id
  (the convention meshio uses for gmsh physical names), so both readers show the names.

Planar parts are drawn in the x-y plane at z = 0 (m). Axisymmetric parts are written as
their r-z section: x = r and y = z (m), z = 0; revolve about the y axis to see the body.

Every file is written atomically (a temporary file in the same folder, then a rename), and the
collection is rewritten after each frame, so a run that stops early leaves a readable series.
"""

from __future__ import annotations

import os
from pathlib import Path
from xml.sax.saxutils import quoteattr

import numpy as np

from ..mesh import PartMesh
from .files import atomic_write_text
from .frames import Frame
from .images import atomic_save

__all__ = [
    "FIELDS",
    "part_grid",
    "faces_grid",
    "write_vtu",
    "pvd_text",
    "VtkSeriesWriter",
    "write_series",
]

FIELDS = ("temperature_C", "time_to_target_s", "heating_rate_C_per_h")
"""Point-data names in every frame."""


def _points3(mesh: PartMesh) -> np.ndarray:
    """Node coordinates as an (N, 3) copy (VTK may share the buffer; the mesh stays intact)."""
    pts = np.zeros((mesh.nodes, 3))
    pts[:, : mesh.dim] = mesh.points
    return pts


def _mark(grid, mesh: PartMesh) -> None:
    if mesh.axisymmetric:
        grid.field_data["axisymmetric_rz_section"] = np.array([1], dtype=np.int32)


def part_grid(mesh: PartMesh):
    """The part as a pyvista UnstructuredGrid (no data yet); points in m."""
    import pyvista as pv

    ctype = pv.CellType.TRIANGLE if mesh.dim == 2 else pv.CellType.TETRA
    grid = pv.UnstructuredGrid({ctype: np.asarray(mesh.cells, dtype=np.int64)}, _points3(mesh))
    _mark(grid, mesh)
    return grid


def faces_grid(mesh: PartMesh):
    """The named boundary faces as a pyvista UnstructuredGrid with cell data ``face_id``.

    Field data holds one single-value array per face: its name -> its id.
    """
    import pyvista as pv

    ctype = pv.CellType.LINE if mesh.dim == 2 else pv.CellType.TRIANGLE
    names = list(mesh.face_names)
    blocks = [np.asarray(mesh.faces[n], dtype=np.int64) for n in names]
    conn = np.concatenate(blocks) if blocks else np.zeros((0, mesh.dim), dtype=np.int64)
    ids = np.concatenate([np.full(len(b), i, dtype=np.int32) for i, b in enumerate(blocks)])
    grid = pv.UnstructuredGrid({ctype: conn}, _points3(mesh))
    grid.cell_data["face_id"] = ids
    for i, n in enumerate(names):
        grid.field_data[n] = np.array([i], dtype=np.int32)
    _mark(grid, mesh)
    return grid


def write_vtu(grid, path: str | os.PathLike) -> Path:
    """Write an UnstructuredGrid as .vtu (binary, zlib) atomically: temp file, then rename."""
    from vtkmodules.vtkIOXML import vtkXMLUnstructuredGridWriter

    def write(name: str) -> None:
        w = vtkXMLUnstructuredGridWriter()
        w.SetFileName(name)
        w.SetInputData(grid)
        w.SetDataModeToBinary()
        w.SetCompressorTypeToZLib()
        if not w.Write():
            raise OSError(f"VTK could not write {path}")

    return atomic_save(path, write)


def pvd_text(entries, note: str = "") -> str:
    """A ParaView collection file listing (time_s, relative file name) entries."""
    lines = ['<?xml version="1.0"?>']
    if note:
        lines.append(f"<!-- {note.replace('--', '-')} -->")
    lines += [
        '<VTKFile type="Collection" version="0.1" byte_order="LittleEndian">',
        "  <Collection>",
    ]
    for t, name in entries:
        lines.append(
            f'    <DataSet timestep="{float(t)!r}" group="" part="0" file={quoteattr(name)}/>'
        )
    lines += ["  </Collection>", "</VTKFile>", ""]
    return "\n".join(lines)


class VtkSeriesWriter:
    """Frame sink: writes each `Frame` as a .vtu and keeps ``fields.pvd`` up to date.

    Args:
        folder: results folder.
        mesh: the part mesh.
        target_c: the target temperature, C (stored as field data), or None.
    """

    def __init__(self, folder: str | os.PathLike, mesh: PartMesh, target_c: float | None = None):
        self.folder = Path(folder)
        self.mesh = mesh
        self.target_c = target_c
        self.entries: dict[int, tuple[float, str]] = {}
        self._grid = None
        note = "femheat field series; times in s, coordinates in m"
        if mesh.axisymmetric:
            note += "; axisymmetric r-z section: x = r, y = z (revolve about the y axis)"
        self.note = note

    @property
    def pvd_path(self) -> Path:
        return self.folder / "fields.pvd"

    def _start(self) -> None:
        self._grid = part_grid(self.mesh)
        write_vtu(faces_grid(self.mesh), self.folder / "faces.vtu")

    def __call__(self, frame: Frame) -> None:
        if self._grid is None:
            self._start()
        g = self._grid
        g.point_data["temperature_C"] = frame.temperature
        g.point_data["time_to_target_s"] = frame.time_to_target
        g.point_data["heating_rate_C_per_h"] = frame.heating_rate
        g.field_data["TimeValue"] = np.array([frame.time_s])
        g.field_data["at_target"] = np.array([int("target" in frame.tags)], dtype=np.int32)
        if self.target_c is not None:
            g.field_data["target_C"] = np.array([float(self.target_c)])
        name = f"fields/frame_{frame.index:04d}.vtu"
        write_vtu(g, self.folder / name)
        self.entries[frame.index] = (frame.time_s, name)
        rows = [self.entries[k] for k in sorted(self.entries)]
        atomic_write_text(self.pvd_path, pvd_text(rows, self.note))

    def state(self) -> dict:
        """What a checkpoint keeps: the frames listed in the collection so far."""
        return {"entries": [[k, t, name] for k, (t, name) in sorted(self.entries.items())]}

    def restore(self, state: dict) -> None:
        """Continue a series from `state()`; its frame files are already in the folder."""
        self.entries = {int(k): (float(t), str(name)) for k, t, name in state["entries"]}


def write_series(
    folder: str | os.PathLike, mesh: PartMesh, frames, target_c: float | None = None
) -> Path:
    """Write frames kept in memory as a series (``fields.pvd`` and ``fields/``); the pvd path."""
    writer = VtkSeriesWriter(folder, mesh, target_c)
    for frame in frames:
        writer(frame)
    if writer._grid is None:
        writer._start()
        atomic_write_text(writer.pvd_path, pvd_text([], writer.note))
    return writer.pvd_path
