"""``femheat fit CASE LOG.csv --fit htc,emissivity``: calibrate a case to a thermocouple log.

Writes ``OUT/fit.json`` (fitted values, 95 % intervals, residuals per probe),
``OUT/fit_curves.csv`` (measured and fitted probe temperatures) and ``OUT/fit.{png,svg}``.
"""

from __future__ import annotations

import csv
import json
import tomllib
from pathlib import Path

__all__ = ["add_parser", "run"]


def add_parser(sub) -> None:
    """Register the ``fit`` subcommand."""
    p = sub.add_parser("fit", help="fit h, emissivity, contact conductance or furnace lag to a log")
    p.add_argument("case", help="case file (TOML) with [[probes]] named as the log's columns")
    p.add_argument("log", help="thermocouple log, CSV: time_s and one column per probe (C)")
    p.add_argument(
        "--fit",
        default="htc,emissivity",
        help="comma-separated: htc, emissivity, conductance:FACE, lag (default: %(default)s)",
    )
    p.add_argument("--out", help="results folder (default: <case name>_fit)")


def run(args, console) -> int:
    """Fit, print the table and write the files."""
    from .case import load_case
    from .output.files import atomic_write_text
    from .output.plots import save_figure
    from .study.fit import fit_case, fit_figure, parameters, read_log

    case = load_case(args.case)
    with open(args.case, "rb") as f:
        table = tomllib.load(f)
    log = read_log(args.log, [p.name for p in case.probes])
    names = [n for n in args.fit.split(",") if n.strip()]
    parameters(table, names)  # bad names fail before anything is written
    out = Path(args.out or f"{Path(args.case).stem}_fit")
    out.mkdir(parents=True, exist_ok=True)
    console.print(
        f"[bold]{case.title or Path(args.case).stem}[/bold]: fitting {', '.join(names)} to "
        f"{log.time_s.size} readings of {len(log.values)} probes ({args.log})"
    )
    fit = fit_case(table, case.base_dir, log, names)
    for r in fit.table():
        console.print(
            f"  {r['name']:<16} {r['value']:.5g} {r['unit']}  "
            f"(95 %: {r['low']:.5g} .. {r['high']:.5g})",
            markup=False,
        )
    for name, r in fit.residuals.items():
        console.print(
            f"  probe {name}: residual rms {r['rms_K']:.3g} K, mean {r['mean_K']:+.3g} K, "
            f"largest {r['max_abs_K']:.3g} K over {r['readings']} readings",
            markup=False,
        )
    console.print(f"  {fit.runs} runs; scatter s = {fit.sigma:.3g} K; {fit.message}")
    data = {
        "case": str(args.case),
        "log": str(args.log),
        "parameters": fit.table(),
        "covariance": fit.covariance.tolist(),
        "sigma_K": fit.sigma,
        "readings": fit.readings,
        "runs": fit.runs,
        "residuals": fit.residuals,
        "message": fit.message,
        "note": "95 % intervals from s^2 (J^T J)^-1; they assume independent readings",
    }
    atomic_write_text(out / "fit.json", json.dumps(data, indent=2) + "\n")
    with open(out / "fit_curves.csv", "w", newline="", encoding="utf-8") as f:
        w = csv.writer(f)
        names_p = list(fit.log.values)
        w.writerow(
            ["time_s", *(f"{p}_measured_C" for p in names_p), *(f"{p}_fitted_C" for p in names_p)]
        )
        for i, t in enumerate(fit.log.time_s):
            w.writerow(
                [t, *(fit.log.values[p][i] for p in names_p), *(fit.fitted[p][i] for p in names_p)]
            )
    save_figure(fit_figure(fit, case.title), out, "fit")
    console.print(f"  results in {out}/ (fit.json, fit_curves.csv, fit.png)")
    return 0
