"""``freezeout plan``: the temperatures of the next run by an optimal-design criterion.

The whole job as one call, :func:`plan_temperatures`: the model (given levels or a fit's
JSON, :mod:`freezeout.api.plan_inputs`), the sensitivities d ln n / d theta of the fit's
internal parameters on a candidate grid evenly spaced in 1000/T, the exchange algorithm
(:mod:`freezeout.fitting.design`), and the predicted standard errors of the proposed plan
beside those of the usual plan (the same number of points evenly in 1000/T).
:func:`write_plan` writes plan.json, plan.csv and plan.png.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from freezeout.api.materials import load_material
from freezeout.api.plan_inputs import PlanModel, model_from_fit_json, model_from_levels
from freezeout.api.simulation import MAX_TEMPERATURE_K, check_statistics
from freezeout.errors import InputError

#: Schema of the plan JSON (bump when it changes shape).
PLAN_SCHEMA_VERSION = 1

#: Candidate temperatures, evenly spaced in 1000/T over the range (project choice).
CANDIDATES = 400

#: Largest point budget (half the candidates: a plan is a choice among them). [1]
MAX_POINTS = CANDIDATES // 2

#: Files :func:`write_plan` writes.
PLAN_FILES = ("plan.json", "plan.csv", "plan.png")


@dataclass(frozen=True)
class ParameterError:
    """Predicted standard error of one parameter under the proposed and the even plan.

    Concentrations are relative (sigma_N / N), energies in eV.
    """

    name: str
    value: float
    unit: str  # "cm^-3" or "eV" (of the value)
    error_unit: str  # "relative" or "eV"
    target: bool
    proposed: float
    even: float

    @property
    def ratio(self) -> float:
        """Proposed / even standard error (below 1: the proposed plan does better). [1]"""
        return self.proposed / self.even if self.even > 0 else math.nan

    def to_dict(self) -> dict:
        """JSON form (None for a non-finite number)."""
        def f(x):
            return float(x) if math.isfinite(x) else None
        return {"name": self.name, "value": self.value, "unit": self.unit,
                "target": self.target, "stderr_unit": self.error_unit,
                "stderr_proposed": f(self.proposed), "stderr_even": f(self.even),
                "ratio": f(self.ratio)}


@dataclass(frozen=True)
class PlanCurves:
    """What the figure draws: the model and the sensitivities on the candidate grid.

    Sensitivities are in public units: d ln n / d ln N for a concentration, d ln n / dE
    per meV for an energy.
    """

    temperature: Any  # (m,) [K]
    density: Any  # (m,) [cm^-3]
    sensitivity: dict  # public name -> (m,) array
    proposed_density: Any
    even_density: Any


@dataclass(frozen=True)
class PlanResult:
    """A proposed run plan and its predicted parameter errors beside the even plan's."""

    model: PlanModel
    t_range: tuple[float, float]
    points: int
    criterion: str
    relative_error: float
    targets: tuple[str, ...]
    proposed: tuple[float, ...]  # [K], ascending
    even: tuple[float, ...]  # [K], ascending
    errors: tuple[ParameterError, ...]
    design: Any  # freezeout.fitting.design.Design
    even_loss: float
    curves: PlanCurves = field(repr=False, compare=False, default=None)
    inputs: tuple[str, ...] = ()  # files read (the fit JSON, the material file)

    @property
    def efficiency(self) -> float:
        """How many times more points the even plan needs to match the proposed one.

        D: (det ratio of the targets' information)^(1/k); A: even trace / proposed trace
        (in the scaled parameters). For a linear model this is exact; here, predicted. [1]
        """
        loss, even = self.design.loss, self.even_loss
        if not (math.isfinite(loss) and math.isfinite(even)):
            return math.nan
        if self.criterion == "D":
            return math.exp((even - loss) / max(len(self.targets), 1))
        return even / loss

    def to_dict(self) -> dict:
        """The JSON document of ``freezeout plan --json`` (plan.json)."""
        m = self.model
        eff = self.efficiency
        return {
            "schema_version": PLAN_SCHEMA_VERSION,
            "material": m.material.name, "carrier": m.carrier, "statistics": m.statistics,
            "source": m.source, "degeneracy": m.degeneracy,
            "range_K": list(self.t_range), "points": self.points,
            "criterion": self.criterion, "relative_error": self.relative_error,
            "targets": list(self.targets), "held": list(m.held),
            "candidates": {"count": CANDIDATES, "spacing": "even in 1000/T",
                           "repeats": False},
            "proposed_K": list(self.proposed), "even_K": list(self.even),
            "parameters": [e.to_dict() for e in self.errors],
            "efficiency_vs_even": eff if math.isfinite(eff) else None,
            "design": self.design.to_dict(),
            "notes": list(m.notes),
        }


def _range(t_range, mat) -> tuple[float, float]:
    import numpy as np

    try:
        t_min, t_max = (float(x) for x in t_range)
    except (TypeError, ValueError):
        raise InputError(f"range {t_range!r}: give (TMIN, TMAX) in K") from None
    if not (math.isfinite(t_min) and math.isfinite(t_max)):
        raise InputError(f"range {t_min!r}:{t_max!r}: the temperatures must be finite")
    if not t_min < t_max:
        raise InputError(f"range {t_min:g}:{t_max:g} K: TMIN must be below TMAX")
    if not (t_min > 0 and t_max <= MAX_TEMPERATURE_K):
        raise InputError(f"range {t_min:g}:{t_max:g} K is outside the temperatures the model "
                         f"covers (above 0 K, at most {MAX_TEMPERATURE_K:g} K)")
    t = np.array([t_min, t_max, *np.linspace(t_min, t_max, 200)])
    closed = t[~(np.asarray(mat.band_gap(t), dtype=float) > 0)]
    if closed.size:
        raise InputError(f"range {t_min:g}:{t_max:g} K is outside the valid temperatures of "
                         f"{mat.name}: its band gap closes at {closed.min():.5g} K")
    return t_min, t_max


def _model(material, material_file, donors, acceptors, from_fit, statistics) -> PlanModel:
    if from_fit is not None:
        if donors or acceptors:
            raise InputError("give either levels (--donor/--acceptor) or --from-fit, not both")
        mat = (None if material is None and material_file is None
               else load_material(material, material_file))
        model = model_from_fit_json(from_fit, mat)
        if statistics is not None and check_statistics(statistics) != model.statistics:
            raise InputError(f"the fit used {model.statistics} statistics; the plan uses the "
                             f"fit's model (leave out --statistics)", file=str(from_fit))
        return model
    return model_from_levels(load_material(material, material_file), donors, acceptors,
                             check_statistics(statistics or "fermi-dirac"))


def _targets(targets, names: list[str], held: tuple[str, ...]) -> tuple[str, ...]:
    if not targets:
        return tuple(n for n in names if n not in held)
    out = []
    for t in targets:
        t = str(t).strip()
        if t in held:
            raise InputError(f"target {t!r} was held fixed by the fit: it is known, not "
                             "measured; the free parameters are "
                             f"{', '.join(n for n in names if n not in held)}")
        if t not in names:
            raise InputError(f"unknown target {t!r}; this model's parameters are "
                             f"{', '.join(names)}")
        if t not in out:
            out.append(t)
    return tuple(out)


def plan_temperatures(
    *, material: str | None = None, material_file: str | Path | None = None,
    donors: Sequence = (), acceptors: Sequence = (), from_fit: str | Path | None = None,
    statistics: str | None = None, t_range=(20.0, 400.0), points: int = 15,
    targets: Sequence[str] | None = None, criterion: str = "D", error: float = 0.02,
) -> PlanResult:
    """Propose the temperatures of the next run by an optimal-design criterion.

    Parameters
    ----------
    material, material_file
        Host (library name, default Si, or TOML file); with ``from_fit``, overrides the
        fit's material.
    donors, acceptors
        Levels ``(concentration [cm^-3], energy [eV] or None, degeneracy or None)``, as
        :func:`freezeout.api.simulate` takes them; or ``from_fit``.
    from_fit
        A ``freezeout fit --json`` document: its material, levels, carrier, statistics.
    statistics
        ``"fermi-dirac"`` (default) or ``"boltzmann"``; with ``from_fit`` the fit's.
    t_range
        (TMIN, TMAX) the cryostat reaches. [K]
    points
        Point budget N (at least the number of free parameters, at most 200).
    targets
        Public names of the parameters that matter (``N_D1``, ``E_D1``, ``N_A``...);
        default every free parameter.
    criterion
        ``"D"`` (max det of the targets' information) or ``"A"`` (min trace of their
        covariance, scaled by the even plan's).
    error
        Relative measurement error of n per point (0.02 for 2 %). [1]

    Raises
    ------
    InputError
        Bad levels or fit file, a range outside the material's valid temperatures, TMIN >=
        TMAX, N below the free parameter count, an unknown target or criterion.
    """
    import numpy as np

    from freezeout.fitting.design import (
        covariance,
        criterion_values,
        exchange_design,
        fisher_information,
        log_density_sensitivities,
    )
    from freezeout.fitting.model import CarrierModel
    from freezeout.fitting.parameters import to_internal
    from freezeout.physics.simulation import temperature_grid

    model = _model(material, material_file, donors, acceptors, from_fit, statistics)
    mat = model.material
    crit = str(criterion).strip().upper()
    if crit not in ("D", "A"):
        raise InputError(f"unknown criterion {criterion!r}; valid: D, A")
    err = float(error)
    if not (math.isfinite(err) and 0 < err < 1):
        raise InputError(f"measurement error {error!r} must be above 0 and below 1 (100 %)")
    t_min, t_max = _range(t_range, mat)
    gap = float(mat.band_gap(t_min))
    names = list(model.values)
    internal = dict(to_internal(k, v, gap) for k, v in model.values.items())
    free_public = [n for n in names if n not in model.held]
    free = [f"log10_{n}" if n.startswith("N_") else n for n in free_public]
    tgt = _targets(targets, names, model.held)
    if isinstance(points, bool) or not isinstance(points, int | np.integer):
        raise InputError(f"points {points!r} must be a whole number")
    if not len(free) <= points <= MAX_POINTS:
        raise InputError(f"points {points}: need at least the {len(free)} free parameters "
                         f"({', '.join(free_public)}) and at most {MAX_POINTS}")
    cand = np.sort(1000.0 / np.linspace(1000.0 / t_max, 1000.0 / t_min, CANDIDATES))
    even = temperature_grid(t_min, t_max, int(points))
    cm = CarrierModel(mat, np.concatenate([cand, even]), model.carrier, model.n_levels,
                      model.compensated, model.statistics, model.degeneracy)
    try:
        with np.errstate(all="ignore"):
            ln_n, jac = log_density_sensitivities(cm, internal, free)
    except (FloatingPointError, RuntimeError, ValueError) as exc:
        raise InputError(f"the carrier model cannot be evaluated over {t_min:g}:{t_max:g} K "
                         f"for these levels ({exc})") from None
    j_cand, j_even = jac[:CANDIDATES], jac[CANDIDATES:]
    cov_even = covariance(fisher_information(j_even, err))
    se_even = np.sqrt(np.diag(cov_even))
    scale = se_even if np.all(np.isfinite(se_even)) else 1.0 / np.sqrt(
        np.mean(j_cand**2, axis=0))
    t_idx = np.array([free_public.index(t) for t in tgt])
    start = np.unique(np.round(np.linspace(0, CANDIDATES - 1, int(points))).astype(int))
    design = exchange_design(j_cand, start, t_idx, crit, scale=scale)
    idx = np.array(design.indices)
    se_prop = np.sqrt(np.diag(covariance(fisher_information(j_cand[idx], err))))
    even_loss = float(criterion_values(fisher_information(j_even * scale, 1.0), t_idx, crit))
    errors = []
    for i, name in enumerate(free_public):
        conc = name.startswith("N_")
        k = math.log(10.0) if conc else 1.0  # sigma(log10 N) -> sigma_N / N
        errors.append(ParameterError(name, float(model.values[name]),
                                     "cm^-3" if conc else "eV",
                                     "relative" if conc else "eV", name in tgt,
                                     float(k * se_prop[i]), float(k * se_even[i])))
    dens = np.exp(ln_n)
    sens = {n: j_cand[:, i] / (math.log(10.0) if n.startswith("N_") else 1e3)
            for i, n in enumerate(free_public)}
    curves = PlanCurves(cand, dens[:CANDIDATES], sens, dens[:CANDIDATES][idx],
                        dens[CANDIDATES:])
    inputs = tuple(str(p) for p in (from_fit, material_file) if p is not None)
    return PlanResult(model, (t_min, t_max), int(points), crit, err, tgt,
                      tuple(float(x) for x in cand[idx]), tuple(float(x) for x in even),
                      tuple(errors), design, even_loss, curves, inputs)


def plan_csv(result: PlanResult) -> str:
    """The proposed temperatures as CSV, with the model density at each (``# `` preamble)."""
    import numpy as np

    from freezeout.io.writers import format_csv

    meta = {"source": "freezeout plan", "material": result.model.material.name,
            "criterion": f"{result.criterion}-optimal for {', '.join(result.targets)}",
            "relative_error": f"{result.relative_error:g}",
            "range_K": f"{result.t_range[0]:g}:{result.t_range[1]:g}"}
    cols = {"T [K]": np.asarray(result.proposed),
            f"{result.model.carrier}_model [cm^-3]": np.asarray(result.curves.proposed_density)}
    return format_csv(cols, meta)


def write_plan(result: PlanResult, folder: str | Path) -> list[Path]:
    """Write plan.json, plan.csv and plan.png into ``folder`` (as a whole, atomically).

    Refuses (InputError, nothing written) a folder whose files would replace the fit file
    or the material file the plan read.
    """
    import json

    from freezeout.api.guard import refuse_overwrite
    from freezeout.io.atomic import atomic_folder, atomic_write_bytes, atomic_write_text
    from freezeout.reporting.figures import png_bytes
    from freezeout.reporting.plan_figure import plan_figure

    out = Path(folder)
    refuse_overwrite([out / n for n in PLAN_FILES], result.inputs)
    c = result.curves
    fig = plan_figure(c.temperature, c.density, result.proposed, c.proposed_density,
                      result.even, c.even_density, {n: c.sensitivity[n] for n in result.targets},
                      title=_title(result), carrier=result.model.carrier)
    with atomic_folder(out, owned=PLAN_FILES) as tmp:
        atomic_write_text(tmp / "plan.json", json.dumps(result.to_dict(), indent=2,
                                                        allow_nan=False) + "\n")
        atomic_write_text(tmp / "plan.csv", plan_csv(result))
        atomic_write_bytes(tmp / "plan.png", png_bytes(fig))
    return [out / n for n in PLAN_FILES]


def _title(result: PlanResult) -> str:
    m = result.model
    return (f"{m.material.name}, {result.criterion}-optimal plan of {result.points} points for "
            f"{', '.join(result.targets)} ({result.relative_error * 100:g} % per point)")
