"""A plot of a library material: conductivity and specific heat against temperature (PNG)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..errors import CaseError

__all__ = ["plot_entry"]


def plot_entry(entry, path: Path, system: str = "si") -> Path:
    """Save k(T) and c(T) of a `femheat.library.Entry` over its valid range as a PNG.

    Args:
        entry: the library entry.
        path: the PNG file to write.
        system: "si", or "us" for a Fahrenheit temperature axis on top.

    Returns:
        The path written.

    Raises:
        CaseError: the file cannot be written.
    """
    from matplotlib.figure import Figure

    lo, hi = entry.valid_range
    knots = np.concatenate([entry.specific_heat.temperatures, entry.conductivity.temperatures])
    temps = np.unique(
        np.concatenate([np.linspace(lo, hi, 400), knots[(knots >= lo) & (knots <= hi)]])
    )
    fig = Figure(figsize=(7.5, 6.0))
    ax_k, ax_c = fig.subplots(2, 1, sharex=True)
    ax_k.plot(temps, entry.conductivity(temps), color="tab:blue")
    ax_k.set_ylabel("conductivity k, W/(m K)")
    ax_c.plot(temps, entry.specific_heat(temps), color="tab:red")
    ax_c.set_ylabel("specific heat c, J/(kg K)")
    ax_c.set_xlabel("temperature, C")
    for ax in (ax_k, ax_c):
        ax.grid(True, alpha=0.3)
    if system == "us":
        top = ax_k.secondary_xaxis(
            "top", functions=(lambda c: 1.8 * c + 32, lambda f: (f - 32) / 1.8)
        )
        top.set_xlabel("temperature, F")
    fig.suptitle(f"{entry.key}: {entry.name}", fontsize=10)
    fig.subplots_adjust(left=0.11, right=0.97, top=0.88 if system == "us" else 0.93, bottom=0.16)
    fig.text(0.01, 0.01, f"source: {entry.source}", fontsize=6, wrap=True)
    path = Path(path)
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fig.savefig(path, dpi=120)
    except OSError as exc:
        raise CaseError(
            "--plot",
            f"cannot write {str(path)!r} ({exc.strerror or exc})",
            "give a writable PNG path",
        ) from None
    return path
