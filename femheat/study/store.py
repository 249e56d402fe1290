"""The results of a study on disk, written as they finish.

``results.jsonl`` holds one JSON line per finished variant: ``id``, ``index``, ``varied``,
``inputs`` (dotted path -> value) and the result columns of `femheat.study.outcome`. Lines are
written whole by one writer (the client), flushed and synced after each, so an interrupted
study keeps every finished variant; a line cut short by a crash is dropped on reading and cut
off before the next append. ``table.csv`` is the same table, one row per variant in study
order, written at the end.
"""

from __future__ import annotations

import csv
import json
import math
import os
from pathlib import Path

from .outcome import OUTPUT_COLUMNS

__all__ = ["ResultStore", "write_table", "table_columns"]


def _clean(value):
    """JSON has no NaN: write null."""
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


class ResultStore:
    """Append-only store of finished variants in ``folder/results.jsonl``.

    Args:
        folder: the study's results folder (made if missing).
        resume: keep the rows already there (else the file is started afresh).
    """

    def __init__(self, folder: str | Path, resume: bool = False):
        self.folder = Path(folder)
        self.folder.mkdir(parents=True, exist_ok=True)
        self.path = self.folder / "results.jsonl"
        self.rows: dict[str, dict] = {}
        if resume and self.path.exists():
            self._read_and_trim()
        elif self.path.exists():
            self.path.unlink()

    def _read_and_trim(self) -> None:
        raw = self.path.read_bytes()
        good = 0
        for line in raw.splitlines(keepends=True):
            if not line.endswith(b"\n"):
                break  # cut short by a crash
            try:
                row = json.loads(line)
            except ValueError:
                break
            self.rows[row["id"]] = row
            good += len(line)
        if good < len(raw):
            with open(self.path, "r+b") as f:
                f.truncate(good)

    def done(self, variant_id: str) -> bool:
        """Whether a variant has a stored row."""
        return variant_id in self.rows

    def add(self, row: dict) -> None:
        """Append one finished variant's row (skipped if its id is stored already)."""
        if row["id"] in self.rows:
            return
        clean = {k: _clean(v) for k, v in row.items()}
        clean["inputs"] = {k: _clean(v) for k, v in row.get("inputs", {}).items()}
        data = (json.dumps(clean, sort_keys=True) + "\n").encode("utf-8")
        fd = os.open(self.path, os.O_WRONLY | os.O_APPEND | os.O_CREAT, 0o644)
        try:
            os.write(fd, data)
            os.fsync(fd)
        finally:
            os.close(fd)
        self.rows[row["id"]] = clean


def table_columns(paths) -> list[str]:
    """The CSV header: id, index, varied, the varied paths, then the result columns."""
    return ["id", "index", "varied", *paths, *OUTPUT_COLUMNS]


def write_table(rows, paths, file: str | Path) -> Path:
    """Write the study table as CSV (rows in study order; empty cells for missing values).

    Written to a temporary file and renamed, so a reader never sees half a table.
    """
    file = Path(file)
    tmp = file.with_name(file.name + ".tmp")
    cols = table_columns(paths)
    with open(tmp, "w", newline="", encoding="utf-8") as f:
        w = csv.writer(f)
        w.writerow(cols)
        for row in sorted(rows, key=lambda r: r["index"]):
            inputs = row.get("inputs", {})
            out = []
            for c in cols:
                v = inputs.get(c) if c in paths else row.get(c)
                out.append("" if v is None or (isinstance(v, float) and math.isnan(v)) else v)
            w.writerow(out)
    os.replace(tmp, file)
    return file
