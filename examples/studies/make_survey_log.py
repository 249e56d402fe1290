"""Make the invented thermocouple log ``survey_log.csv`` for the calibration example.

Invented data, not a measurement: plate.toml run by femheat with h = 32 W/(m2 K), emissivity
0.78 and the furnace 10 min late, read every 5 min for 3 h, with Gaussian noise of 1.5 K and
rounded to 0.1 C. ``femheat fit plate.toml survey_log.csv --fit htc,emissivity,lag`` should
find those values within its intervals.

Run: ``python examples/studies/make_survey_log.py``.
"""

from __future__ import annotations

import tomllib
from pathlib import Path

import numpy as np

from femheat.study.fit import shift_rows, simulate_probes

HERE = Path(__file__).parent


def main() -> None:
    with open(HERE / "plate.toml", "rb") as f:
        table = tomllib.load(f)
    table["furnace"].update(htc=32.0, emissivity=0.78)
    table["furnace"]["temperature"] = shift_rows(table["furnace"]["temperature"], 600.0)
    times = np.arange(0.0, 3 * 3600 + 1, 300.0)
    sim = simulate_probes(table, HERE, times)
    rng = np.random.default_rng(20261202)
    lines = [
        "# INVENTED thermocouple log for the femheat calibration example (not a measurement).",
        "# Made by make_survey_log.py: plate.toml with h = 32 W/(m2 K), emissivity 0.78,",
        "# furnace 600 s late, noise 1.5 K. Times in s, temperatures in C.",
        "time_s," + ",".join(sim),
    ]
    noisy = {k: np.round(v + rng.normal(0.0, 1.5, v.size), 1) for k, v in sim.items()}
    for i, t in enumerate(times):
        lines.append(f"{t:g}," + ",".join(f"{noisy[k][i]:.1f}" for k in sim))
    (HERE / "survey_log.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")


if __name__ == "__main__":
    main()
