"""Choosing the number of majority levels, and whether a compensating species is present.

A level count given as ``"auto"`` makes :func:`select_model` fit candidate models with
:func:`freezeout.fitting.fit.fit_run` (1 to :data:`MAX_LEVELS` majority levels, each with
and without the fully ionized compensating species when that count is ``"auto"`` too) and
choose among them by the Bayesian information criterion, BIC = -2 ln L + k ln N (Schwarz
1978), with the candidates' own ``bic`` (:class:`freezeout.fitting.result.FitResult`: with
stated uncertainties chi^2 + k ln N, without N ln(chi^2/N) + k ln N). Every candidate fits
the same run with the same rule for the points used, so every BIC is over the same N points.

The rule (:data:`RULE`): a candidate is refused, with its reason, when its fit did not
converge, when the 95 % interval of one of its fitted concentrations reaches the floor of
the fit's range (:data:`freezeout.fitting.parameters.LOG10_CONCENTRATION_BOUNDS`, or is not
determined), or when the 95 % intervals of two of its level energies overlap (the data do
not tell the two levels apart). Of the candidates kept, the simplest (fewest free parameters,
ties by the lower BIC) whose BIC lies within :data:`DELTA_BIC` = 2 of the lowest is chosen: a
BIC difference below 2 is "not worth more than a bare mention" as evidence (Kass and Raftery
1995), so it does not pay for a parameter. The search stops adding majority levels once an
added level has failed :data:`STOP_AFTER` = 2 times in a row to lower the lowest BIC by more
than 2 (:data:`STOP_RULE`), which bounds the work at 8 candidate fits.

References
----------
G. Schwarz, "Estimating the dimension of a model", Ann. Statist. 6, 461 (1978).
R. E. Kass, A. E. Raftery, "Bayes factors", J. Am. Stat. Assoc. 90, 773 (1995) (from memory).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from freezeout.errors import FitError, InputError
from freezeout.fitting.fit import fit_run
from freezeout.fitting.parameters import LOG10_CONCENTRATION_BOUNDS
from freezeout.fitting.result import FitResult, LevelEstimate
from freezeout.numbers import finite_or_none
from freezeout.physics.materials import Material
from freezeout.records.run import RunData

#: The word that asks for a level count to be chosen from the data.
AUTO = "auto"

#: Most majority levels a candidate has (the most ``fit_run`` fits).
MAX_LEVELS = 4

#: BIC difference within which the simpler model is taken (Kass and Raftery 1995). [1]
DELTA_BIC = 2.0

#: Added levels in a row that fail to lower the BIC by more than DELTA_BIC before the
#: search stops (project choice, no source).
STOP_AFTER = 2

#: A concentration whose interval's lower end lies within this many decades of the floor of
#: the fit's range reaches it (the margin fit.py uses for a value at the floor). [decades]
FLOOR_MARGIN_DECADES = 0.05

RULE = ("Candidates are compared by BIC = -2 ln L + k ln N (Schwarz 1978), every one fitted "
        "to the same points. A candidate is refused when its fit did not converge, when the "
        "95 % interval of a fitted concentration reaches the floor of the fit's range "
        f"({10.0 ** LOG10_CONCENTRATION_BOUNDS[0]:g} cm^-3) or is not determined, or when "
        "the 95 % intervals of two of its level energies overlap. Of the candidates kept, the "
        f"simplest (fewest free parameters, ties by the lower BIC) within delta BIC "
        f"{DELTA_BIC:g} of the lowest BIC is chosen (a difference below {DELTA_BIC:g} is not "
        "worth more than a bare mention: Kass and Raftery 1995).")

STOP_RULE = (f"Majority levels are added one at a time, 1 to {MAX_LEVELS}; the search stops "
             f"once an added level has failed {STOP_AFTER} times in a row to lower the lowest "
             f"BIC of fewer levels by more than {DELTA_BIC:g}.")


def level_count(value, option: str) -> int | str:
    """A level count as given: a whole number, or ``"auto"`` (any case).

    Raises
    ------
    InputError
        Any other value, naming the option (e.g. ``--donors``).
    """
    if isinstance(value, str):
        word = value.strip().lower()
        if word == AUTO:
            return AUTO
        try:
            return int(word)
        except ValueError:
            raise InputError(f"{option}: expected a number of levels or 'auto', got "
                             f"{value!r}") from None
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        raise InputError(f"{option}: expected a number of levels or 'auto', got {value!r}")
    return int(value)


def candidate_label(carrier: str, levels: int, compensated: bool) -> str:
    """E.g. ``"2 donor levels + compensating acceptor"`` (roles swap for a p-type run)."""
    major, minor = ("donor", "acceptor") if carrier == "n" else ("acceptor", "donor")
    text = f"{levels} {major} level{'s' if levels != 1 else ''}"
    return text + (f" + compensating {minor}" if compensated else "")


@dataclass(frozen=True)
class Candidate:
    """One candidate model and what the rule made of it.

    Attributes
    ----------
    label
        E.g. ``"1 donor level + compensating acceptor"``.
    majority_levels
        Partially ionized majority levels. [1]
    compensated
        True with the fully ionized compensating species.
    chi2, aic, bic
        Its fit statistics (NaN when the fit failed). [1]
    n_parameters
        Free parameters (None when the fit failed).
    delta_bic
        BIC minus the lowest BIC of the kept candidates (NaN when undefined). [1]
    kept
        False when the rule refused it.
    reason
        Why it was refused, or what the rule made of it when kept.
    result
        Its FitResult, or None when the fit failed (not serialized).
    """

    label: str
    majority_levels: int
    compensated: bool
    chi2: float
    aic: float
    bic: float
    n_parameters: int | None
    delta_bic: float
    kept: bool
    reason: str
    result: FitResult | None = field(default=None, repr=False, compare=False)

    def to_dict(self) -> dict:
        """JSON form (one row of ``model_selection.candidates``)."""
        return {"label": self.label, "majority_levels": self.majority_levels,
                "compensated": self.compensated, "chi2": finite_or_none(self.chi2),
                "aic": finite_or_none(self.aic), "bic": finite_or_none(self.bic),
                "n_parameters": self.n_parameters,
                "delta_bic": finite_or_none(self.delta_bic), "kept": self.kept,
                "reason": self.reason}


@dataclass(frozen=True)
class ModelSelection:
    """The candidates fitted, the rule, and the one chosen.

    Attributes
    ----------
    rule
        The choice and refusal rule, in words (:data:`RULE`).
    stop_rule
        When the search stopped adding levels, in words (:data:`STOP_RULE`).
    stopped
        What happened in this search (the level counts tried, and why it stopped).
    chosen
        Label of the chosen candidate.
    candidates
        Every candidate, in the order fitted.
    """

    rule: str
    stop_rule: str
    stopped: str
    chosen: str
    candidates: tuple[Candidate, ...]

    def to_dict(self) -> dict:
        """JSON form: the ``model_selection`` member of the fit document."""
        return {"rule": self.rule, "stop_rule": self.stop_rule, "stopped": self.stopped,
                "chosen": self.chosen, "candidates": [c.to_dict() for c in self.candidates]}


def _reaches_floor(lower) -> bool:
    """Whether an interval's lower end is undetermined or at the concentration floor."""
    if lower is None or not np.isfinite(lower) or lower <= 0:
        return True
    return math.log10(lower) <= LOG10_CONCENTRATION_BOUNDS[0] + FLOOR_MARGIN_DECADES


def concentration_at_floor(levels: Sequence[LevelEstimate], fixed=()) -> str | None:
    """The refusal reason when a fitted concentration's 95 % interval reaches the floor.

    Held concentrations (names in ``fixed``) have no interval and are not checked. Where
    several reach the floor (a level the data do not need lets a real one trade places with
    it along the interval), the reason names the one of lowest fitted value, the species the
    data do not show, and says which others reach the floor with it.
    """
    hits = [lv for lv in levels if f"N_{lv.name}" not in fixed
            and _reaches_floor(lv.concentration.ci95[0])]
    if not hits:
        return None

    def fitted(lv) -> float:
        v = lv.concentration.value
        return float(v) if v is not None and np.isfinite(v) else math.inf

    emptiest = min(hits, key=fitted)
    lo, value = emptiest.concentration.ci95[0], fitted(emptiest)
    where = ("is not determined" if lo is None or not np.isfinite(lo)
             else f"reaches {lo:.3g} cm^-3, the floor of the fit's range")
    at = f" (fitted {value:.3g} cm^-3)" if np.isfinite(value) else ""
    reason = (f"the 95 % interval of N_{emptiest.name}{at} {where}: the data do not show "
              "that species")
    others = [f"N_{lv.name}" for lv in hits if lv is not emptiest]
    if others:
        reason += (f"; the interval{'s' if len(others) > 1 else ''} of "
                   f"{', '.join(others)} reach{'' if len(others) > 1 else 'es'} the floor "
                   "too, with that species in the model")
    return reason


def _bounds(est) -> tuple[float, float]:
    lo, hi = est.ci95
    lo = -math.inf if lo is None or not np.isfinite(lo) else float(lo)
    hi = math.inf if hi is None or not np.isfinite(hi) else float(hi)
    return lo, hi


def coinciding_energies(levels: Sequence[LevelEstimate], fixed=()) -> str | None:
    """The refusal reason when the 95 % intervals of two level energies overlap.

    A held energy (its name in ``fixed``) counts as a point; an undetermined interval end
    reaches as far as it can.
    """
    with_energy = [lv for lv in levels if lv.energy is not None]
    for i, a in enumerate(with_energy):
        for b in with_energy[i + 1:]:
            (alo, ahi), (blo, bhi) = ((lv.energy.value, lv.energy.value)
                                      if f"E_{lv.name}" in fixed else _bounds(lv.energy)
                                      for lv in (a, b))
            if max(alo, blo) <= min(ahi, bhi):
                return (f"the 95 % intervals of E_{a.name} ({a.energy.value:.4g} eV) and "
                        f"E_{b.name} ({b.energy.value:.4g} eV) overlap: the data do not tell "
                        "the two levels apart")
    return None


def converged(result: FitResult) -> bool:
    """Whether the local optimizer of the retained start reported convergence."""
    raw = result.raw
    if raw is None:
        return True
    return bool(getattr(raw, "success", True))


def refusal(result: FitResult) -> str | None:
    """Why the rule refuses a fitted candidate, or None when it is kept."""
    if not converged(result):
        return "the fit did not converge: " + (result.optimizer_message or "no message")
    return (concentration_at_floor(result.levels, result.fixed)
            or coinciding_energies(result.levels, result.fixed))


def choose(bic: Sequence[float], n_parameters: Sequence[int | None],
           kept: Sequence[bool]) -> int:
    """Index of the candidate the rule chooses among the kept ones (see :data:`RULE`).

    Raises
    ------
    ValueError
        When no candidate is kept with a finite BIC.
    """
    ok = [i for i, k in enumerate(kept) if k and np.isfinite(bic[i])]
    if not ok:
        raise ValueError("no candidate kept")
    best = min(bic[i] for i in ok)
    near = [i for i in ok if bic[i] - best <= DELTA_BIC]
    return min(near, key=lambda i: (n_parameters[i], bic[i]))


def _roles(carrier: str, donors, acceptors) -> tuple[object, object]:
    return (donors, acceptors) if carrier == "n" else (acceptors, donors)


def _fit_one(run, material, k, comp, options):
    """(result, reason, input_error) of one candidate fit."""
    n_major, n_minor = (k, comp) if run.carrier == "n" else (comp, k)
    try:
        return fit_run(run, material, donors=n_major, acceptors=n_minor, **options), None, None
    except InputError as exc:
        return None, f"not fitted: {exc.message}", exc
    except FitError as exc:
        return None, f"the fit failed: {exc.message}", None


def select_model(run: RunData, material: Material, *, donors: int | str = AUTO,
                 acceptors: int | str = 1, **options) -> FitResult:
    """Fit the candidate models of an ``"auto"`` level count and return the chosen fit.

    Parameters
    ----------
    run, material
        As for :func:`freezeout.fitting.fit.fit_run`.
    donors, acceptors
        Counts as for ``fit_run``, either or both ``"auto"``: the majority count auto tries
        1 to 4 levels, the minority count auto tries without and with the compensating
        species; a number is held.
    **options
        Passed to every ``fit_run`` (statistics, degeneracy, fix, bounds, include_flagged,
        provenance, profiles).

    Returns
    -------
    FitResult
        The chosen candidate's fit, with its :class:`ModelSelection` as ``model_selection``.

    Raises
    ------
    InputError
        When every candidate is bad input (the first one's message).
    FitError
        When the rule refuses every candidate (each reason is named).
    """
    donors = level_count(donors, "--donors")
    acceptors = level_count(acceptors, "--acceptors")
    major, minor = _roles(run.carrier, donors, acceptors)
    level_range = range(1, MAX_LEVELS + 1) if major == AUTO else [major]
    comps = (0, 1) if minor == AUTO else (minor,)
    rows: list[dict] = []
    errors: list[InputError] = []
    misses, tried = 0, []
    stopped = ""
    for k in level_range:
        tried.append(k)
        for comp in comps:
            result, reason, err = _fit_one(run, material, k, comp, options)
            if err is not None:
                errors.append(err)
            if result is not None:
                reason = refusal(result)
            rows.append({"k": k, "comp": bool(comp), "result": result, "reason": reason,
                         "fitted": result is not None and converged(result)})
        if major != AUTO or k == 1:
            continue
        this = [r["result"].bic for r in rows if r["k"] == k and r["fitted"]]
        fewer = [r["result"].bic for r in rows if r["k"] < k and r["fitted"]]
        if min(this, default=math.inf) < min(fewer, default=math.inf) - DELTA_BIC:
            misses = 0
        else:
            misses += 1
        if misses >= STOP_AFTER and k < MAX_LEVELS:
            stopped = (f"stopped after {k} levels: {k - 1} and {k} levels did not lower the "
                       f"BIC by more than {DELTA_BIC:g}")
            break
    if not stopped:
        stopped = (f"tried {tried[0]} to {tried[-1]} majority levels" if len(tried) > 1
                   else f"majority levels held at {tried[0]}")
    if errors and len(errors) == len(rows):
        raise errors[0]
    return _chosen(run.carrier, rows, stopped)


def _chosen(carrier: str, rows: list[dict], stopped: str) -> FitResult:
    """Apply the rule to the fitted rows; the chosen result with the record attached."""
    nan = math.nan
    bic = [r["result"].bic if r["result"] is not None else nan for r in rows]
    npar = [r["result"].n_parameters if r["result"] is not None else None for r in rows]
    kept = [r["result"] is not None and r["reason"] is None for r in rows]
    labels = [candidate_label(carrier, r["k"], r["comp"]) for r in rows]
    try:
        pick = choose(bic, npar, kept)
    except ValueError:
        reasons = "; ".join(f"{lab}: {r['reason']}" for lab, r in zip(labels, rows,
                                                                         strict=True))
        raise FitError("model selection: the rule refused every candidate model (" + reasons
                       + "); give the level counts as numbers to fit one anyway") from None
    best = min(b for b, k in zip(bic, kept, strict=True) if k and np.isfinite(b))
    candidates = []
    for i, (r, lab) in enumerate(zip(rows, labels, strict=True)):
        res = r["result"]
        if not kept[i]:
            note = r["reason"]
        elif i == pick:
            note = "chosen"
        elif bic[i] - best <= DELTA_BIC:
            note = f"within delta BIC {DELTA_BIC:g}, but not the simplest"
        else:
            note = f"kept; delta BIC above {DELTA_BIC:g}"
        candidates.append(Candidate(
            lab, r["k"], r["comp"], res.chi2 if res else nan, res.aic if res else nan,
            bic[i], npar[i], bic[i] - best if res else nan, kept[i], note, res))
    record = ModelSelection(RULE, STOP_RULE, stopped, labels[pick], tuple(candidates))
    return replace(rows[pick]["result"], model_selection=record)
