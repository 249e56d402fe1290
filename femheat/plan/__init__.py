"""Furnace program design: the shortest ramp-and-hold program that keeps a part's limits.

`spec` reads the plan file (base case, limits), `design` turns a few design values into a
program and its case-file forms, `evaluate` runs a program on the part and reads the limited
values, `search` finds the program, `report` writes the table, the plot and the margins.
CLI: `femheat.plan_cli` (``femheat plan``).
"""

from .design import Design, FurnaceProgram, ProgramStep
from .evaluate import Evaluation, Evaluator
from .search import Margin, PlanResult, design_program
from .spec import Plan, load_plan, parse_plan

__all__ = [
    "Design",
    "Evaluation",
    "Evaluator",
    "FurnaceProgram",
    "Margin",
    "Plan",
    "PlanResult",
    "ProgramStep",
    "design_program",
    "load_plan",
    "parse_plan",
]
