"""Measure peak memory and step cost per node, the figures behind `femheat.resources`.

Each size runs in a fresh process: build the problem (mesh, model) of a planar rectangle
0.2 x 0.1 m or a solid box 0.2 x 0.1 x 0.1 m (temperature-dependent steel, furnace 900 C),
march 25 steps and report the node count, the peak resident memory (Linux VmHWM) and the
mean wall time of steps 6 to 25. Run from the project folder::

    python benchmarks/memory_per_node.py            # the default sizes, 2D and 3D
    python benchmarks/memory_per_node.py 3 0.004    # one dimension and element size (m)

Compare the slopes (kB per node between sizes) with `femheat.resources.BYTES_PER_NODE` and
the step costs with `femheat.resources.SECONDS_PER_NODE_STEP`.
"""

from __future__ import annotations

import json
import subprocess
import sys

CHILD = r"""
import json, sys, time
from femheat.case import parse_case
from femheat.problem import build_problem
from femheat.stepping import Marcher
dim, size = int(sys.argv[1]), float(sys.argv[2])
part = ({"model": "planar", "shape": "rectangle", "size": [0.2, 0.1]} if dim == 2
        else {"model": "solid", "shape": "box", "size": [0.2, 0.1, 0.1]})
data = {"part": part,
        "material": {"density": 7850, "conductivity": [[20, 53], [800, 27]],
                     "specific_heat": [[20, 440], [700, 1000], [900, 650]]},
        "furnace": {"temperature": 900, "htc": 25, "emissivity": 0.8},
        "initial": {"temperature": 20}, "target": {"temperature": 880},
        "mesh": {"size": size}}
p = build_problem(parse_case(data))
m = Marcher(p.model, p.initial, p.settings)
times, t = [], time.perf_counter()
for _ in m:
    now = time.perf_counter()
    times.append(now - t)
    t = now
    if len(times) >= 25:
        break
hwm = [x for x in open("/proc/self/status") if x.startswith("VmHWM:")][0]
late = times[5:] or times
print(json.dumps({"dim": dim, "size": size, "nodes": p.mesh.nodes,
                  "peak_MB": int(hwm.split()[1]) / 1024, "step_s": sum(late) / len(late),
                  "solver": m.stats.linear_method}))
"""

DEFAULT = [(2, 0.002), (2, 0.001), (2, 0.0005), (3, 0.01), (3, 0.006), (3, 0.004), (3, 0.003)]


def measure(dim: int, size: float) -> dict:
    out = subprocess.run(
        [sys.executable, "-c", CHILD, str(dim), str(size)],
        capture_output=True,
        text=True,
        check=True,
    )
    return json.loads(out.stdout.strip().splitlines()[-1])


def main(argv: list[str]) -> None:
    runs = [(int(argv[0]), float(argv[1]))] if len(argv) == 2 else DEFAULT
    last: dict[int, dict] = {}
    for dim, size in runs:
        r = measure(dim, size)
        slope = ""
        if dim in last and r["nodes"] > last[dim]["nodes"]:
            dm = r["peak_MB"] - last[dim]["peak_MB"]
            slope = f"  {1024 * dm / (r['nodes'] - last[dim]['nodes']):.1f} kB/node since last"
        us = 1e6 * r["step_s"] / r["nodes"]
        print(
            f"{dim}D size {size:g} m: {r['nodes']} nodes, peak {r['peak_MB']:.0f} MB, "
            f"step {r['step_s']:.3f} s ({us:.1f} us/node, {r['solver']}){slope}"
        )
        last[dim] = r


if __name__ == "__main__":
    main(sys.argv[1:])
