"""Calibration: fit uncertain case values so the run matches a thermocouple log.

The log is a CSV file: a time column (``time_s``, or ``time`` in s) and one column per probe
named in the case's ``[[probes]]``, in C. Empty cells are skipped.

Parameters (names for ``--fit``):

    ``htc``               ``furnace.htc``, W/(m2 K), >= 0
    ``emissivity``        ``furnace.emissivity``, 0..1
    ``conductance:FACE``  ``faces.FACE.conductance`` of a hearth face, W/(m2 K), >= 0
                          (``conductance`` alone: the case's only hearth face)
    ``lag``               furnace lag, s: the furnace schedule (given as rows) runs this much
                          later than the log's clock (negative: earlier)

The fit minimises the sum over probes and log times of (measured - computed)^2 with
``scipy.optimize.least_squares`` (trust region, bounds as above), starting from the case's
values (lag from 0). Each evaluation is one run on the same mesh, marched to the last log time
with steps no longer than the log interval; the computed probe temperatures are interpolated
linearly to the log times. The Jacobian is by forward differences: 1 % of h or a
conductance, 0.01 of the emissivity, 0.5 % of the log's span for the lag.

Confidence intervals (95 %) are the usual linearised ones: with residual variance
s^2 = sum r^2 / (m - n) (m readings, n parameters) and J the Jacobian at the fit,
cov = s^2 (J^T J)^-1 and the half-width is t(0.975, m - n) sqrt(cov_ii). They assume
independent readings with equal scatter and a model that is right apart from the fitted
values; correlated thermocouple errors make them too narrow.
"""

from __future__ import annotations

import copy
import csv
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import CaseError, FemheatError

__all__ = [
    "ThermocoupleLog",
    "Parameter",
    "Fit",
    "read_log",
    "parameters",
    "fit_case",
    "simulate_probes",
    "shift_rows",
    "fit_figure",
]


@dataclass(frozen=True)
class ThermocoupleLog:
    """Measured probe temperatures.

    Attributes:
        time_s: reading times, s (increasing).
        values: per probe name, temperatures in C (NaN where a cell was empty).
        source: the file name.
    """

    time_s: np.ndarray
    values: dict[str, np.ndarray]
    source: str = ""


@dataclass(frozen=True)
class Parameter:
    """One fitted value: its name, case path, unit, start value and bounds."""

    name: str
    path: str
    unit: str
    start: float
    lower: float
    upper: float


@dataclass(frozen=True)
class Fit:
    """The outcome of a calibration.

    Attributes:
        parameters: the fitted `Parameter` records.
        values: fitted values, in the parameters' units.
        half_width: 95 % confidence half-widths (NaN when the Jacobian is singular).
        covariance: the parameter covariance s^2 (J^T J)^-1.
        sigma: residual standard deviation s, K.
        readings: number of readings used (m).
        runs: number of model runs.
        residuals: per probe: {"rms_K", "mean_K", "max_abs_K", "readings"}.
        log: the measured log.
        fitted: computed probe temperatures at the log times with the fitted values, C.
        message: the optimiser's message.
    """

    parameters: tuple[Parameter, ...]
    values: np.ndarray
    half_width: np.ndarray
    covariance: np.ndarray
    sigma: float
    readings: int
    runs: int
    residuals: dict[str, dict]
    log: ThermocoupleLog
    fitted: dict[str, np.ndarray]
    message: str

    def table(self) -> list[dict]:
        """One dict per parameter: name, path, unit, value, half_width, low, high."""
        return [
            {
                "name": p.name,
                "path": p.path,
                "unit": p.unit,
                "value": float(v),
                "half_width": float(h),
                "low": float(v - h),
                "high": float(v + h),
            }
            for p, v, h in zip(self.parameters, self.values, self.half_width, strict=True)
        ]


def read_log(path: str | Path, probes) -> ThermocoupleLog:
    """Read a thermocouple log CSV for the case's probe names.

    Raises:
        CaseError: unreadable file, no time column, a probe column missing, bad numbers or
            times not increasing.
    """
    path = Path(path)
    try:
        with open(path, newline="", encoding="utf-8") as f:
            rows = [r for r in csv.reader(f) if r and not r[0].lstrip().startswith("#")]
    except OSError as exc:
        raise CaseError(str(path), f"cannot read ({exc.strerror})", "give the log CSV") from None
    if len(rows) < 3:
        raise CaseError(str(path), "fewer than two readings", "give a header and readings")
    header = [h.strip() for h in rows[0]]
    tcol = next((i for i, h in enumerate(header) if h in ("time_s", "time")), None)
    if tcol is None:
        raise CaseError(
            f"{path.name}: header", f"no time column in {header}", "name it time_s (seconds)"
        )
    missing = [p for p in probes if p not in header]
    if missing or not probes:
        raise CaseError(
            f"{path.name}: header",
            f"no column for probe(s) {missing or '(the case has no [[probes]])'}; "
            f"columns are {header}",
            "name one column after each [[probes]] name of the case",
        )

    def num(text, line, col):
        text = text.strip()
        if text == "":
            return math.nan
        try:
            return float(text)
        except ValueError:
            raise CaseError(
                f"{path.name}: line {line}, column {col}", f"not a number: {text!r}", "fix it"
            ) from None

    data = {h: [] for h in header}
    for n, r in enumerate(rows[1:], start=2):
        for i, h in enumerate(header):
            data[h].append(num(r[i] if i < len(r) else "", n, h))
    t = np.asarray(data[header[tcol]])
    if not np.all(np.isfinite(t)) or np.any(np.diff(t) <= 0):
        raise CaseError(
            f"{path.name}: {header[tcol]}", "times must be given and increase", "sort the log"
        )
    return ThermocoupleLog(t, {p: np.asarray(data[p]) for p in probes}, str(path))


def shift_rows(rows, lag: float) -> list[list[float]]:
    """A schedule ``[[time_s, value], ...]`` run `lag` seconds later (earlier if negative);
    the first value holds before the shifted start."""
    rows = [[float(a), float(b)] for a, b in rows]
    t = np.array([r[0] for r in rows])
    v = np.array([r[1] for r in rows])
    out = [[ti + lag, vi] for ti, vi in zip(t, v, strict=True) if ti + lag > 0]
    at0 = float(np.interp(-lag, t, v))  # the value at the new time 0
    if not out or out[0][0] > 0:
        out.insert(0, [0.0, at0])
    return out


def _schedule_rows(value, where: str):
    if isinstance(value, list) and value and all(isinstance(r, list) for r in value):
        return value
    raise CaseError(
        where,
        "a furnace lag needs the schedule as rows [[time_s, C], ...]",
        "write the schedule as rows, or leave lag out of --fit",
    )


def parameters(table: dict, names) -> tuple[Parameter, ...]:
    """The `Parameter` records for ``--fit`` names, with start values from the case table."""
    out = []
    furnace = table.get("furnace", {})
    for name in names:
        name = name.strip()
        if name in ("htc", "emissivity"):
            start = furnace.get(name, 0.0 if name == "htc" else None)
            if not isinstance(start, int | float) or isinstance(start, bool):
                raise CaseError(
                    f"furnace.{name}",
                    f"needs a plain number as the start of the fit, got {start!r}",
                    "give a number in SI units",
                )
            if name == "htc":
                out.append(Parameter("htc", "furnace.htc", "W/(m2 K)", float(start), 0.0, 1e5))
            else:
                s = min(max(float(start), 0.02), 0.98)
                out.append(Parameter("emissivity", "furnace.emissivity", "-", s, 0.0, 1.0))
        elif name == "lag":
            _schedule_rows(furnace.get("temperature"), "furnace.temperature")
            out.append(Parameter("lag", "furnace.temperature", "s", 0.0, -np.inf, np.inf))
        elif name.split(":")[0] == "conductance":
            faces = table.get("faces", {})
            hearths = [f for f, s in faces.items() if s.get("condition") == "hearth"]
            face = (
                name.split(":", 1)[1] if ":" in name else (hearths[0] if len(hearths) == 1 else "")
            )
            if face not in hearths:
                raise CaseError(
                    "--fit",
                    f"{name!r}: no hearth face {face!r} in the case (hearth faces: {hearths})",
                    "write conductance:FACE for a face with condition = 'hearth'",
                )
            start = float(faces[face]["conductance"])
            out.append(Parameter(name, f"faces.{face}.conductance", "W/(m2 K)", start, 0.0, 1e6))
        else:
            raise CaseError(
                "--fit",
                f"unknown parameter {name!r}",
                "use htc, emissivity, conductance:FACE or lag",
            )
    if len({p.name for p in out}) != len(out):
        raise CaseError("--fit", "a parameter is named twice", "name each once")
    return tuple(out)


def _apply(table: dict, params, x) -> dict:
    from .spec import set_path

    data = copy.deepcopy(table)
    for p, value in zip(params, x, strict=True):
        if p.name == "lag":
            f = data["furnace"]
            f["temperature"] = shift_rows(f["temperature"], float(value))
            if isinstance(f.get("wall_temperature"), list):
                f["wall_temperature"] = shift_rows(f["wall_temperature"], float(value))
        else:
            set_path(data, p.path, float(value))
    return data


def _for_log(table: dict, log: ThermocoupleLog) -> dict:
    """The case marched to the last reading, without stopping at the target."""
    data = copy.deepcopy(table)
    data.pop("target", None)
    solver = data.setdefault("solver", {})
    solver["end_time"] = float(log.time_s[-1])
    step = float(np.median(np.diff(log.time_s)))
    if not isinstance(solver.get("max_step"), int | float) or solver["max_step"] > step:
        solver["max_step"] = step
    return data


def simulate_probes(table: dict, base_dir, times, mesh=None) -> dict[str, np.ndarray]:
    """Run a case table to the last of `times` and return each probe's temperature (C) at
    `times` (s), interpolated linearly between steps.

    Raises:
        CaseError: bad case. FemheatError: failed run.
    """
    from ..problem import build_problem
    from ..run import run_problem
    from .outcome import case_from_table

    times = np.asarray(times, dtype=float)
    data = copy.deepcopy(table)
    data.pop("target", None)
    data.setdefault("solver", {})["end_time"] = float(times[-1])
    problem = build_problem(case_from_table(data, base_dir), mesh=mesh)
    result = run_problem(problem)
    h = result.history
    rows = np.asarray(h.rows, dtype=float)
    cols = h.columns
    t = rows[:, cols.index("time_s")]
    return {
        name: np.interp(times, t, rows[:, cols.index(f"{name}_C")]) for name in problem.probe_names
    }


def fit_case(table: dict, base_dir, log: ThermocoupleLog, names, mesh=None) -> Fit:
    """Fit the named parameters of a case table to a thermocouple log.

    Args:
        table: the case as a table (as TOML reads it), with ``[[probes]]`` named as the log's
            columns.
        base_dir: folder for relative paths in the case.
        log: the measured log (`read_log`).
        names: parameter names (see the module docstring).
        mesh: a `PartMesh` of the case (None: meshed once here).

    Raises:
        CaseError: bad names or case. FemheatError: a run failed or the fit did not converge.
    """
    from scipy import stats
    from scipy.optimize import least_squares

    from .outcome import mesh_for_table

    params = parameters(table, names)
    base = _for_log(table, log)
    if mesh is None:
        mesh = mesh_for_table(base, base_dir)
    probes = list(log.values)
    masks = {p: np.isfinite(log.values[p]) for p in probes}
    measured = np.concatenate([log.values[p][masks[p]] for p in probes])
    runs = 0

    def model(x):
        nonlocal runs
        runs += 1
        return simulate_probes(_apply(base, params, x), base_dir, log.time_s, mesh)

    def residual(x):
        sim = model(x)
        return np.concatenate([sim[p][masks[p]] for p in probes]) - measured

    x0 = np.array([p.start for p in params])
    lower = np.array([p.lower for p in params])
    upper = np.array([p.upper for p in params])
    span = float(log.time_s[-1] - log.time_s[0])
    last: dict = {}

    def cached(x):
        key = tuple(np.asarray(x, dtype=float))
        if last.get("x") != key:
            last.update(x=key, r=residual(np.asarray(x, dtype=float)))
        return last["r"]

    def jacobian(x):
        # forward differences with steps in the parameters' own units: 1 % of a coefficient
        # (at least 0.01 for the emissivity), and 0.5 % of the log's span for the lag (a step
        # of a few seconds would only see the step-size control move)
        r0 = cached(x)
        jac = np.empty((r0.size, x.size))
        for i, p in enumerate(params):
            if p.name == "lag":
                h = max(0.005 * span, 1.0)
            elif p.name == "emissivity":
                h = 0.01
            else:
                h = 0.01 * max(abs(x[i]), 1.0)
            if x[i] + h > upper[i]:
                h = -h
            xh = np.array(x, dtype=float)
            xh[i] += h
            jac[:, i] = (residual(xh) - r0) / h
        return jac

    scale = np.array([max(abs(p.start), 1.0) if p.name != "lag" else 0.01 * span for p in params])
    try:
        res = least_squares(
            cached, x0, jac=jacobian, bounds=(lower, upper), x_scale=scale, method="trf"
        )
    except (FemheatError, CaseError):
        raise
    except (ValueError, np.linalg.LinAlgError) as exc:
        raise FemheatError(f"the fit failed: {exc}") from exc
    m, n = measured.size, len(params)
    if m <= n:
        raise CaseError(log.source, f"{m} readings for {n} parameters", "give more readings")
    dof = m - n
    s2 = float(res.fun @ res.fun) / dof
    jac = np.asarray(res.jac, dtype=float)
    try:
        cov = np.linalg.inv(jac.T @ jac) * s2
        half = stats.t.ppf(0.975, dof) * np.sqrt(np.clip(np.diag(cov), 0.0, None))
    except np.linalg.LinAlgError:
        cov = np.full((n, n), np.nan)
        half = np.full(n, np.nan)
    fitted = model(res.x)
    residuals = {}
    for p in probes:
        r = log.values[p][masks[p]] - fitted[p][masks[p]]
        residuals[p] = {
            "rms_K": float(np.sqrt(np.mean(r**2))),
            "mean_K": float(np.mean(r)),
            "max_abs_K": float(np.max(np.abs(r))),
            "readings": int(r.size),
        }
    return Fit(
        params, res.x, half, cov, math.sqrt(s2), m, runs, residuals, log, fitted, str(res.message)
    )


def fit_figure(fit: Fit, title: str = ""):
    """Measured readings (dots) and the fitted curves (lines) of every probe, against hours."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(8, 5), dpi=110)
    ax = fig.add_subplot()
    t = fit.log.time_s / 3600.0
    for i, (name, values) in enumerate(fit.log.values.items()):
        color = f"C{i}"
        ax.plot(t, values, ".", ms=3, color=color, label=f"{name} measured")
        ax.plot(t, fit.fitted[name], "-", lw=1.2, color=color, label=f"{name} fitted")
    ax.set_xlabel("time, h")
    ax.set_ylabel("temperature, C")
    text = ", ".join(f"{r['name']} = {r['value']:.4g} ± {r['half_width']:.2g}" for r in fit.table())
    ax.set_title(title or "Thermocouple log and fitted run")
    ax.text(0.01, 0.99, text + " (95 %)", transform=ax.transAxes, va="top", fontsize=8)
    ax.legend(fontsize=8, loc="lower right")
    fig.tight_layout()
    return fig
