"""Benchmark suite: ``python -m femheat.bench`` (speed and memory, never a test).

Runs the benchmark cases, each in a fresh Python process so that its peak memory is its own,
and prints one row per case. ``--write`` regenerates ``benchmarks/RESULTS.md`` (the machine,
the rows, the speed targets met or not, the triangular-solve floor and, with ``--scaling``,
the growth of time and memory with the node count).

Cases: (a) the demo (``femheat demo``), (b) ``benchmarks/cases/b_angle_2d.toml``, (c)
``c_angle_3d.toml`` and (d) ``d_angle_3d_large.toml``; ``--case FILE`` adds any case file.

What a row measures, in the child process (wall time, s):

* mesh: `femheat.mesh.mesh_part` called with the arguments `femheat.problem.build_problem`
  gives it (shape, resolved parameters, model, ``mesh.size``, ``mesh.refine``,
  ``mesh.corner_size``).
* assembly: ``build_problem(case, mesh=mesh)`` with that mesh, so everything build_problem does
  besides meshing: the scikit-fem mesh, the stiffness and lumped volumes, the face weights and
  the checks against the geometry (probe positions, target reachability).
* march: `femheat.run.run_problem` with the frame recorder the CLI uses (the time march and
  every watcher).
* output: ``Results.save`` into a scratch folder, as ``femheat run`` writes per ``[output]``.
* total: from the start of the child process (interpreter start and imports included) to the
  end of the outputs: the end-to-end time a user waits, less the printing of the summary.
* peak memory: ``ru_maxrss`` of the child at the end of the outputs (MB = 1e6 bytes); "base"
  is the same after the imports (gmsh, scikit-fem, scipy's sparse solvers, pyamg for solids),
  before meshing.
* the counters of `femheat.stepping.SolverStats`; "builds" are preconditioner builds
  (sparse factorisations on the direct path, multigrid hierarchies on the iterative one).
* floor: after the run (and after peak memory is read), the matrix of the final stage,
  K + diag(d) with d from the final temperatures and the last step size, is factorised with the
  fastest sparse direct solver available (MKL PARDISO as `femheat.linear` runs it; else CHOLMOD
  when scikit-sparse is installed; else SuperLU with the ordering `femheat.linear` uses) and
  one triangular-solve pair is timed (best of five, on the march's threads). The floor
  is accepted steps x (linear solves per accepted step) x one solve; march / floor says how
  far the march is from it. Skipped above
  ``--floor-max-nodes`` (default 1 000 000): the factorisation of a larger 3D mesh may not fit.

Wall times are those of the machine the suite runs on; a busy machine makes them longer.
"""

from __future__ import annotations

import argparse
import datetime
import json
import math
import os
import platform
import subprocess
import sys
import tempfile
import threading
import time
from dataclasses import asdict, dataclass, fields, replace
from pathlib import Path

__all__ = [
    "BENCH_DIR",
    "BenchCase",
    "CASES",
    "Row",
    "Spec",
    "main",
    "measure",
    "run_case",
    "fit_exponent",
    "machine_lines",
    "results_text",
]

BENCH_DIR = Path(__file__).resolve().parents[1] / "benchmarks"
CASES_DIR = BENCH_DIR / "cases"
_MARK = "@bench "  # prefix of the child's report lines on stdout
MB = 1e6  # bytes
DEFAULT_TIMEOUT_MIN = 30.0
CASE_TIMEOUT_MIN = {"d_angle_3d_large": 120.0}  # minutes; the 1M-node case takes its time
DEFAULT_FLOOR_MAX_NODES = 1_000_000


@dataclass(frozen=True)
class BenchCase:
    """A benchmark case.

    Args:
        name: short name, used by ``--only``.
        label: what it is, for the table.
        source: case file name in ``benchmarks/cases``, or "demo" for the built-in demo.
        quick_size: element size (m) used with ``--quick`` (None: the case's own).
    """

    name: str
    label: str
    source: str
    quick_size: float | None = None


CASES: tuple[BenchCase, ...] = (
    BenchCase("a_demo", "(a) demo, axisymmetric billet", "demo"),
    BenchCase("b_angle_2d", "(b) 2D angle section", "b_angle_2d.toml", 0.0009),
    BenchCase("c_angle_3d", "(c) 3D extruded angle", "c_angle_3d.toml", 0.0056),
    BenchCase("d_angle_3d_large", "(d) 3D extruded angle, large", "d_angle_3d_large.toml", 0.0045),
)

_LAST = ("d_angle_3d_large",)  # run after the others and the scaling series

# scaling series: (title, case file, element sizes in m for full and quick runs)
_SCALING = (
    (
        "2D angle section (case b geometry)",
        "b_angle_2d.toml",
        (0.00144, 0.00102, 0.00072, 0.00051, 0.00036),
        (0.0029, 0.002, 0.00144, 0.00102),
    ),
    (
        "3D extruded angle (case c geometry)",
        "c_angle_3d.toml",
        (0.0071, 0.0056, 0.00444, 0.00353, 0.0028),
        (0.0112, 0.0089, 0.0071, 0.0056),
    ),
)


@dataclass(frozen=True)
class Spec:
    """What one child process runs.

    Args:
        name: row name. label: row label.
        source: absolute path of a case file, or "demo".
        mesh_size: element size override, m (None: the case's own).
        floor: measure the triangular-solve floor.
        floor_max_nodes: skip the floor above this many nodes.
        quick: the size is a reduced one (``--quick``).
    """

    name: str
    label: str
    source: str
    mesh_size: float | None = None
    floor: bool = True
    floor_max_nodes: int = DEFAULT_FLOOR_MAX_NODES
    quick: bool = False


@dataclass(frozen=True)
class Row:
    """One measured case. Times in s (wall), memory in MB (1e6 bytes), target time in s."""

    name: str
    label: str = ""
    status: str = "not run"  # "ok", "timeout", "failed", "not run"
    note: str = ""
    quick: bool = False
    mesh_size: float | None = None
    others: float | None = None  # cores kept busy by other processes during the case, mean
    nodes: int | None = None
    cells: int | None = None
    dim: int | None = None
    mesh_s: float | None = None
    assembly_s: float | None = None
    march_s: float | None = None
    output_s: float | None = None
    total_s: float | None = None
    peak_mb: float | None = None
    base_mb: float | None = None
    method: str = ""
    builds: int | None = None
    steps: int | None = None
    rejected: int | None = None
    newton: int | None = None
    solves: int | None = None
    cg_iterations: int | None = None
    run_status: str = ""
    target_s: float | None = None
    floor_method: str = ""
    floor_factor_s: float | None = None
    floor_solve_s: float | None = None
    floor_note: str = ""

    @property
    def build_s(self) -> float | None:
        """Mesh plus assembly, s."""
        if self.mesh_s is None or self.assembly_s is None:
            return None
        return self.mesh_s + self.assembly_s

    @property
    def solves_per_step(self) -> float | None:
        """Linear solves per accepted step (solves of rejected steps included)."""
        if not self.steps or self.solves is None:
            return None
        return self.solves / self.steps

    @property
    def floor_s(self) -> float | None:
        """Accepted steps x solves per accepted step x one triangular-solve pair, s."""
        if self.floor_solve_s is None or self.solves_per_step is None:
            return None
        return self.steps * self.solves_per_step * self.floor_solve_s

    @property
    def floor_ratio(self) -> float | None:
        """March time over the floor."""
        if not self.floor_s or self.march_s is None:
            return None
        return self.march_s / self.floor_s

    @classmethod
    def from_dict(cls, data: dict) -> Row:
        known = {f.name for f in fields(cls)}
        return cls(**{k: v for k, v in data.items() if k in known})


# --- the child process ------------------------------------------------------------------------


def _emit(**values) -> None:
    """One report line for the parent process."""
    print(_MARK + json.dumps(values), flush=True)


def _maxrss_mb() -> float:
    import resource

    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024 / MB  # KiB on Linux


def _load_case(spec: Spec):
    """(Case, case text) for a spec, with the element size overridden when asked."""
    import tomllib

    from .case import parse_case

    if spec.source == "demo":
        from .cli import demo_case_text

        text, where = demo_case_text(), "demo case"
    else:
        path = Path(spec.source)
        os.chdir(path.parent)  # relative file paths in the case are taken from its folder
        text, where = path.read_text(encoding="utf-8"), str(path)
    data = tomllib.loads(text)
    if spec.mesh_size is not None:
        data.setdefault("mesh", {})["size"] = spec.mesh_size
    return parse_case(data, source=where), text


class _LastStep:
    """Observer: keeps the times of the last accepted step and reports progress now and then."""

    def __init__(self, every_s: float = 10.0):
        self.times: tuple[float, ...] = ()
        self.count = 0
        self._every = every_s
        self._next = time.perf_counter() + every_s

    def __call__(self, step) -> None:
        self.times = tuple(step.times)
        self.count += 1
        now = time.perf_counter()
        if now >= self._next:
            self._next = now + self._every
            _emit(phase="march", steps=self.count, t=step.t1)


def _final_matrix(problem, result, times):
    """K + diag(d) of the final stage over the free nodes: d = (m a rho c - dF/dT) / k."""
    import scipy.sparse as sp

    from .stepping import GAMMA

    model, mat = problem.model, problem.model.material
    free = model.free_nodes
    temp = result.final
    h = times[-1] - times[0]
    a = 2.0 / (GAMMA * h) if len(times) == 3 else 1.0 / h
    _, dflow = model.boundary_flow(temp, times[-1])
    k = mat.conductivity(temp[free])
    d = (model.volumes[free] * a * mat.capacity(temp[free]) - dflow[free]) / k
    return (model.stiffness[free][:, free] + sp.diags(d)).tocsc()


def _direct_solver(a, dim: int):
    """(solve function, name) of the fastest sparse direct solver here for SPD `a` (CSC):
    MKL PARDISO (as `femheat.linear` runs it, on as many threads), else CHOLMOD, else
    SuperLU."""
    import scipy.sparse as sp

    from .linear import PardisoFactor, pardiso_available, solver_threads

    if pardiso_available():
        upper = sp.triu(a, format="csr")
        upper.sort_indices()
        threads = solver_threads(a.shape[0], dim)
        factor = PardisoFactor(upper, threads)
        factor.factor(upper.data)
        return factor.solve, "PARDISO" if threads == 1 else f"PARDISO, {threads} threads"
    try:
        from sksparse.cholmod import cholesky

        return cholesky(a), "CHOLMOD"
    except ImportError:
        from scipy.sparse.linalg import splu

        lu = splu(
            a,
            permc_spec="MMD_AT_PLUS_A",
            diag_pivot_thresh=0.0,
            options={"SymmetricMode": True},
        )
        return lu.solve, "SuperLU"


def _floor(problem, result, times) -> dict:
    """Factorise the final stage matrix and time one triangular-solve pair."""
    import numpy as np
    from threadpoolctl import threadpool_limits

    a = _final_matrix(problem, result, times)
    b = np.random.default_rng(0).standard_normal(a.shape[0])
    with threadpool_limits(limits=1, user_api="blas"):
        start = time.perf_counter()
        solve, method = _direct_solver(a, problem.mesh.dim)
        factor_s = time.perf_counter() - start
        best = math.inf
        for _ in range(5):
            start = time.perf_counter()
            solve(b)
            best = min(best, time.perf_counter() - start)
    return {"floor_method": method, "floor_factor_s": factor_s, "floor_solve_s": best}


def measure(spec: Spec, started: float | None = None) -> Row:
    """Run one case in this process and measure it (see the module docstring).

    Args:
        spec: the case and options.
        started: `time.time()` when the process was started (default: now).

    Returns:
        The row; peak memory is this process's, so call it in a fresh process.
    """
    cwd = Path.cwd()
    try:
        return _measure(spec, time.time() if started is None else started)
    finally:
        os.chdir(cwd)  # _load_case moves to the case file's folder


def _measure(spec: Spec, started: float) -> Row:
    from .api import Results, recorder_for
    from .geometry import resolve_paths
    from .mesh import mesh_part
    from .problem import build_problem
    from .run import run_problem

    case, text = _load_case(spec)
    # the libraries every run loads, so that "base" is the memory before any mesh exists
    import gmsh  # noqa: F401
    import scipy.sparse.linalg  # noqa: F401
    import skfem  # noqa: F401

    if case.part.model == "solid":
        import pyamg  # noqa: F401
    from .linear import pardiso_available

    pardiso_available()  # loads the MKL runtime when it is there
    base_mb = _maxrss_mb()
    out: dict = {"name": spec.name, "label": spec.label, "quick": spec.quick}
    out["mesh_size"] = spec.mesh_size
    out["base_mb"] = base_mb

    t = time.perf_counter()
    params = resolve_paths(case.part.shape, case.part.params, case.base_dir)
    m = case.mesh
    mesh = mesh_part(
        case.part.shape, params, case.part.model, m.size, case.base_dir, m.refine, m.corner_size
    )
    out.update(mesh_s=time.perf_counter() - t, nodes=mesh.nodes, cells=int(mesh.cells.shape[0]))
    out["dim"] = mesh.dim
    if out["mesh_size"] is None:
        out["mesh_size"] = float(mesh.size)
    _emit(phase="meshed", **out)

    t = time.perf_counter()
    problem = build_problem(case, mesh=mesh)
    out["assembly_s"] = time.perf_counter() - t
    _emit(phase="assembled", assembly_s=out["assembly_s"])

    with tempfile.TemporaryDirectory(prefix="femheat_bench_") as folder:
        recorder = recorder_for(problem, case.output, Path(folder))
        last = _LastStep()
        t = time.perf_counter()
        result = run_problem(problem, observers=[recorder, last])
        out["march_s"] = time.perf_counter() - t
        s = result.stats
        out.update(
            method=s.linear_method,
            builds=s.factorizations,
            steps=s.steps,
            rejected=s.rejected,
            newton=s.newton_iterations,
            solves=s.linear_solves,
            cg_iterations=s.linear_iterations,
            run_status=result.status,
        )
        tw = result.target
        out["target_s"] = float(tw.time) if tw is not None and tw.reached else None
        _emit(phase="marched", **{k: out[k] for k in ("march_s", "steps", "run_status")})
        t = time.perf_counter()
        recorder.finish()
        Results(result, recorder, case, text).save(folder)
        out["output_s"] = time.perf_counter() - t
    out["total_s"] = time.time() - started
    out["peak_mb"] = _maxrss_mb()
    out["status"] = "ok"
    _emit(phase="measured", **out)

    if not spec.floor:
        out["floor_note"] = "not measured"
    elif mesh.nodes > spec.floor_max_nodes:
        out["floor_note"] = f"not measured: over {spec.floor_max_nodes} nodes"
    elif len(last.times) < 2:
        out["floor_note"] = "not measured: no step"
    else:
        try:
            out.update(_floor(problem, result, last.times))
        except (MemoryError, AttributeError, TypeError, ValueError, RuntimeError) as exc:
            out["floor_note"] = f"not measured: {type(exc).__name__}: {exc}"[:160]
    return Row.from_dict(out)


def _child(argv: list[str]) -> int:
    started = float(argv[1]) if len(argv) > 1 else time.time()
    spec = Spec(**json.loads(argv[0]))
    row = measure(spec, started)
    _emit(phase="done", **asdict(row))
    return 0


# --- the parent -------------------------------------------------------------------------------


def _peak_kb(pid: int) -> int | None:
    """VmHWM (peak resident set) of a running process, KiB (Linux)."""
    try:
        with open(f"/proc/{pid}/status", encoding="ascii") as f:
            for line in f:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1])
    except (OSError, ValueError):
        return None
    return None


def _reader(stream, sink: list) -> None:
    for line in stream:
        sink.append(line)


def _busy_cpu_s() -> float | None:
    """CPU time spent by the whole machine since boot, outside idle and iowait, s (Linux)."""
    try:
        with open("/proc/stat", encoding="ascii") as f:
            ticks = [int(x) for x in f.readline().split()[1:9]]
    except (OSError, ValueError):
        return None
    user, nice, system, _idle, _iowait, irq, softirq, steal = ticks
    return (user + nice + system + irq + softirq + steal) / os.sysconf("SC_CLK_TCK")


def _children_cpu_s() -> float:
    import resource

    r = resource.getrusage(resource.RUSAGE_CHILDREN)
    return r.ru_utime + r.ru_stime


def run_case(spec: Spec, timeout_s: float = DEFAULT_TIMEOUT_MIN * 60) -> Row:
    """Run `spec` in a fresh Python process and collect its row.

    A case that does not finish within `timeout_s` is stopped; its row then says so and keeps
    what was measured before (nodes, mesh time, the peak memory seen from outside).
    """
    busy0, own0 = _busy_cpu_s(), _children_cpu_s()
    cmd = [sys.executable, "-m", "femheat.bench", "--child", json.dumps(asdict(spec))]
    started = time.time()
    proc = subprocess.Popen(
        [*cmd, repr(started)], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True
    )
    out_lines: list[str] = []
    err_lines: list[str] = []
    readers = [
        threading.Thread(target=_reader, args=(proc.stdout, out_lines), daemon=True),
        threading.Thread(target=_reader, args=(proc.stderr, err_lines), daemon=True),
    ]
    for r in readers:
        r.start()
    peak_kb, timed_out = 0, False
    while proc.poll() is None:
        peak_kb = max(peak_kb, _peak_kb(proc.pid) or 0)
        if time.time() - started > timeout_s:
            proc.kill()
            timed_out = True
            proc.wait()
            break
        time.sleep(0.5)
    wall = time.time() - started
    for r in readers:
        r.join(timeout=10)
    busy1, own = _busy_cpu_s(), _children_cpu_s() - own0
    others = None
    if busy0 is not None and busy1 is not None and wall > 0:
        others = max(0.0, (busy1 - busy0 - own) / wall)
    data: dict = {"name": spec.name, "label": spec.label, "quick": spec.quick}
    data["mesh_size"] = spec.mesh_size
    phase = "start"
    for line in out_lines:
        if line.startswith(_MARK):
            values = json.loads(line[len(_MARK) :])
            phase = values.pop("phase", phase)
            data.update(values)
    data["others"] = others
    if phase == "done" and proc.returncode == 0:
        return Row.from_dict(data)
    if phase in ("measured",):  # the run finished; the floor did not
        data["floor_note"] = "not measured: stopped" if timed_out else "not measured: failed"
        return Row.from_dict({**data, "status": "ok"})
    if peak_kb:
        data["peak_mb"] = peak_kb * 1024 / MB
    where = {"start": "before meshing was done", "meshed": "in assembly"}.get(phase, "in march")
    if phase == "march":
        where += f" (step {data.pop('steps', '?')} at t = {data.pop('t', float('nan')):.6g} s)"
    data["floor_note"] = "not measured: the case did not finish"
    if timed_out:
        note = f"stopped after {timeout_s / 60:g} min {where}"
        return Row.from_dict({**data, "status": "timeout", "note": note})
    rc = proc.returncode
    last = next((x.strip() for x in reversed(err_lines) if x.strip()), "")
    why = f"killed by signal {-rc}" if rc < 0 else f"exit code {rc}"
    if rc == -9:
        why += " (out of memory?)"
    return Row.from_dict({**data, "status": "failed", "note": f"{why} {where}: {last}"[:240]})


def fit_exponent(nodes, values) -> float | None:
    """p in value = c nodes^p, least squares on the logarithms (numpy.polyfit)."""
    import numpy as np

    pairs = [(n, v) for n, v in zip(nodes, values, strict=True) if n and v and v > 0]
    if len(pairs) < 3:
        return None
    x, y = np.log([p[0] for p in pairs]), np.log([p[1] for p in pairs])
    return float(np.polyfit(x, y, 1)[0])


# --- the text ---------------------------------------------------------------------------------


def _f(value, digits: int = 3, suffix: str = "") -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "-"
    if isinstance(value, int):
        return f"{value}{suffix}"
    return f"{value:.{digits}g}{suffix}"


def _t(value) -> str:
    """A wall time in s."""
    if value is None:
        return "-"
    return f"{value:.1f}" if value >= 10 else f"{value:.2f}"


def _versions() -> dict[str, str]:
    from importlib import metadata

    out = {"Python": platform.python_version()}
    for dist in ("numpy", "scipy", "scikit-fem", "gmsh", "pyamg", "mkl", "scikit-sparse"):
        try:
            out[dist] = metadata.version(dist)
        except metadata.PackageNotFoundError:
            out[dist] = "not installed"
    return out


def _cpu_model() -> str:
    """The CPU as /proc/cpuinfo names it, with family, model, clock and cache."""
    info: dict[str, str] = {}
    try:
        with open("/proc/cpuinfo", encoding="utf-8") as f:
            for line in f:
                if not line.strip():
                    break  # the first processor is enough
                key, _, value = line.partition(":")
                info[key.strip()] = value.strip()
    except OSError:
        return platform.processor() or platform.machine()
    name = info.get("model name", platform.machine())
    extra = [
        f"family {info['cpu family']} model {info['model']}" if "cpu family" in info else "",
        f"{float(info['cpu MHz']):.0f} MHz" if "cpu MHz" in info else "",
        f"{info['cache size']} cache" if "cache size" in info else "",
        "virtual machine" if "hypervisor" in info.get("flags", "").split() else "",
    ]
    extra = [x for x in extra if x]
    return f"{name} ({', '.join(extra)})" if extra else name


def _memory_gb() -> float | None:
    try:
        with open("/proc/meminfo", encoding="ascii") as f:
            for line in f:
                if line.startswith("MemTotal:"):
                    return int(line.split()[1]) * 1024 / 1e9
    except (OSError, ValueError):
        pass
    return None


def _blas() -> str:
    try:
        import numpy  # noqa: F401  (loads its BLAS)
        import scipy.sparse.linalg  # noqa: F401
        from threadpoolctl import threadpool_info

        libs = [
            f"{i.get('internal_api')} {i.get('version')} ({i.get('num_threads')} threads)"
            for i in threadpool_info()
            if i.get("user_api") == "blas"
        ]
        return "; ".join(sorted(set(libs))) or "unknown"
    except ImportError:
        return "unknown"


def _source_state() -> str:
    """The femheat source measured: git commit and the files changed since, if any."""
    root = Path(__file__).resolve().parents[1]
    try:
        head = subprocess.run(
            ["git", "-C", str(root), "rev-parse", "--short", "HEAD"],
            capture_output=True,
            text=True,
            timeout=10,
        )
        changed = subprocess.run(
            ["git", "-C", str(root), "status", "--porcelain", "--", "femheat"],
            capture_output=True,
            text=True,
            timeout=10,
        )
    except (OSError, subprocess.SubprocessError):
        return "unknown (no git)"
    if head.returncode != 0:
        return "unknown (not a git checkout)"
    files = sorted(line[3:] for line in changed.stdout.splitlines() if line.strip())
    if not files:
        return f"commit {head.stdout.strip()}"
    return f"commit {head.stdout.strip()} with uncommitted changes in {', '.join(files)}"


def machine_lines() -> list[str]:
    """Markdown bullet lines describing this machine and the library versions."""
    cores = os.cpu_count()
    usable = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else cores
    mem = _memory_gb()
    v = _versions()
    libs = ", ".join(f"{k} {val}" for k, val in v.items() if k != "Python")
    return [
        f"- CPU: {_cpu_model()}; {cores} logical cores ({usable} usable by this process)",
        f"- memory: {_f(mem, 3)} GB; OS: {platform.system()} {platform.release()}",
        f"- Python {v['Python']}; {libs}",
        f"- BLAS: {_blas()}",
        f"- femheat source: {_source_state()}",
    ]


_TABLE_HEAD = (
    "| case | status | nodes | mesh s | assembly s | march s | output s | total s | peak MB "
    "| method | builds | steps acc/rej | Newton | solves | CG iter | target time s | others |",
    "| --- | --- | --- | --- | --- | --- | --- | --- | --- | --- | --- | --- | --- | --- | --- "
    "| --- | --- |",
)


def _row_line(r: Row) -> str:
    steps = f"{r.steps}/{r.rejected}" if r.steps is not None else "-"
    status = r.status if not r.note else f"{r.status}: {r.note}"
    target = _t(r.target_s) if r.target_s is not None else (r.run_status or "-")
    return (
        f"| {r.label or r.name} | {status} | {_f(r.nodes)} | {_t(r.mesh_s)} | {_t(r.assembly_s)} "
        f"| {_t(r.march_s)} | {_t(r.output_s)} | {_t(r.total_s)} | {_f(r.peak_mb, 4)} "
        f"| {r.method or '-'} | {_f(r.builds)} | {steps} | {_f(r.newton)} | {_f(r.solves)} "
        f"| {_f(r.cg_iterations)} | {target} | {'-' if r.others is None else f'{r.others:.2f}'} |"
    )


def _print_row(r: Row) -> None:
    print(_TABLE_HEAD[0])
    print(_row_line(r))
    if r.floor_solve_s is not None:
        print(
            f"  floor ({r.floor_method}): factorisation {_t(r.floor_factor_s)} s, one solve "
            f"{1000 * r.floor_solve_s:.2f} ms x {r.steps} accepted steps x "
            f"{r.solves_per_step:.2f} solves per step = {_t(r.floor_s)} s; "
            f"march {_t(r.march_s)} s = {r.floor_ratio:.1f} x the floor"
        )
    elif r.floor_note:
        print(f"  floor: {r.floor_note}")
    sys.stdout.flush()


def _verdict(ok: bool | None) -> str:
    return {True: "met", False: "not met", None: "not run"}[ok]


def _targets(rows: dict[str, Row], quick: bool) -> list[str]:
    """Markdown table lines of the issue's targets, each marked met / not met."""
    lines = [
        "| target | limit | measured | verdict |",
        "| --- | --- | --- | --- |",
    ]

    def value(name, attr):
        r = rows.get(name)
        return None if r is None or r.status != "ok" else getattr(r, attr)

    def add(text, limit, measured, ok):
        if quick:
            verdict = "n/a (quick sizes)"
        else:
            verdict = _verdict(ok)
        lines.append(f"| {text} | {limit} | {measured} | {verdict} |")

    def timed(name, text, limit_s, strict=False):
        r = rows.get(name)
        v = value(name, "total_s")
        if v is None:
            shown = r.status + (f" ({r.note})" if r.note else "") if r is not None else "not run"
            ok = None if r is None or r.status == "not run" else False
            add(text, f"{'<' if strict else '<='} {limit_s:g} s", shown, ok)
        else:
            ok = v < limit_s if strict else v <= limit_s
            add(text, f"{'<' if strict else '<='} {limit_s:g} s", f"{_t(v)} s", ok)

    timed("a_demo", "(a) demo, end to end", 15, strict=True)
    timed("b_angle_2d", "(b) 2D angle 100k nodes, end to end", 10)
    steps = value("b_angle_2d", "steps")
    add(
        "(b) accepted steps (the 0.5 % accuracy part is not measured here)",
        "<= 80",
        _f(steps),
        None if steps is None else steps <= 80,
    )
    timed("c_angle_3d", "(c) 3D angle 200k nodes, end to end", 60)
    r = rows.get("d_angle_3d_large")
    if r is None or r.status == "not run":
        add("(d) 3D angle 1M nodes completes within 12 GB", "12000 MB", "not run", None)
    elif r.status == "ok":
        add(
            "(d) 3D angle 1M nodes completes within 12 GB",
            "12000 MB",
            f"completed, peak {_f(r.peak_mb, 4)} MB",
            r.peak_mb is not None and r.peak_mb <= 12000,
        )
    else:
        seen = f"; peak seen {_f(r.peak_mb, 4)} MB" if r.peak_mb else ""
        add(
            "(d) 3D angle 1M nodes completes within 12 GB",
            "12000 MB",
            f"did not complete: {r.note}{seen}",
            False,
        )
    for name, r in rows.items():
        if r.floor_ratio is not None:
            add(
                f"{r.label or name}: march within 2x the triangular-solve floor",
                "<= 2",
                f"{r.floor_ratio:.1f} x",
                r.floor_ratio <= 2.0,
            )
    return lines


def _floor_lines(rows: list[Row]) -> list[str]:
    lines = [
        "| case | solver | factorisation s | one solve ms | accepted steps | solves per step "
        "| floor s | march s | march / floor |",
        "| --- | --- | --- | --- | --- | --- | --- | --- | --- |",
    ]
    for r in rows:
        if r.floor_solve_s is None:
            lines.append(
                f"| {r.label or r.name} | {r.floor_note or 'not measured'} "
                "| - | - | - | - | - | - | - |"
            )
            continue
        lines.append(
            f"| {r.label or r.name} | {r.floor_method} | {_t(r.floor_factor_s)} "
            f"| {1000 * r.floor_solve_s:.2f} | {r.steps} | {r.solves_per_step:.2f} "
            f"| {_t(r.floor_s)} | {_t(r.march_s)} | {r.floor_ratio:.1f} |"
        )
    return lines


_SCALED = (
    ("build (mesh + assembly)", "build_s"),
    ("mesh", "mesh_s"),
    ("assembly", "assembly_s"),
    ("march", "march_s"),
    ("march per accepted step", "_march_per_step"),
    ("peak memory above base", "_memory_above_base"),
    ("peak memory", "peak_mb"),
)


def _scaled_value(r: Row, attr: str):
    if attr == "_march_per_step":
        return r.march_s / r.steps if r.march_s is not None and r.steps else None
    if attr == "_memory_above_base":
        if r.peak_mb is None or r.base_mb is None:
            return None
        return r.peak_mb - r.base_mb
    return getattr(r, attr)


def scaling_lines(series: list[tuple[str, list[Row]]]) -> list[str]:
    """Markdown for the scaling note: a table per series and the fitted exponents."""
    lines = []
    for title, rows in series:
        lines += [
            f"### {title}",
            "",
            "| nodes | element size mm | mesh s | assembly s | march s | steps | builds "
            "| march per step ms | peak MB | base MB | others | status |",
            "| --- | --- | --- | --- | --- | --- | --- | --- | --- | --- | --- | --- |",
        ]
        for r in rows:
            per = _scaled_value(r, "_march_per_step")
            size = f"{1000 * r.mesh_size:.3g}" if r.mesh_size else "-"
            status = r.status if not r.note else f"{r.status}: {r.note}"
            lines.append(
                f"| {_f(r.nodes)} | {size} | {_t(r.mesh_s)} | {_t(r.assembly_s)} "
                f"| {_t(r.march_s)} | {_f(r.steps)} | {_f(r.builds)} "
                f"| {'-' if per is None else f'{1000 * per:.0f}'} "
                f"| {_f(r.peak_mb, 4)} | {_f(r.base_mb, 4)} | {_f(r.others, 2)} | {status} |"
            )
        ok = [r for r in rows if r.status == "ok"]
        nodes = [r.nodes for r in ok]
        lines += ["", "Fitted exponent p in quantity = c nodes^p (least squares on the logs):", ""]
        lines += ["| quantity | exponent p |", "| --- | --- |"]
        for label, attr in _SCALED:
            p = fit_exponent(nodes, [_scaled_value(r, attr) for r in ok])
            lines.append(f"| {label} | {'-' if p is None else f'{p:.2f}'} |")
        lines.append("")
    return lines


def results_text(
    rows: list[Row],
    machine: list[str],
    *,
    quick: bool,
    scaling: list[str] | None,
    note: str = "",
    command: str = "python -m femheat.bench --scaling --write",
    date: str = "",
    explanation: str = "",
) -> str:
    """The text of ``benchmarks/RESULTS.md``.

    `explanation`: markdown placed after the targets table (``benchmarks/TARGETS.md``: which
    targets are not met, why, and what it would take).
    """
    from . import __version__

    today = date or datetime.date.today().isoformat()
    others = [r.others for r in rows if r.others is not None]
    cores = os.cpu_count() or 1
    busy = ""
    if others and max(others) > 0.25:
        busy = (
            f"The machine was shared and busy while these figures were taken: other processes "
            f"kept on average {min(others):.2f} to {max(others):.2f} of its {cores} cores busy "
            "during the cases (the `others` column), so wall times are longer, and vary more, "
            "than on an idle machine."
        )
    parts = [
        "# Benchmark results",
        "",
        f"Generated by `{command}` (femheat {__version__}, {today})"
        + (" with `--quick` (reduced sizes: the targets do not apply)." if quick else "."),
        "Each case runs in a fresh process; see `benchmarks/README.md` for what each column "
        "measures. Benchmarks are not tests: nothing here is asserted by `pytest`.",
        "",
        "## Machine",
        "",
        *machine,
        "",
    ]
    if busy or note:
        parts += [" ".join(x for x in (busy, note) if x), ""]
    parts += [
        "## Cases",
        "",
        "Times are wall times in s; memory in MB (1e6 bytes), the peak resident set of the "
        "case's own process. Builds are preconditioner builds (factorisations or multigrid "
        "hierarchies); steps are accepted/rejected; the target time is the simulated time at "
        "which the whole part reached the target; others is the mean number of cores other "
        "processes kept busy during the case.",
        "",
        *_TABLE_HEAD,
        *(_row_line(r) for r in rows),
        "",
        "## Targets (issue 7)",
        "",
        *_targets({r.name: r for r in rows}, quick),
        "",
        *([explanation.strip(), ""] if explanation.strip() else []),
        "## Triangular-solve floor",
        "",
        "The final stage matrix K + diag(d) factorised once with a sparse direct solver; one "
        "solve is one forward and backward triangular solve (best of five, on the threads the "
        "march gives the solver). "
        "Floor = accepted steps x linear solves per accepted step x one solve. March / floor "
        "is the factor by which the march (Newton residuals, conjugate-gradient iterations, "
        "preconditioner builds, watchers) exceeds it. Where the march took the multigrid path, "
        "the floor still is that of the direct factorisation, as issue 7 defines it.",
        "",
        *_floor_lines(rows),
        "",
    ]
    if scaling is not None:
        parts += [
            "## Scaling",
            "",
            "Each size runs the case to its target in a fresh process (no floor). The number of "
            "accepted steps changes with the mesh, so march time per accepted step is given "
            "too; base is the memory after the imports, before meshing.",
            "",
            *scaling,
        ]
    parts.append("")
    return "\n".join(parts)


# --- the command ------------------------------------------------------------------------------


def _specs(args) -> list[Spec]:
    specs = []
    for c in CASES:
        if args.only and args.only.lower() not in c.name.lower():
            continue
        source = "demo" if c.source == "demo" else str(CASES_DIR / c.source)
        size = c.quick_size if args.quick else None
        specs.append(
            Spec(c.name, c.label, source, size, not args.no_floor, args.floor_max_nodes, args.quick)
        )
    for path in args.case or ():
        p = Path(path).resolve()
        specs.append(Spec(p.stem, p.stem, str(p), None, not args.no_floor, args.floor_max_nodes))
    return specs


def _timeout_min(name: str, given: float | None) -> float:
    """Minutes a case may run: `given` (``--timeout``), else its own default."""
    return given if given is not None else CASE_TIMEOUT_MIN.get(name, DEFAULT_TIMEOUT_MIN)


def _run_all(specs: list[Spec], timeout: float | None) -> list[Row]:
    rows = []
    for spec in specs:
        timeout_min = _timeout_min(spec.name, timeout)
        print(f"\n{spec.label}: running (timeout {timeout_min:g} min)", flush=True)
        row = run_case(spec, timeout_min * 60)
        rows.append(row)
        _print_row(row)
    return rows


def _scaling_series(args, done: list[Row]) -> list[tuple[str, list[Row]]]:
    timeout = _timeout_min("scaling", args.timeout) * 60
    series = []
    for title, source, full, quick in _SCALING:
        rows = []
        for size in quick if args.quick else full:
            spec = Spec(f"scaling {size:g}", title, str(CASES_DIR / source), size, False)
            same = [
                r
                for r in done
                if r.status == "ok"
                and r.mesh_size is not None
                and math.isclose(r.mesh_size, size, rel_tol=1e-9)
                and r.dim == (2 if "2D" in title else 3)
            ]
            if same:
                row = replace(same[0], name=spec.name)
            else:
                row = run_case(spec, timeout)
            rows.append(row)
            print(
                f"  {title}: size {1000 * size:.3g} mm, {_f(row.nodes)} nodes: {row.status}, "
                f"build {_t(row.build_s)} s, march {_t(row.march_s)} s, peak "
                f"{_f(row.peak_mb, 4)} MB",
                flush=True,
            )
        series.append((title, rows))
    return series


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="python -m femheat.bench",
        description="run the benchmark cases (speed and memory) and optionally write "
        "benchmarks/RESULTS.md",
    )
    p.add_argument("--only", help="run only the cases whose name contains this text")
    p.add_argument("--quick", action="store_true", help="smaller meshes (checks the harness)")
    p.add_argument("--write", action="store_true", help="regenerate benchmarks/RESULTS.md")
    p.add_argument("--scaling", action="store_true", help="also measure time and memory growth")
    p.add_argument(
        "--timeout",
        type=float,
        default=None,
        help=f"minutes allowed per case before it is stopped (default {DEFAULT_TIMEOUT_MIN:g}; "
        + ", ".join(f"{k} {v:g}" for k, v in CASE_TIMEOUT_MIN.items())
        + ")",
    )
    p.add_argument("--case", action="append", help="also benchmark this case file (repeatable)")
    p.add_argument("--no-floor", action="store_true", help="skip the triangular-solve floor")
    p.add_argument(
        "--floor-max-nodes",
        type=int,
        default=DEFAULT_FLOOR_MAX_NODES,
        help="measure the floor only up to this many nodes",
    )
    p.add_argument("--note", default="", help="a sentence about the conditions, for RESULTS.md")
    p.add_argument("--out", type=Path, help="write the results here instead of benchmarks/")
    p.add_argument(
        "--rewrite",
        action="store_true",
        help="only regenerate RESULTS.md from the rows kept in results.json",
    )
    return p


def _load_json(path: Path) -> dict | None:
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None


def _series_from(data) -> list[tuple[str, list[Row]]] | None:
    if not data:
        return None
    return [(title, [Row.from_dict(r) for r in rows]) for title, rows in data]


def _text_from(data: dict) -> str:
    series = _series_from(data.get("scaling"))
    scaling = None if series is None else scaling_lines(series)
    if scaling is not None and data.get("scaling_from"):
        scaling = [f"Scaling figures from an earlier run ({data['scaling_from']}).", ""] + scaling
    return results_text(
        [Row.from_dict(r) for r in data["rows"]],
        data["machine"],
        quick=data["quick"],
        scaling=scaling,
        note=data.get("note", ""),
        command=data["command"],
        date=data.get("date", ""),
        explanation=_explanation(),
    )


def _explanation() -> str:
    """The text of ``benchmarks/TARGETS.md`` (why targets are not met), if there is one."""
    try:
        return (BENCH_DIR / "TARGETS.md").read_text(encoding="utf-8")
    except OSError:
        return ""


def _write(args, rows: list[Row], machine: list[str], series) -> None:
    """Write results.json (the raw rows) and RESULTS.md into the benchmarks folder."""
    from .output.files import atomic_write_text

    folder = args.out or BENCH_DIR
    folder.mkdir(parents=True, exist_ok=True)
    command = "python -m femheat.bench" + (" --quick" if args.quick else "")
    command += " --scaling --write" if args.scaling else " --write"
    data = {
        "command": command,
        "date": datetime.date.today().isoformat(),
        "quick": args.quick,
        "note": args.note,
        "machine": machine,
        "rows": [asdict(r) for r in rows],
        "scaling": None,
    }
    if series is not None:
        data["scaling"] = [(title, [asdict(r) for r in rs]) for title, rs in series]
    else:  # keep the scaling figures of an earlier --scaling run
        old = _load_json(folder / "results.json") or {}
        if old.get("scaling"):
            data["scaling"] = old["scaling"]
            data["scaling_from"] = old.get("scaling_from") or old.get("date", "unknown date")
    atomic_write_text(folder / "results.json", json.dumps(data, indent=1) + "\n")
    atomic_write_text(folder / "RESULTS.md", _text_from(data))
    print(f"\nwrote {folder / 'RESULTS.md'} and results.json")


def _rewrite(folder: Path) -> int:
    """RESULTS.md again from results.json, without running anything."""
    from .output.files import atomic_write_text

    data = _load_json(folder / "results.json")
    if data is None:
        print(f"no readable {folder / 'results.json'}: run with --write first", file=sys.stderr)
        return 2
    atomic_write_text(folder / "RESULTS.md", _text_from(data))
    print(f"wrote {folder / 'RESULTS.md'} from results.json")
    return 0


def main(argv: list[str] | None = None) -> int:
    """Entry point; returns 0 when every case ran (whatever its speed), 1 otherwise."""
    argv = sys.argv[1:] if argv is None else list(argv)
    if argv[:1] == ["--child"]:
        return _child(argv[1:])
    args = _parser().parse_args(argv)
    if args.rewrite:
        return _rewrite(args.out or BENCH_DIR)
    if args.write and (args.only or args.case):
        print("--write regenerates the whole table: leave out --only and --case", file=sys.stderr)
        return 2
    machine = machine_lines()
    print("\n".join(machine), flush=True)
    specs = _specs(args)
    last = [s for s in specs if s.name in _LAST]  # the longest, after everything else
    rows = _run_all([s for s in specs if s.name not in _LAST], args.timeout)
    series = None
    if args.scaling:
        print("\nscaling:", flush=True)
        series = _scaling_series(args, rows)
        print("\n".join(scaling_lines(series)))
    rows += _run_all(last, args.timeout)
    if args.write:
        _write(args, rows, machine, series)
    return 0 if all(r.status == "ok" for r in rows) else 1


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
