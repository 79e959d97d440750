"""Several fits side by side: one comparison table and an overlay of their densities."""

from __future__ import annotations

import csv
import io
from collections.abc import Sequence
from pathlib import Path

import matplotlib

matplotlib.use("Agg")

import numpy as np  # noqa: E402

from freezeout.fitting.curves import model_curves  # noqa: E402
from freezeout.fitting.result import Estimate, FitResult  # noqa: E402
from freezeout.io.atomic import atomic_write_bytes, atomic_write_text  # noqa: E402
from freezeout.reporting.figures import INK, LEVEL_COLOURS, new_axes, png_bytes  # noqa: E402

#: The files :func:`write_comparison` writes.
COMPARISON_FILES = ("comparison.csv", "overlay.png")


def _cells(prefix: str, est: Estimate | None) -> dict:
    if est is None:
        return {f"{prefix}": None, f"{prefix}_stderr": None, f"{prefix}_ci95_low": None,
                f"{prefix}_ci95_high": None}
    return {prefix: est.value, f"{prefix}_stderr": est.stderr,
            f"{prefix}_ci95_low": est.ci95[0], f"{prefix}_ci95_high": est.ci95[1]}


def comparison_rows(results: Sequence[FitResult]) -> list[dict]:
    """One row per fit: the run, its type and host, every level, net doping, compensation.

    Columns are the union over the fits (a fit without a level has empty cells for it);
    concentrations in cm^-3, energies in eV.
    """
    rows = []
    for r in results:
        row = {"run": r.provenance.get("input"), "carrier": r.carrier,
               "material": r.material.name, "n_points": r.n_points,
               "reduced_chi2": r.reduced_chi2}
        for lv in r.levels:
            row.update(_cells(f"N_{lv.name}_cm3", lv.concentration))
            if lv.energy is not None:
                row.update(_cells(f"E_{lv.name}_eV", lv.energy))
        row.update(_cells("net_doping_cm3", r.net_doping))
        row.update(_cells("compensation_ratio", r.compensation_ratio))
        row["warnings"] = len(r.warnings)
        rows.append(row)
    return rows


def comparison_csv(results: Sequence[FitResult]) -> str:
    """:func:`comparison_rows` as CSV text (empty cells where a value is missing or NaN)."""
    rows = comparison_rows(results)
    names: list[str] = []
    for row in rows:
        names += [k for k in row if k not in names]
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(names)
    for row in rows:
        cells = []
        for k in names:
            v = row.get(k)
            if isinstance(v, float):
                v = "" if not np.isfinite(v) else repr(v)
            cells.append("" if v is None else v)
        w.writerow(cells)
    return buf.getvalue()


def overlay_axes(results: Sequence[FitResult], ax=None):
    """Every fit's measured majority density and model against 1000/T on one log axis.

    Returns the Axes. Each run has its own colour; points left out of its fit are hollow.
    """
    ax = new_axes(ax, (7.6, 4.8))
    for i, r in enumerate(results):
        col = LEVEL_COLOURS[i % len(LEVEL_COLOURS)] if i else INK
        d = r.data
        inv = 1000.0 / d.temperature
        used = np.asarray(d.used, dtype=bool)
        name = str(r.provenance.get("input") or f"run {i + 1}")
        ax.plot(inv[used], d.density[used], "o", ms=4, color=col, label=name)
        if np.any(~used):
            ax.plot(inv[~used], d.density[~used], "o", ms=4, mfc="white", color=col)
        c = model_curves(r)
        ax.plot(1000.0 / c.temperature, c.majority, "-", lw=1.4, color=col)
    ax.set_yscale("log")
    ax.set_xlabel("1000 / T [1/K]")
    ax.set_ylabel("majority carrier density [cm⁻³]")
    ax.set_title("measured (points) and fitted (lines)", loc="left", fontsize=10)
    ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False, fontsize=8)
    return ax


def write_comparison(results: Sequence[FitResult], folder: str | Path) -> dict[str, Path]:
    """Write comparison.csv and overlay.png into ``folder`` (each atomically)."""
    if not results:
        raise ValueError("no fits to compare")
    folder = Path(folder)
    csv_path = atomic_write_text(folder / "comparison.csv", comparison_csv(results))
    ax = overlay_axes(results)
    png = atomic_write_bytes(folder / "overlay.png", png_bytes(ax))
    ax.figure.clear()
    return {"comparison.csv": csv_path, "overlay.png": png}
