"""A progress bar for long runs (rich), as an observer of the march.

Nothing shows for the first `delay` seconds, so short runs print nothing extra. After that a
single line shows the simulated time, the step size and the lagging temperature (the coldest
point when heating, the hottest when cooling) against the target. The bar's fraction is the
larger of the simulated time over the end time (when there is one) and the lagging point's
progress from the start temperature to the target. The bar is transient: it is removed when
the run ends. When the console is not a terminal (a log file, a pipe) nothing is drawn.
"""

from __future__ import annotations

import time

from ..stepping import Step

__all__ = ["RunProgress", "task_bar"]


def _hm(seconds: float) -> str:
    minutes = int(seconds // 60.0)
    return f"{minutes // 60}:{minutes % 60:02d}"


def _step_text(h: float) -> str:
    return f"{h:.3g} s" if h < 600 else f"{h / 60.0:.3g} min"


class RunProgress:
    """Observer drawing a progress bar on a rich console once the run lasts `delay` s.

    Use as a context manager around the run so the bar is always removed.

    Args:
        console: a `rich.console.Console`.
        initial_c: the start temperature, C.
        target_c: the target, C, or None. heating: direction of the target.
        end_time: s, or None.
        delay: wall-clock seconds before the bar appears.
        enabled: False draws nothing (``--quiet``).
    """

    def __init__(
        self,
        console,
        initial_c: float,
        target_c: float | None = None,
        heating: bool = True,
        end_time: float | None = None,
        delay: float = 2.0,
        enabled: bool = True,
    ):
        self.console = console
        self.initial = float(initial_c)
        self.target = target_c
        self.sense = 1.0 if heating else -1.0
        self.end_time = end_time
        self.delay = delay
        self.enabled = bool(enabled) and bool(getattr(console, "is_terminal", False))
        self.shown = False
        self.updates = 0
        self._start = time.perf_counter()
        self._progress = None
        self._task = None

    @classmethod
    def for_problem(cls, console, problem, **kwargs) -> RunProgress:
        target = problem.target
        return cls(
            console,
            problem.initial_c,
            target.temperature if target else None,
            target.heating if target else True,
            problem.settings.end_time,
            **kwargs,
        )

    def fraction(self, t: float, lagging_c: float) -> float | None:
        """Estimated part of the run done, 0..1 (None when nothing tells)."""
        parts = []
        if self.end_time:
            parts.append(t / self.end_time)
        if self.target is not None and self.target != self.initial:
            parts.append((lagging_c - self.initial) / (self.target - self.initial))
        if not parts:
            return None
        return float(min(max(max(parts), 0.0), 1.0))

    def _begin(self) -> None:
        from rich.progress import BarColumn, Progress, TaskProgressColumn, TextColumn

        self._progress = Progress(
            TextColumn("[bold]running[/bold]"),
            BarColumn(bar_width=30),
            TaskProgressColumn(),
            TextColumn("{task.fields[info]}"),
            console=self.console,
            transient=True,
            refresh_per_second=4,
        )
        self._progress.start()
        self._task = self._progress.add_task("run", total=1000, info="")
        self.shown = True

    def __call__(self, step: Step) -> None:
        if not self.enabled:
            return
        if not self.shown:
            if time.perf_counter() - self._start < self.delay:
                return
            self._begin()
        end = step.end
        lag = float(end.min()) if self.sense > 0 else float(end.max())
        word = "coldest" if self.sense > 0 else "hottest"
        info = f"t = {_hm(step.t1)} h:min  step {_step_text(step.t1 - step.t0)}  {word} {lag:.1f} C"
        if self.target is not None:
            info += f" (target {self.target:g} C)"
        frac = self.fraction(step.t1, lag)
        if frac is None:  # no end time and no target: a pulsing bar
            self._progress.update(self._task, total=None, info=info)
        else:
            self._progress.update(self._task, completed=1000 * frac, info=info)
        self.updates += 1

    def close(self) -> None:
        if self._progress is not None:
            self._progress.stop()
            self._progress = None

    def __enter__(self) -> RunProgress:
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def task_bar(console, transient: bool):
    """A rich bar counting finished runs of a study or a search (description, bar, n of N,
    elapsed time); `transient` removes it when done."""
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TimeElapsedColumn

    return Progress(
        "[progress.description]{task.description}",
        BarColumn(),
        MofNCompleteColumn(),
        TimeElapsedColumn(),
        console=console,
        transient=transient,
    )
