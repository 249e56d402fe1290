"""``femheat materials [NAME] [--plot FILE] [--step K] [--units us]``: the material library.

Without a name, lists every entry with its valid range and source. With a name, prints the
entry as a table (conductivity, specific heat and enthalpy against temperature) and can save a
plot of conductivity and specific heat as PNG.
"""

from __future__ import annotations

from pathlib import Path

from .errors import CaseError

__all__ = ["add_parser", "run"]


def add_parser(sub) -> None:
    """Add the ``materials`` command to an argparse sub-parser collection."""
    m = sub.add_parser("materials", help="list the material library, or show one entry")
    m.add_argument("name", nargs="?", help="an entry to show as a table")
    m.add_argument("--plot", metavar="FILE", help="save a plot of k(T) and c(T) (PNG)")
    m.add_argument("--step", type=float, default=50.0, help="table spacing in K (default 50)")
    m.add_argument(
        "--units", choices=("si", "us"), default="si", help="add US customary columns (us)"
    )


def run(args, console) -> int:
    """Print the listing or one entry; returns the exit code. Raises CaseError on bad names."""
    from .library import find, listing_lines, suggest, table_lines

    if not args.name:
        for line in listing_lines():
            console.print(line, markup=False)
        console.print(
            'Pick one with [material] name = "KEY"; density, conductivity and '
            "specific_heat given there override it.",
            markup=False,
        )
        return 0
    entry = find(args.name)
    if entry is None:
        close = suggest(args.name)
        hint = f"did you mean {close!r}? " if close else ""
        raise CaseError(
            "materials", f"no entry {args.name!r}", f"{hint}list the entries with femheat materials"
        )
    if not args.step > 0:
        raise CaseError("--step", f"must be > 0, got {args.step:g}", "give a spacing in K")
    for line in table_lines(entry, args.step, args.units):
        console.print(line, markup=False)
    if args.plot:
        from .output.material_plot import plot_entry

        path = plot_entry(entry, Path(args.plot), args.units)
        console.print(f"plot saved to {path}", markup=False)
    return 0
