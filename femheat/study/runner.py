"""Running the variants of a study: in this process, or as tasks on Dask.

Meshes are built once per distinct geometry (equal ``[part]`` and ``[mesh]`` tables) in the
calling process. In this process they are passed to each run directly. On Dask each mesh is
handed to the cluster as a task of its own (``client.submit`` with the mesh as its argument),
and every variant's task depends on it: the mesh crosses the network once per worker that
needs it, and if a worker holding it is lost the scheduler rebuilds it from the task, so
nothing depends on one worker surviving.

Every variant is an independent task (``retries`` re-runs one that raised for a reason other
than bad input; a task on a worker that died is rescheduled by Dask). Results come back as
they finish and go straight into the `ResultStore`, one JSON line each, written only by the
calling process, so a variant is stored once however often its task ran. ``resume=True``
skips the variants already stored.

A remote cluster (``scheduler="tcp://host:port"``) needs femheat installed on its workers and
the files a case refers to (outlines, CAD files, property tables) at the same paths.
"""

from __future__ import annotations

import hashlib
import logging
import os
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from ..errors import CaseError, FemheatError
from .outcome import mesh_for_table, run_case_table
from .spec import Study, Variant, geometry_key
from .store import ResultStore, write_table

__all__ = ["StudyRun", "run_study", "variant_inputs", "local_cluster"]

log = logging.getLogger(__name__)

#: Keep each worker process to one BLAS thread (the workers already fill the cores).
_ONE_THREAD = {"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}


@dataclass(frozen=True)
class StudyRun:
    """What a study run left on disk.

    Attributes:
        study: the `Study`.
        folder: the results folder.
        rows: every stored row (this run's and earlier ones), in study order.
        ran: how many variants ran this time.
        skipped: how many were already stored (resume).
        table: the CSV table.
    """

    study: Study
    folder: Path
    rows: tuple[dict, ...]
    ran: int
    skipped: int
    table: Path


def variant_inputs(study: Study, variant: Variant) -> dict:
    """Every varied path's value in this variant (the base value where it is not changed)."""
    values = dict(variant.values)
    return {v.path: values.get(v.path, study.base_value(v.path)) for v in study.variables}


def local_cluster(workers: int | None = None):
    """A Dask LocalCluster of one-thread worker processes (default: one per core)."""
    try:
        from distributed import LocalCluster
    except ImportError as exc:
        raise FemheatError(
            'dask.distributed is not installed; fix: pip install "dask[distributed]"'
        ) from exc
    n = workers or os.cpu_count() or 1
    return LocalCluster(
        n_workers=n,
        threads_per_worker=1,
        processes=True,
        dashboard_address=None,
        env=_ONE_THREAD,
    )


def _row(study: Study, variant: Variant, result: dict) -> dict:
    return {
        "id": variant.id,
        "index": variant.index,
        "varied": variant.varied,
        "inputs": variant_inputs(study, variant),
        **result,
    }


def _failed_mesh(exc: Exception) -> dict:
    from .outcome import OUTPUT_COLUMNS

    row = {c: float("nan") for c in OUTPUT_COLUMNS}
    status = "bad input" if isinstance(exc, CaseError) else "failed"
    row.update(status=status, reached=False, error=str(exc), warnings="", nodes=0, steps=0)
    return row


def _meshes(study: Study, todo) -> tuple[dict, dict]:
    """Meshes by geometry key for the variants to run, and the errors of those that failed."""
    meshes, errors = {}, {}
    for v in todo:
        table = study.case_for(v)
        key = geometry_key(table)
        if key in meshes or key in errors:
            continue
        try:
            meshes[key] = mesh_for_table(table, study.base_dir)
        except FemheatError as exc:
            errors[key] = exc
    return meshes, errors


def _run_here(study, todo, meshes, errors, store, on_row) -> None:
    for v in todo:
        table = study.case_for(v)
        key = geometry_key(table)
        if key in errors:
            result = _failed_mesh(errors[key])
        else:
            result = run_case_table(table, study.base_dir, meshes[key])
        row = _row(study, v, result)
        store.add(row)
        if on_row is not None:
            on_row(row)


def _identity(x):
    return x


def _task(table: dict, base_dir: str, mesh) -> dict:
    """A variant's run on a Dask worker. The run's warnings travel in the row (column
    ``warnings``), so the worker's log is kept to errors rather than repeating them."""
    logging.getLogger("femheat").setLevel(logging.ERROR)
    return run_case_table(table, base_dir, mesh)


def _run_dask(study, todo, meshes, errors, store, on_row, client, retries) -> None:
    from distributed import as_completed

    mesh_futures = {}
    for key, mesh in meshes.items():
        name = "femheat-mesh-" + hashlib.sha1(key.encode()).hexdigest()[:12]
        mesh_futures[key] = client.submit(_identity, mesh, key=name, pure=False)
    futures = {}
    for v in todo:
        table = study.case_for(v)
        key = geometry_key(table)
        if key in errors:
            row = _row(study, v, _failed_mesh(errors[key]))
            store.add(row)
            if on_row is not None:
                on_row(row)
            continue
        fut = client.submit(
            _task,
            table,
            str(study.base_dir),
            mesh_futures[key],
            key=f"femheat-variant-{v.id}",
            retries=retries,
            pure=False,
        )
        futures[fut] = v
    try:
        for fut in as_completed(list(futures)):
            v = futures[fut]
            row = _row(study, v, fut.result())
            store.add(row)
            if on_row is not None:
                on_row(row)
    finally:
        unfinished = [f for f in futures if not f.done()]
        if unfinished:  # interrupted: stop the rest (finished ones are stored already)
            client.cancel(unfinished)


def run_study(
    study: Study,
    folder: str | Path,
    *,
    engine: str = "dask",
    scheduler: str | None = None,
    client=None,
    workers: int | None = None,
    resume: bool = False,
    retries: int = 2,
    on_row: Callable[[dict], None] | None = None,
    on_start: Callable[[int, int], None] | None = None,
) -> StudyRun:
    """Run every variant not yet stored and write the table.

    Args:
        study: the parsed study.
        folder: results folder (``results.jsonl``, ``table.csv``).
        engine: "dask" (tasks on a cluster) or "serial" (one after another in this process).
        scheduler: address of an existing Dask scheduler (``tcp://host:port``); None starts a
            `local_cluster` for the run.
        client: an existing ``distributed.Client`` (instead of `scheduler`).
        workers: worker processes of the local cluster (default: one per core).
        resume: skip variants already in ``folder/results.jsonl``.
        retries: times Dask re-runs a task that raised.
        on_row: called with each stored row as it finishes (progress).
        on_start: called with (variants to run, already stored) before the runs start.

    Raises:
        CaseError: bad engine name. FemheatError: Dask missing or the scheduler unreachable.
    """
    if engine not in ("dask", "serial"):
        raise CaseError("--engine", f"unknown engine {engine!r}", "use dask or serial")
    store = ResultStore(folder, resume=resume)
    todo = [v for v in study.variants if not store.done(v.id)]
    skipped = len(study.variants) - len(todo)
    if on_start is not None:
        on_start(len(todo), skipped)
    if todo:
        meshes, errors = _meshes(study, todo)
        if engine == "serial":
            _run_here(study, todo, meshes, errors, store, on_row)
        elif client is not None:
            _run_dask(study, todo, meshes, errors, store, on_row, client, retries)
        else:
            _with_client(study, todo, meshes, errors, store, on_row, scheduler, workers, retries)
    ids = {v.id for v in study.variants}
    rows = tuple(sorted((r for r in store.rows.values() if r["id"] in ids), key=_index))
    paths = [v.path for v in study.variables]
    table = write_table(rows, paths, store.folder / "table.csv")
    return StudyRun(study, store.folder, rows, len(todo), skipped, table)


def _index(row: dict) -> int:
    return int(row["index"])


def _with_client(study, todo, meshes, errors, store, on_row, scheduler, workers, retries):
    try:
        from distributed import Client
    except ImportError as exc:
        raise FemheatError(
            'dask.distributed is not installed; fix: pip install "dask[distributed]" '
            "or use --engine serial"
        ) from exc
    if scheduler:
        try:
            client = Client(scheduler, timeout="20s")
        except (OSError, TimeoutError) as exc:
            raise FemheatError(
                f"cannot reach the Dask scheduler at {scheduler} ({exc}); fix: check the "
                "address and that the scheduler runs, or leave --scheduler out for a local "
                "cluster"
            ) from None
        with client:
            _run_dask(study, todo, meshes, errors, store, on_row, client, retries)
        return
    with local_cluster(workers) as cluster, Client(cluster) as client:
        _run_dask(study, todo, meshes, errors, store, on_row, client, retries)
