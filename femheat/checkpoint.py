"""Checkpoints of a long run, and resuming from them.

A checkpoint is written into the results folder as

* ``checkpoint.npz``: everything needed to continue: the march state (`Marcher.snapshot`), the
  watchers' state, the state of the observers that keep one (the frame recorder, the VTK
  series writer), the wall time so far, and ``meta``: a JSON text with the format version, the
  SHA-256 of the case file text, the parsed case, and the mesh (node and cell counts, SHA-256
  of the node coordinates). Written to a temporary file, flushed to disk, then renamed: a
  reader sees the previous checkpoint or the whole new one.
* ``checkpoint.json``: the same ``meta`` for people (time reached, steps, when written),
  written after the ``.npz``; the ``.npz`` alone is read on resume.
* ``checkpoint_mesh.npz``: the mesh of the run, written once (with the first checkpoint).
  A resumed run continues on this very mesh instead of meshing again (3D meshing on several
  threads does not give the same mesh twice); its coordinates must hash to the value in
  ``meta``.

`CheckpointWriter` is an observer of the march: it asks the `femheat.run.RunState` for a
snapshot every `every_s` seconds of wall time (never more often than 20 times the time a
write takes, so writing costs under 5 % of the run). The run loop writes nothing itself.
`read_checkpoint` loads one; `Checkpoint.check_case` and `Checkpoint.check_mesh` refuse a case
or mesh that differs from the one the checkpoint was made with.

State is kept as plain values (numbers, text, None, lists, tuples, dicts) and numpy arrays
(`plain_state` takes every such attribute of an object; `restore_plain` sets them back).
"""

from __future__ import annotations

import hashlib
import io
import json
import logging
import math
import os
import tempfile
import time
import zipfile
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from . import __version__
from .errors import CaseError

log = logging.getLogger(__name__)

__all__ = [
    "FORMAT",
    "NPZ_NAME",
    "JSON_NAME",
    "MESH_NAME",
    "CaseIdentity",
    "Checkpoint",
    "CheckpointWriter",
    "mesh_identity",
    "write_mesh",
    "read_mesh",
    "plain_state",
    "restore_plain",
    "read_checkpoint",
    "remove_checkpoint",
]

FORMAT = 1
NPZ_NAME = "checkpoint.npz"
JSON_NAME = "checkpoint.json"
MESH_NAME = "checkpoint_mesh.npz"
_ROWS_MIN = 8  # lists of at least this many equal numeric rows are stored as one array


# --- plain state ------------------------------------------------------------------------------


def _is_plain(v) -> bool:
    if v is None or isinstance(v, bool | int | float | str | np.generic):
        return True
    if isinstance(v, np.ndarray):
        return v.dtype.kind in "biuf"
    if isinstance(v, list | tuple):
        return all(_is_plain(x) for x in v)
    if isinstance(v, dict):
        return all(isinstance(k, str) and _is_plain(x) for k, x in v.items())
    return False


def _copy(v):
    if isinstance(v, np.ndarray):
        return v.copy()
    if isinstance(v, list):
        return [_copy(x) for x in v]
    if isinstance(v, tuple):
        return tuple(_copy(x) for x in v)
    if isinstance(v, dict):
        return {k: _copy(x) for k, x in v.items()}
    return v


def plain_state(obj) -> dict:
    """Copies of the attributes of `obj` that are plain values or numeric arrays.

    References to other objects (a model, a sparse matrix) are left out: the object that
    is restored gets them from its own construction.
    """
    return {k: _copy(v) for k, v in vars(obj).items() if _is_plain(v)}


def restore_plain(obj, state: dict) -> None:
    """Set the attributes in `state` (from `plain_state`) back on `obj`."""
    for key, value in state.items():
        setattr(obj, key, value)


# --- encoding into JSON text and arrays -------------------------------------------------------


def _encode(v, arrays: dict, path: str):
    """JSON-able form of a plain value; arrays go into `arrays` under unique keys."""
    if isinstance(v, np.ndarray):
        key = f"a{len(arrays)}"
        arrays[key] = v
        return {"__array__": key}
    if isinstance(v, np.generic):
        v = v.item()
    if isinstance(v, float) and not math.isfinite(v):
        return {"__float__": repr(v)}
    if v is None or isinstance(v, bool | int | float | str):
        return v
    if isinstance(v, tuple):
        return {"__tuple__": [_encode(x, arrays, f"{path}.{i}") for i, x in enumerate(v)]}
    if isinstance(v, list):
        if (
            len(v) >= _ROWS_MIN
            and all(isinstance(r, list) and r for r in v)
            and len({len(r) for r in v}) == 1
            and all(isinstance(x, float) for r in v for x in r)
        ):
            key = f"a{len(arrays)}"
            arrays[key] = np.asarray(v, dtype=float)
            return {"__rows__": key}
        return [_encode(x, arrays, f"{path}.{i}") for i, x in enumerate(v)]
    if isinstance(v, dict):
        return {k: _encode(x, arrays, f"{path}.{k}") for k, x in v.items()}
    raise TypeError(f"{path}: cannot keep a {type(v).__name__} in a checkpoint")


def _decode(v, arrays):
    if isinstance(v, list):
        return [_decode(x, arrays) for x in v]
    if not isinstance(v, dict):
        return v
    if len(v) == 1:
        ((key, inner),) = v.items()
        if key == "__array__":
            return np.array(arrays[inner])
        if key == "__rows__":
            return [[float(x) for x in row] for row in np.asarray(arrays[inner])]
        if key == "__tuple__":
            return tuple(_decode(x, arrays) for x in inner)
        if key == "__float__":
            return float(inner)
    return {k: _decode(x, arrays) for k, x in v.items()}


# --- what the checkpoint belongs to -----------------------------------------------------------


@dataclass(frozen=True)
class CaseIdentity:
    """The case a run was made from: its file text and the parsed values.

    Attributes:
        source: the case file's path as given (named in errors).
        text: the case file text.
        values: the parsed case (`Case.model_dump(mode="json")`).
    """

    source: str
    text: str
    values: dict

    @classmethod
    def of(cls, case, text: str, source: str) -> CaseIdentity:
        return cls(source, text, case.model_dump(mode="json"))

    @property
    def sha256(self) -> str:
        return hashlib.sha256(self.text.encode("utf-8")).hexdigest()


def mesh_identity(mesh) -> dict:
    """Node and cell counts and the SHA-256 of the node coordinates (float64) of a mesh."""
    pts = np.ascontiguousarray(mesh.points, dtype=np.float64)
    return {
        "nodes": int(mesh.nodes),
        "cells": int(mesh.cells.shape[0]),
        "coordinates_sha256": hashlib.sha256(pts.tobytes()).hexdigest(),
    }


def write_mesh(path: Path, mesh) -> None:
    """Write a `femheat.mesh.PartMesh` to an .npz file atomically."""
    arrays = {"points": mesh.points, "cells": mesh.cells}
    arrays.update({f"face:{k}": v for k, v in mesh.faces.items()})
    arrays.update({f"zone:{k}": v for k, v in mesh.zones.items()})
    if mesh.curved_edges is not None:
        arrays["curved:corners"], arrays["curved:points"] = mesh.curved_edges
    info = {"axisymmetric": bool(mesh.axisymmetric), "size": float(mesh.size)}
    buf = io.BytesIO()
    np.savez(buf, info=np.array(json.dumps(info)), **arrays)
    _atomic_bytes(path, buf.getvalue())


def read_mesh(path: Path):
    """Read a mesh written by `write_mesh` (a `femheat.mesh.PartMesh`)."""
    from .mesh import PartMesh

    with np.load(path, allow_pickle=False) as data:
        info = json.loads(str(data["info"]))
        faces = {k[5:]: data[k] for k in data.files if k.startswith("face:")}
        zones = {k[5:]: data[k] for k in data.files if k.startswith("zone:")}
        curved = None
        if "curved:corners" in data.files:
            curved = (data["curved:corners"], data["curved:points"])
        return PartMesh(
            data["points"],
            data["cells"],
            faces,
            info["axisymmetric"],
            info["size"],
            zones,
            curved_edges=curved,
        )


def _show(v) -> str:
    text = json.dumps(v, separators=(",", ":"))
    return text if len(text) <= 40 else text[:37] + "..."


def _differences(old, new, at: str = "") -> list[str]:
    """Dotted places where two parsed cases differ, with the old and new values."""
    if isinstance(old, dict) and isinstance(new, dict):
        out = []
        for key in list(old) + [k for k in new if k not in old]:
            place = f"{at}.{key}" if at else str(key)
            if key not in new:
                out.append(f"{place} removed")
            elif key not in old:
                out.append(f"{place} added")
            else:
                out += _differences(old[key], new[key], place)
        return out
    if old != new:
        return [f"{at or 'case'}: {_show(old)} -> {_show(new)}"]
    return []


def _first_changed_line(old: str, new: str) -> int:
    a, b = old.splitlines(), new.splitlines()
    for i, (x, y) in enumerate(zip(a, b, strict=False)):
        if x != y:
            return i + 1
    return min(len(a), len(b)) + 1


# --- reading ----------------------------------------------------------------------------------


@dataclass(frozen=True)
class Checkpoint:
    """A checkpoint read back.

    Attributes:
        folder: the results folder it was read from.
        meta: format, versions, case and mesh identity, time and steps.
        run: ``{"marcher", "watchers", "wall_s"}`` for `femheat.run.run_problem(resume=...)`.
        observers: name -> state of the observers that keep one (``"recorder"``, ``"vtk"``).
    """

    folder: Path
    meta: dict
    run: dict
    observers: dict

    @property
    def time_s(self) -> float:
        return float(self.run["marcher"]["t"])

    def check_case(self, identity: CaseIdentity) -> None:
        """Refuse a case that is not the one the checkpoint was made from.

        Raises:
            CaseError: at the case file, saying what changed.
        """
        if identity.sha256 == self.meta["case_sha256"]:
            return
        changes = _differences(self.meta["case"], identity.values)
        if changes:
            what = "; ".join(changes[:3])
            if len(changes) > 3:
                what += f"; and {len(changes) - 3} more"
        else:
            line = _first_changed_line(self.meta.get("case_text", ""), identity.text)
            what = f"only comments or layout, from line {line}"
        raise CaseError(
            identity.source,
            f"the case differs from the one in the checkpoint in {self.folder} ({what})",
            "run without --resume or restore the case",
        )

    def check_mesh(self, mesh, source: str) -> None:
        """Refuse a mesh that differs from the checkpoint's (another gmsh or femheat version).

        Raises:
            CaseError: at the case file, with both node counts.
        """
        now, then = mesh_identity(mesh), self.meta["mesh"]
        if now == then:
            return
        if now["nodes"] != then["nodes"] or now["cells"] != then["cells"]:
            what = (
                f"{now['nodes']} nodes and {now['cells']} cells now, {then['nodes']} and "
                f"{then['cells']} in the checkpoint"
            )
        else:
            what = f"the same {now['nodes']} nodes, but at other coordinates"
        raise CaseError(
            source,
            f"the mesh made from the case differs from the one in the checkpoint in "
            f"{self.folder} ({what})",
            "run without --resume (the mesher or femheat version has changed)",
        )

    def load_mesh(self):
        """The mesh the checkpointed run was made on (`femheat.mesh.PartMesh`).

        Raises:
            CaseError: at ``--resume`` when the mesh file is missing, damaged or not the
                checkpoint's.
        """
        path = self.folder / MESH_NAME
        try:
            mesh = read_mesh(path)
        except (OSError, ValueError, KeyError, TypeError, zipfile.BadZipFile) as exc:
            raise CaseError(
                "--resume",
                f"the mesh of the checkpoint, {str(path)!r}, cannot be read ({exc})",
                "run without --resume",
            ) from None
        if mesh_identity(mesh) != self.meta["mesh"]:
            raise CaseError(
                "--resume",
                f"{str(path)!r} is not the mesh of the checkpoint beside it",
                "run without --resume",
            )
        return mesh


def read_checkpoint(folder: str | os.PathLike, where: str = "--resume") -> Checkpoint:
    """Read the checkpoint in a results folder.

    Raises:
        CaseError: at `where` when there is none, or it cannot be read.
    """
    folder = Path(folder)
    path = folder / NPZ_NAME
    if not folder.is_dir():
        raise CaseError(where, f"{str(folder)!r} is not a folder", "give the results folder")
    if not path.is_file():
        done = (folder / "summary.json").is_file()
        hint = " (the run there finished, or stopped before its first checkpoint)" if done else ""
        raise CaseError(
            where,
            f"no checkpoint in {str(folder)!r}{hint}",
            "run without --resume, or give the results folder of an interrupted run",
        )
    try:
        with np.load(path, allow_pickle=False) as data:
            arrays = {k: data[k] for k in data.files}
        meta = json.loads(str(arrays.pop("meta")))
        body = _decode(json.loads(str(arrays.pop("body"))), arrays)
    except (OSError, ValueError, KeyError, TypeError, zipfile.BadZipFile) as exc:
        raise CaseError(
            where,
            f"the checkpoint {str(path)!r} cannot be read ({exc})",
            "run without --resume (the checkpoint file is damaged)",
        ) from None
    if meta.get("format") != FORMAT:
        raise CaseError(
            where,
            f"the checkpoint in {str(folder)!r} has format {meta.get('format')!r}, this "
            f"femheat {__version__} reads format {FORMAT}",
            "run without --resume",
        )
    return Checkpoint(folder, meta, body["run"], body["observers"])


def remove_checkpoint(folder: str | os.PathLike) -> None:
    """Delete the checkpoint files in `folder` (after the run they belong to is complete)."""
    for name in (NPZ_NAME, JSON_NAME, MESH_NAME):
        try:
            (Path(folder) / name).unlink()
        except FileNotFoundError:
            pass


# --- writing ----------------------------------------------------------------------------------


def _atomic_bytes(path: Path, data: bytes) -> None:
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as f:
            f.write(data)
            f.flush()
            os.fsync(f.fileno())
        mask = os.umask(0)
        os.umask(mask)
        os.chmod(tmp, 0o666 & ~mask)  # the usual permissions, not mkstemp's 0600
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


class CheckpointWriter:
    """Observer writing a checkpoint every `every_s` seconds of wall time.

    Args:
        folder: the results folder.
        identity: the case the run is made from.
        every_s: wall-clock seconds between checkpoints (None or 0: only when `write` is
            called, e.g. when the run is interrupted).
        keep: name -> observer with ``state()`` (and ``restore(state)`` on resume), kept too.
    """

    def __init__(self, folder, identity: CaseIdentity, every_s: float | None = 30.0, keep=None):
        self.folder = Path(folder)
        self.identity = identity
        self.every_s = float(every_s) if every_s else None
        self.keep = dict(keep or {})
        self.state = None
        self.written = 0
        self.failed = ""  # why checkpoints stopped during the run ("" if they did not)
        self.mesh_written = False
        self.last_write_s = 0.0
        self._last = time.monotonic()

    def attach(self, state) -> None:
        """Receive the `femheat.run.RunState` of the run (before the first step)."""
        self.state = state
        self._last = time.monotonic()

    def __call__(self, step) -> None:
        if self.every_s is None or self.state is None:
            return
        wait = max(self.every_s, 20.0 * self.last_write_s)
        if time.monotonic() - self._last >= wait:
            try:
                self.write()
            except OSError as exc:  # a full disk must not stop the run: no more checkpoints
                self.failed = f"checkpoints stopped: {exc.strerror or exc}"
                self.every_s = None
                log.warning(self.failed)

    def _meta(self, snap: dict) -> dict:
        return {
            "format": FORMAT,
            "femheat_version": __version__,
            "written": time.strftime("%Y-%m-%d %H:%M:%S %z"),
            "time_s": float(snap["t"]),
            "steps": int(snap["stats"].get("steps", 0)),
            "case_file": self.identity.source,
            "case_sha256": self.identity.sha256,
            "case": self.identity.values,
            "case_text": self.identity.text,
            "mesh": mesh_identity(self.state.problem.model.geometry),
        }

    def write(self) -> Path:
        """Write the checkpoint now (the state after the last accepted step)."""
        if self.state is None:
            raise RuntimeError("the checkpoint writer is not attached to a run")
        started = time.perf_counter()
        st = self.state
        self.folder.mkdir(parents=True, exist_ok=True)
        if not self.mesh_written:
            write_mesh(self.folder / MESH_NAME, st.problem.model.geometry)
            self.mesh_written = True
        snap = st.marcher.snapshot()
        body = {
            "run": {
                "marcher": snap,
                "watchers": {k: plain_state(w) for k, w in st.watchers.items()},
                "wall_s": st.wall_s,
            },
            "observers": {k: obs.state() for k, obs in self.keep.items()},
        }
        arrays: dict = {}
        body_text = json.dumps(_encode(body, arrays, "checkpoint"), allow_nan=False)
        meta = self._meta(snap)
        buf = io.BytesIO()
        np.savez(buf, meta=np.array(json.dumps(meta)), body=np.array(body_text), **arrays)
        _atomic_bytes(self.folder / NPZ_NAME, buf.getvalue())
        readable = {k: v for k, v in meta.items() if k not in ("case", "case_text")}
        text = json.dumps(readable, indent=2) + "\n"
        _atomic_bytes(self.folder / JSON_NAME, text.encode("utf-8"))
        self.written += 1
        self.last_write_s = time.perf_counter() - started
        self._last = time.monotonic()
        return self.folder / NPZ_NAME
