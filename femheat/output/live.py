"""Files kept current while a run goes on, so a run that is killed leaves readable results.

* `HistoryFlusher`: an observer that rewrites ``history.csv`` (atomically) after the first
  step and then every `every_s` seconds of wall time, from the run's own history watcher
  (handed over through `attach`, see `femheat.run.RunState`). It never spends more than
  about 5 % of the run on writing: the wait grows to 20 times the time the last write took.
* `mark_running` / `mark_failed`: a placeholder ``summary.json`` with ``"complete": false``
  while the run goes on (so a summary left by an earlier run in the same folder is never
  taken for this one), and one saying why the run failed.
"""

from __future__ import annotations

import json
import logging
import time
from pathlib import Path

from .. import __version__
from .files import atomic_write_text
from .summary import write_history_rows

__all__ = ["HistoryFlusher", "mark_running", "mark_failed", "mark_interrupted"]

log = logging.getLogger(__name__)


class HistoryFlusher:
    """Observer writing history.csv during the run.

    Args:
        folder: the results folder.
        every_s: wall-clock seconds between writes (the first step is always written).
    """

    def __init__(self, folder, every_s: float = 5.0):
        self.folder = Path(folder)
        self.every_s = float(every_s)
        self.history = None
        self.writes = 0
        self.failed = ""  # why the rewrites stopped ("" if they did not)
        self.last_write_s = 0.0
        self._last: float | None = None

    def attach(self, state) -> None:
        """Receive the `femheat.run.RunState` (its "history" watcher) before the first step."""
        self.history = state.watchers["history"]

    def __call__(self, step) -> None:
        if self.history is None or self.failed:
            return
        now = time.monotonic()
        wait = max(self.every_s, 20.0 * self.last_write_s)
        if self._last is None or now - self._last >= wait:
            try:
                self.write()
            except OSError as exc:  # the run goes on; the history is written at its end
                self.failed = f"history.csv could not be written during the run: {exc}"
                log.warning(self.failed)

    def write(self) -> Path:
        """Write history.csv now (every row so far)."""
        started = time.perf_counter()
        h = self.history
        path = write_history_rows(self.folder, h.columns, h.rows)
        self.writes += 1
        self.last_write_s = time.perf_counter() - started
        self._last = time.monotonic()
        return path


def _marker(folder, status: str, reason: str, title: str) -> Path:
    data = {
        "femheat_version": __version__,
        "title": title,
        "complete": False,
        "status": status,
        "reason": reason,
        "written": time.strftime("%Y-%m-%d %H:%M:%S %z"),
    }
    return atomic_write_text(Path(folder) / "summary.json", json.dumps(data, indent=2) + "\n")


def mark_running(folder, title: str = "") -> Path:
    """A placeholder summary.json for a run that has started and not yet finished."""
    return _marker(
        folder,
        "running",
        "the run had not finished when this was written; if it is not running any more, it "
        "was stopped before it could write its summary (history.csv and the field frames "
        "hold what it had computed)",
        title,
    )


def mark_failed(folder, reason: str, title: str = "") -> Path:
    """A summary.json for a run that failed (the march could not continue)."""
    return _marker(folder, "failed", reason, title)


def mark_interrupted(folder, reason: str, title: str = "") -> Path:
    """A summary.json for a run stopped before it could write its results."""
    return _marker(folder, "interrupted", reason, title)
