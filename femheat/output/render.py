"""Pictures of the part (PNG, off screen): the field at the target time, the time to target,
and the mesh with its faces coloured by name.

Planar and axisymmetric parts get a flat 2D view of their section with axes in mm (x, y or
r, z). Solid parts get an isometric view and a cut through the last point, on the plane
across the longest side of the part. Continuous colour maps are perceptually uniform
(`inferno` for temperature, `viridis` for time); face colours are categorical.

Drawing uses pyvista (VTK) off screen. Where VTK cannot open an off-screen OpenGL context
(no display, and neither EGL nor OSMesa in the system), 2D pictures are drawn with
matplotlib instead (`tripcolor`), and 3D pictures are skipped with a warning. `backend`
chooses: "auto" (pyvista, falling back), "pyvista" or "matplotlib".
"""

from __future__ import annotations

import ctypes.util
import logging
import os
import sys
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import FemheatError
from ..mesh import PartMesh
from ..units import hours_minutes
from .images import atomic_save

__all__ = ["Scene", "RenderLog", "render_pictures", "render_faces", "pyvista_can_render"]

log = logging.getLogger(__name__)

WINDOW = (1100, 800)  # px, width x height of every picture
TEMPERATURE_CMAP = "inferno"
TIME_CMAP = "viridis"
NAN_COLOUR = "#c8c8c8"
FACE_COLOURS = (
    "#1f77b4",
    "#ff7f0e",
    "#2ca02c",
    "#d62728",
    "#9467bd",
    "#8c564b",
    "#e377c2",
    "#17becf",
    "#bcbd22",
    "#7f7f7f",
)


@dataclass(frozen=True)
class Scene:
    """What the pictures show.

    Attributes:
        mesh: the part mesh (coordinates in m).
        part_model: "planar", "axisymmetric" or "solid".
        temperature: nodal temperatures (C) at `time_s`.
        time_s: time of `temperature`: the target crossing, or the end when not reached.
        reached: whether the whole part reached the target.
        target_c: target temperature, C, or None.
        node_time: time each node first reached the target, s (NaN where never), or None.
        last_point: the last point to reach the target (or the lagging point at the end), m.
        title: the case title.
        probes: (name, point in m) of the probes, marked on 2D pictures.
        face_labels: face name -> legend text for the faces picture (default: the name).
    """

    mesh: PartMesh
    part_model: str
    temperature: np.ndarray
    time_s: float
    reached: bool
    target_c: float | None
    node_time: np.ndarray | None
    last_point: tuple[float, ...] | None
    title: str = ""
    probes: tuple[tuple[str, tuple[float, ...]], ...] = ()
    face_labels: dict[str, str] | None = None

    @property
    def axes(self) -> tuple[str, ...]:
        if self.part_model == "axisymmetric":
            return ("r", "z")
        return ("x", "y") if self.mesh.dim == 2 else ("x", "y", "z")


@dataclass
class RenderLog:
    """Seconds spent per picture, and which drawing library made them."""

    backend: str = ""
    seconds: dict[str, float] = field(default_factory=dict)
    skipped: list[str] = field(default_factory=list)

    @property
    def total(self) -> float:
        return float(sum(self.seconds.values()))


def _hm(seconds: float) -> str:
    return hours_minutes(seconds)


def _point_text(scene: Scene) -> str:
    if scene.last_point is None:
        return ""
    pt = ", ".join(f"{1000 * v:.1f}" for v in scene.last_point)
    return f"({', '.join(scene.axes)}) = ({pt}) mm"


def _temperature_title(scene: Scene) -> str:
    if scene.target_c is None:
        return f"Temperature at the end, {_hm(scene.time_s)} h:min"
    if scene.reached:
        return (
            f"Temperature at {_hm(scene.time_s)} h:min, when the whole part reached "
            f"{scene.target_c:g} C"
        )
    return (
        f"Temperature at the end, {_hm(scene.time_s)} h:min: "
        f"target {scene.target_c:g} C not reached"
    )


def _last_label(scene: Scene) -> str:
    what = "last point" if scene.reached else "lagging point"
    return f"{what} {_point_text(scene)}"


# --- can VTK draw here? -------------------------------------------------------------------------


def pyvista_can_render() -> bool:
    """Whether an off-screen OpenGL context is likely: a display, EGL or OSMesa (Linux)."""
    if not sys.platform.startswith("linux"):
        return True
    if os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY"):
        return True
    return bool(ctypes.util.find_library("EGL") or ctypes.util.find_library("OSMesa"))


def _blank(path: Path) -> bool:
    from matplotlib.image import imread

    img = imread(str(path))
    return float(np.asarray(img, dtype=float).std()) < 1e-3


# --- pyvista --------------------------------------------------------------------------------------


class _Pv:
    """One off-screen pyvista plotter reused for every picture of a run (one GL context)."""

    def __init__(self):
        try:
            from vtkmodules.vtkCommonCore import vtkLogger

            # VTK tries an X display first and warns on stderr when there is none; it then
            # uses EGL or OSMesa. Keep the warning out of the user's terminal.
            vtkLogger.SetStderrVerbosity(vtkLogger.VERBOSITY_ERROR)
        except ImportError:  # pragma: no cover - older VTK
            pass
        import pyvista as pv

        pv.OFF_SCREEN = True
        self.pv = pv
        self.plotter = None

    def fresh(self, shape=(1, 1)):
        if self.plotter is not None:
            self.plotter.close()
        p = self.pv.Plotter(off_screen=True, window_size=list(WINDOW), shape=shape, border=False)
        self.plotter = p
        p.set_background("white")
        p.enable_parallel_projection()
        return p

    def close(self):
        if self.plotter is not None:
            self.plotter.close()


def _grid_mm(pv, mesh: PartMesh):
    from .vtk import part_grid

    g = part_grid(mesh)
    g.points *= 1000.0
    return g


def _bar(title: str, fmt: str = "%.0f") -> dict:
    return {
        "title": title + "\n",
        "fmt": fmt,
        "color": "black",
        "title_font_size": 18,
        "label_font_size": 16,
        "n_labels": 6,
        "vertical": True,
        "position_x": 0.86,
        "position_y": 0.12,
        "width": 0.06,
        "height": 0.72,
    }


def _view_2d(p, grid, scene: Scene) -> None:
    ax = scene.axes
    p.view_xy()
    p.enable_parallel_projection()
    p.show_bounds(
        grid=False,
        location="outer",
        ticks="outside",
        xtitle=f"{ax[0]} (mm)",
        ytitle=f"{ax[1]} (mm)",
        ztitle="",
        show_zaxis=False,
        show_zlabels=False,
        color="black",
        font_size=16,
        use_2d=True,
    )
    p.camera.zoom(0.8)


def _mark_point(p, point_mm, text: str, lift: float = 0.0) -> None:
    pt = np.zeros((1, 3))
    pt[0, : len(point_mm)] = point_mm
    pt[0, 2] += lift
    p.add_point_labels(
        pt,
        [text],
        point_size=16,
        point_color="#00e5ff",
        render_points_as_spheres=True,
        font_size=16,
        text_color="black",
        shape_color="white",
        shape_opacity=0.85,
        always_visible=True,
        margin=4,
    )


def _title(p, text: str) -> None:
    p.add_text(text, position="upper_left", font_size=11, color="black")


def _shot(p, path: Path) -> Path:
    p.renderer.ResetCameraClippingRange()  # the plotter is reused: fit the near/far planes
    return atomic_save(path, lambda name: p.screenshot(name, return_img=False))


def _longest_axis(mesh: PartMesh) -> int:
    ext = mesh.points.max(0) - mesh.points.min(0)
    return int(np.argmax(ext))


def _pv_field(r: _Pv, path, scene: Scene, values, bar_title, cmap, fmt, title, cut=False):
    pv = r.pv
    p = r.fresh()
    grid = _grid_mm(pv, scene.mesh)
    grid.point_data["v"] = values
    lp = None if scene.last_point is None else 1000.0 * np.asarray(scene.last_point)
    clim = None
    finite = values[np.isfinite(values)]
    if finite.size:
        lo, hi = float(finite.min()), float(finite.max())
        clim = [lo, hi if hi > lo else lo + 1.0]
    if scene.mesh.dim == 2:
        p.add_mesh(
            grid, scalars="v", cmap=cmap, clim=clim, nan_color=NAN_COLOUR, lighting=False,
            scalar_bar_args=_bar(bar_title, fmt), show_scalar_bar=True,
        )  # fmt: skip
        _view_2d(p, grid, scene)
        if lp is not None:
            _mark_point(p, lp, _last_label(scene), lift=1e-3 * float(np.ptp(grid.points)))
    else:
        shown = grid
        if cut and lp is not None:
            normal = np.zeros(3)
            normal[_longest_axis(scene.mesh)] = 1.0
            shown = grid.clip(normal=normal, origin=lp, invert=True)
        p.add_mesh(
            shown, scalars="v", cmap=cmap, clim=clim, nan_color=NAN_COLOUR, lighting=False,
            scalar_bar_args=_bar(bar_title, fmt), show_scalar_bar=True,
        )  # fmt: skip
        p.add_mesh(grid.extract_feature_edges(), color="black", line_width=1)
        p.view_isometric()
        p.add_axes(color="black", xlabel="x", ylabel="y", zlabel="z")
        if lp is not None and cut:
            _mark_point(p, lp, _last_label(scene))
        p.camera.zoom(0.85)
    _title(p, title)
    return _shot(p, path)


def _pv_faces(r: _Pv, path, mesh: PartMesh, axes, title: str, labels=None) -> Path:
    from .vtk import faces_grid

    p = r.fresh((1, 2) if mesh.dim == 3 else (1, 1))
    pv = r.pv
    grid = _grid_mm(pv, mesh)
    fg = faces_grid(mesh)
    fg.points *= 1000.0
    names = list(mesh.face_names)
    legend = []
    if mesh.dim == 2:
        p.add_mesh(grid, color="#f4f4f4", show_edges=True, edge_color="#9a9a9a", line_width=1)
        for i, n in enumerate(names):
            part = fg.extract_cells(np.flatnonzero(fg.cell_data["face_id"] == i))
            colour = FACE_COLOURS[i % len(FACE_COLOURS)]
            p.add_mesh(part, color=colour, line_width=6)
            legend.append([(labels or {}).get(n, n), colour])
        scene_axes = Scene(mesh, "axisymmetric" if mesh.axisymmetric else "planar",
                           np.zeros(mesh.nodes), 0.0, False, None, None, None)  # fmt: skip
        _view_2d(p, grid, scene_axes)
    else:
        # two views from opposite corners, so every face shows once
        for col, sign in ((0, 1.0), (1, -1.0)):
            p.subplot(0, col)
            p.set_background("white")
            p.enable_parallel_projection()
            for i, n in enumerate(names):
                part = fg.extract_cells(np.flatnonzero(fg.cell_data["face_id"] == i))
                colour = FACE_COLOURS[i % len(FACE_COLOURS)]
                p.add_mesh(part, color=colour, show_edges=True, edge_color="#404040",
                           line_width=0.5, lighting=False)  # fmt: skip
                if col == 0:
                    legend.append([(labels or {}).get(n, n), colour])
            centre = np.asarray(grid.center)
            p.camera_position = [tuple(centre + sign * np.ptp(grid.points) * np.ones(3)),
                                 tuple(centre), (0.0, 0.0, 1.0)]  # fmt: skip
            p.reset_camera()
            p.add_axes(color="black", xlabel="x", ylabel="y", zlabel="z")
            p.camera.zoom(0.85)
            p.add_text("seen from +x +y +z" if sign > 0 else "seen from -x -y -z",
                       position="lower_edge", font_size=9, color="#4d4d4d")  # fmt: skip
        p.subplot(0, 0)
        for i, (label, colour) in enumerate(legend):  # a plain legend: each name in its colour
            p.add_text(label, position=(12, WINDOW[1] - 50 - 22 * i), font_size=10, color=colour)
        _title(p, title)
        return _shot(p, path)
    p.add_legend(legend, bcolor="white", border=False, size=(0.2, 0.04 * len(legend) + 0.02),
                 loc="lower right", face="rectangle")  # fmt: skip
    _title(p, title)
    return _shot(p, path)


# --- matplotlib (2D) ------------------------------------------------------------------------------


def _mpl_layout(mesh: PartMesh, colourbar: bool):
    """A WINDOW-sized figure with the section axes (equal aspect) and a colour-bar axes."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(WINDOW[0] / 100, WINDOW[1] / 100), dpi=100)
    ext = np.ptp(mesh.points, axis=0)
    wide = ext[1] < 0.45 * ext[0]
    cax = None
    if wide:
        ax = fig.add_axes((0.08, 0.24 if colourbar else 0.1, 0.88, 0.64))
        if colourbar:
            cax = fig.add_axes((0.2, 0.09, 0.6, 0.03))
    else:
        ax = fig.add_axes((0.08, 0.08, 0.7 if colourbar else 0.78, 0.83))
        if colourbar:
            cax = fig.add_axes((0.86, 0.14, 0.025, 0.7))
    ax.set_aspect("equal", anchor="C")
    return fig, ax, cax, wide


def _mpl_title(fig, text: str) -> None:
    fig.text(0.015, 0.975, text, ha="left", va="top", fontsize=12)


def _mpl_axes(ax, scene_axes, mesh: PartMesh) -> None:
    xy = 1000.0 * mesh.points
    for n in mesh.face_names:
        from matplotlib.collections import LineCollection

        ax.add_collection(LineCollection(xy[mesh.faces[n]], colors="black", linewidths=0.8))
    if mesh.axisymmetric:
        top = float(xy[:, 1].max())
        bottom = float(xy[:, 1].min())
        pad = 0.04 * (top - bottom)
        ax.plot([0.0, 0.0], [bottom - pad, top + pad], color="0.3", lw=0.9, ls=(0, (8, 3, 2, 3)))
        ax.annotate("axis", xy=(0.0, top + pad), xytext=(3, -2), textcoords="offset points",
                    fontsize=9, color="0.3", va="top")  # fmt: skip
    ax.set_xlabel(f"{scene_axes[0]} (mm)")
    ax.set_ylabel(f"{scene_axes[1]} (mm)")
    ax.tick_params(labelsize=9)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)


def _mpl_mark(ax, mesh: PartMesh, point_m, text: str, probes=()) -> None:
    xy = 1000.0 * mesh.points
    centre = 0.5 * (xy.min(0) + xy.max(0))
    for name, pm in probes:
        q = 1000.0 * np.asarray(pm)
        ax.plot([q[0]], [q[1]], "^", ms=7, mfc="white", mec="black", mew=1.0, zorder=6)
        ax.annotate(name, xy=(q[0], q[1]), xytext=(5, -10), textcoords="offset points",
                    fontsize=8, color="black",
                    bbox={"fc": "white", "ec": "none", "alpha": 0.7, "pad": 1})  # fmt: skip
    if point_m is None:
        return
    p = 1000.0 * np.asarray(point_m)
    ax.plot([p[0]], [p[1]], "o", ms=11, mfc="#00e5ff", mec="black", mew=1.5, zorder=7)
    dx = 14 if p[0] <= centre[0] else -14
    dy = 14 if p[1] <= centre[1] else -14
    ax.annotate(text, xy=(p[0], p[1]), xytext=(dx, dy), textcoords="offset points",
                ha="left" if dx > 0 else "right", va="bottom" if dy > 0 else "top",
                fontsize=10, zorder=8,
                bbox={"fc": "white", "ec": "0.4", "alpha": 0.9, "boxstyle": "round,pad=0.3"},
                arrowprops={"arrowstyle": "-", "color": "0.3", "lw": 0.8})  # fmt: skip


def _time_levels(lo_h: float, hi_h: float) -> np.ndarray:
    """Round contour levels (h) for a time map: steps of 1, 2, 5, 10, 15, 30 min or hours."""
    span_min = (hi_h - lo_h) * 60.0
    for step in (1, 2, 5, 10, 15, 30, 60, 120, 240, 480, 960):
        if span_min / step <= 8:
            break
    first = np.ceil(lo_h * 60.0 / step) * step
    levels = np.arange(first, hi_h * 60.0, step) / 60.0
    return levels[(levels > lo_h) & (levels < hi_h)]


def _hm_formatter():
    from matplotlib.ticker import FuncFormatter

    return FuncFormatter(lambda v, _pos: _hm(3600.0 * v))


def _mpl_field(path, scene: Scene, values, bar_title, cmap, title, is_time=False):
    from matplotlib.tri import Triangulation

    mesh = scene.mesh
    fig, ax, cax, wide = _mpl_layout(mesh, colourbar=True)
    xy = 1000.0 * mesh.points
    v = np.asarray(values, dtype=float)
    bad = ~np.isfinite(v)
    tri = Triangulation(xy[:, 0], xy[:, 1], mesh.cells)
    if np.all(bad):  # nothing to colour: a grey section and a note
        ax.tripcolor(tri, np.zeros(mesh.nodes), cmap=_grey(), shading="flat", edgecolors="face")
        ax.text(0.5, 1.02, "no point reached the target in this run", transform=ax.transAxes,
                ha="center", va="bottom", fontsize=11)  # fmt: skip
        cax.set_visible(False)
        _mpl_axes(ax, scene.axes, mesh)
        _mpl_mark(ax, mesh, scene.last_point, _last_label(scene), scene.probes)
        _mpl_title(fig, title)
        return _mpl_save(fig, path)
    if np.any(bad):
        ax.tripcolor(tri, np.zeros(mesh.nodes), cmap=_grey(), shading="flat", edgecolors="face")
        tri = Triangulation(xy[:, 0], xy[:, 1], mesh.cells, mask=np.any(bad[mesh.cells], axis=1))
    finite = v[~bad]
    lo, hi = (float(finite.min()), float(finite.max())) if finite.size else (0.0, 1.0)
    im = ax.tripcolor(tri, np.where(bad, lo, v), cmap=cmap, shading="gouraud", vmin=lo,
                      vmax=hi if hi > lo else lo + 1.0, rasterized=True)  # fmt: skip
    if not wide:
        # put the colour bar beside the section as drawn (equal aspect shrinks the box)
        ax.set_xlim(*ax.get_xlim())
        ax.apply_aspect()
        box = ax.get_position()
        x0 = max(0.08, 0.5 - 0.5 * (box.width + 0.16))  # centre section and bar together
        ax.set_position((x0, box.y0, box.width, box.height))
        cax.set_position((min(x0 + box.width + 0.05, 0.9), box.y0 + 0.1 * box.height, 0.025,
                          0.8 * box.height))  # fmt: skip
    if is_time and finite.size and hi > lo:
        levels = _time_levels(lo, hi)
        if levels.size:
            cs = ax.tricontour(tri, np.where(bad, lo, v), levels=levels, colors="white",
                               linewidths=0.8, alpha=0.9)  # fmt: skip
            ax.clabel(cs, fmt=lambda x: _hm(3600.0 * x), fontsize=8, colors="white")
    cb = fig.colorbar(im, cax=cax, orientation="horizontal" if wide else "vertical")
    cb.set_label(bar_title, fontsize=11)
    if is_time:
        cb.formatter = _hm_formatter()
        cb.update_ticks()
    _mpl_axes(ax, scene.axes, mesh)
    _mpl_mark(ax, mesh, scene.last_point, _last_label(scene), scene.probes)
    _mpl_title(fig, title)
    return _mpl_save(fig, path)


def _grey():
    from matplotlib.colors import ListedColormap

    return ListedColormap([NAN_COLOUR])


def _mpl_save(fig, path: Path) -> Path:
    return atomic_save(path, lambda name: fig.savefig(name, format="png"))


def _mpl_faces(path, mesh: PartMesh, axes, title: str, labels=None) -> Path:
    from matplotlib.collections import LineCollection

    fig, ax, _cax, wide = _mpl_layout(mesh, colourbar=False)
    if not wide:
        ax.set_position((0.08, 0.08, 0.6, 0.83))  # room for the legend on the right
    xy = 1000.0 * mesh.points
    ax.triplot(xy[:, 0], xy[:, 1], mesh.cells, color="#a0a0a0", lw=0.4)
    for i, n in enumerate(mesh.face_names):
        colour = FACE_COLOURS[i % len(FACE_COLOURS)]
        label = (labels or {}).get(n, n)
        ax.add_collection(LineCollection(xy[mesh.faces[n]], colors=colour, linewidths=4,
                                         label=label))  # fmt: skip
    if wide:  # legend under the section, in columns
        ncol = min(4, max(1, len(mesh.face_names)))
        ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.14), frameon=False,
                  title="faces", ncol=ncol)  # fmt: skip
    else:
        ax.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), frameon=False, title="faces")
    ax.set_xlabel(f"{axes[0]} (mm)")
    ax.set_ylabel(f"{axes[1]} (mm)")
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    _mpl_title(fig, title)
    return _mpl_save(fig, path)


# --- entry points ---------------------------------------------------------------------------------


def _choose(backend: str, dim: int) -> str:
    if backend not in ("auto", "pyvista", "matplotlib"):
        raise ValueError(f"backend must be 'auto', 'pyvista' or 'matplotlib', got {backend!r}")
    if backend == "auto":
        # 2D sections: matplotlib draws them cleaner (true axes in mm) and about five times
        # faster than an off-screen VTK window; 3D parts need VTK
        if dim == 2:
            return "matplotlib"
        return "pyvista" if pyvista_can_render() else "matplotlib"
    return backend


def _faces_title(mesh: PartMesh) -> str:
    q = mesh.quality()
    return (
        f"Mesh: {mesh.nodes} nodes, {mesh.cells.shape[0]} cells (smallest quality "
        f"{q.min():.2f}); faces coloured by name"
    )


def _jobs(scene: Scene):
    """(file stem, values, colour-bar title, colour map, number format, title, cut, is_time)."""
    t_title = _temperature_title(scene)
    jobs = [
        ("temperature", scene.temperature, "temperature (C)", TEMPERATURE_CMAP, "%.0f",
         t_title, False, False),
    ]  # fmt: skip
    if scene.mesh.dim == 3:
        jobs.append(("temperature_cut", scene.temperature, "temperature (C)", TEMPERATURE_CMAP,
                     "%.0f", t_title + ", cut through the last point", True, False))  # fmt: skip
    if scene.node_time is not None and scene.target_c is not None:
        hours = np.asarray(scene.node_time, dtype=float) / 3600.0
        title = f"Time for each point to reach {scene.target_c:g} C"
        if np.any(~np.isfinite(hours)):
            title += " (grey: not reached)"
        unit = "h:min" if scene.mesh.dim == 2 else "h"
        jobs.append(("time_to_target", hours, f"time to reach {scene.target_c:g} C ({unit})",
                     TIME_CMAP, "%.2f", title, scene.mesh.dim == 3, True))  # fmt: skip
    return jobs


def render_pictures(folder: str | os.PathLike, scene: Scene, backend: str = "auto"):
    """Write the PNG pictures of a run into `folder`.

    Files: ``temperature.png`` (field at the target time, last point marked),
    ``temperature_cut.png`` (solids), ``time_to_target.png`` (when there is a target) and
    ``faces.png`` (the mesh with faces coloured by name).

    Returns:
        (paths, RenderLog): the files written and the seconds spent on each.
    """
    folder = Path(folder)
    chosen = _choose(backend, scene.mesh.dim)
    rlog = RenderLog(chosen)
    if chosen == "pyvista":
        try:
            paths = _render_pv(folder, scene, rlog)
            if paths and _blank(paths[0]):
                raise FemheatError("the off-screen picture came out blank")
            return paths, rlog
        except (ImportError, RuntimeError, FemheatError) as exc:
            if backend == "pyvista":
                raise
            log.warning("pyvista could not draw off screen (%s); using matplotlib", exc)
            rlog = RenderLog("matplotlib")
    if scene.mesh.dim == 3:
        rlog.skipped.append("3D pictures need pyvista with an off-screen OpenGL context")
        log.warning("3D pictures skipped: no off-screen OpenGL context for pyvista")
        return [], rlog
    paths = []
    for stem, values, bar, cmap, _fmt, title, _cut, is_time in _jobs(scene):
        t = time.perf_counter()
        paths.append(_mpl_field(folder / f"{stem}.png", scene, values, bar, cmap, title, is_time))
        rlog.seconds[stem] = time.perf_counter() - t
    t = time.perf_counter()
    paths.append(_mpl_faces(folder / "faces.png", scene.mesh, scene.axes,
                            _faces_title(scene.mesh), scene.face_labels))  # fmt: skip
    rlog.seconds["faces"] = time.perf_counter() - t
    return paths, rlog


def _render_pv(folder: Path, scene: Scene, rlog: RenderLog) -> list[Path]:
    t = time.perf_counter()
    r = _Pv()
    rlog.seconds["setup"] = time.perf_counter() - t
    paths = []
    try:
        for stem, values, bar, cmap, fmt, title, cut, _is_time in _jobs(scene):
            t = time.perf_counter()
            paths.append(
                _pv_field(r, folder / f"{stem}.png", scene, values, bar, cmap, fmt, title, cut)
            )
            rlog.seconds[stem] = time.perf_counter() - t
        t = time.perf_counter()
        paths.append(_pv_faces(r, folder / "faces.png", scene.mesh, scene.axes,
                               _faces_title(scene.mesh), scene.face_labels))  # fmt: skip
        rlog.seconds["faces"] = time.perf_counter() - t
    finally:
        r.close()
    return paths


def render_faces(
    path: str | os.PathLike, mesh: PartMesh, labels: dict | None = None, backend: str = "auto"
) -> Path:
    """Write one PNG of the mesh with its faces coloured by name (`femheat mesh`).

    Args:
        labels: face name -> legend text (default: the name).
    """
    path = Path(path)
    axes = ("r", "z") if mesh.axisymmetric else ("x", "y", "z")[: mesh.dim]
    chosen = _choose(backend, mesh.dim)
    if chosen == "pyvista":
        try:
            r = _Pv()
            try:
                return _pv_faces(r, path, mesh, axes, _faces_title(mesh), labels)
            finally:
                r.close()
        except (ImportError, RuntimeError) as exc:
            if backend == "pyvista" or mesh.dim == 3:
                raise
            log.warning("pyvista could not draw off screen (%s); using matplotlib", exc)
    if mesh.dim == 3:
        raise FemheatError("a 3D picture needs pyvista with an off-screen OpenGL context")
    return _mpl_faces(path, mesh, axes, _faces_title(mesh), labels)
