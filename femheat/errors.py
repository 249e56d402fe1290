"""Exceptions raised by femheat. Library code raises; only the CLI prints and exits."""

__all__ = ["FemheatError", "CaseError", "SolverError"]


class FemheatError(Exception):
    """Base class for every error femheat raises on purpose."""


class CaseError(FemheatError):
    """Bad input: the message names the place in the case file and the fix.

    Args:
        where: dotted place in the case file, e.g. ``"furnace.htc"`` (may be empty).
        problem: what is wrong, with the offending value.
        fix: what to do about it.
    """

    def __init__(self, where: str, problem: str, fix: str = ""):
        self.where = where
        self.problem = problem
        self.fix = fix
        text = f"{where}: {problem}" if where else problem
        if fix:
            text += f"; fix: {fix}"
        super().__init__(text)


class SolverError(FemheatError):
    """The time march could not continue (e.g. Newton failed at the smallest step)."""
