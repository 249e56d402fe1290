"""Stop a run cleanly on SIGINT (Ctrl-C) or SIGTERM: after the current step, not mid-write.

Used only by the command line around the march and the writing of its results::

    with StopRequests() as stop:
        result = run_problem(problem, observers, stop=stop)

While the block runs, the first SIGINT or SIGTERM only records the request; `run_problem`
asks `stop()` after each step and ends the march with status "interrupted". A second signal
stops at once (KeyboardInterrupt). The previous handlers are restored on leaving the block.
Outside the main thread (where Python cannot install handlers) nothing is installed.
"""

from __future__ import annotations

import signal
import threading

__all__ = ["StopRequests", "EXIT_CODES"]

_NAMES = {signal.SIGINT: "SIGINT (Ctrl-C)", signal.SIGTERM: "SIGTERM"}
EXIT_CODES = {signal.SIGINT: 130, signal.SIGTERM: 143}
"""Exit code of an interrupted run per signal (128 + the signal number, the shell's habit)."""


class StopRequests:
    """Context manager turning SIGINT and SIGTERM into a stop request; call it to ask."""

    def __init__(self):
        self.signum: int | None = None
        self._saved: dict[int, object] = {}

    def _handle(self, signum, frame) -> None:
        if self.signum is not None:
            raise KeyboardInterrupt
        self.signum = signum

    def __enter__(self) -> StopRequests:
        if threading.current_thread() is threading.main_thread():
            for sig in _NAMES:
                self._saved[sig] = signal.signal(sig, self._handle)
        return self

    def __exit__(self, *exc) -> None:
        for sig, handler in self._saved.items():
            signal.signal(sig, signal.SIG_DFL if handler is None else handler)
        self._saved.clear()

    def __call__(self) -> str | None:
        """The reason to stop ("interrupted by SIGTERM"), or None to go on."""
        if self.signum is None:
            return None
        return f"interrupted by {_NAMES.get(self.signum, f'signal {self.signum}')}"

    @property
    def exit_code(self) -> int:
        """130 after SIGINT, 143 after SIGTERM (1 if no signal came)."""
        return EXIT_CODES.get(self.signum, 1)
