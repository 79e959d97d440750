"""Posterior sampling of a density fit's parameters with an affine-invariant ensemble MCMC.

The sampler is emcee's ensemble sampler (D. Foreman-Mackey, D. W. Hogg, D. Lang,
J. Goodman, "emcee: The MCMC Hammer", PASP 125, 306 (2013)), its walkers moved by a mixture
of the differential-evolution move (C. J. F. ter Braak, Stat. Comput. 16, 239 (2006); from
memory), 80 % of steps, and the affine-invariant stretch move (J. Goodman, J. Weare,
"Ensemble samplers with affine invariance", Commun. Appl. Math. Comput. Sci. 5, 65 (2010)),
20 %. Both moves are affine invariant; on the bundled silicon run the mixture's
integrated autocorrelation time is about 11 steps against 31 for the stretch move alone
(measured here, 64 walkers), so the same evaluations give three times the independent
samples (project choice). The walkers are evaluated together (``vectorize=True``): each
half-ensemble's proposals are one vectorized neutrality solve
(:meth:`freezeout.fitting.problem.Problem.batch_residuals`), warm-started from the fit's own
Fermi levels.

The log-posterior (likelihood, priors, starting ball) is
:mod:`freezeout.fitting.posterior_target`.

Burn-in rule (project choice, after emcee's documentation: discard a few autocorrelation
times): the first max(2 tau_max, 20 % of the steps) steps, at most half, are discarded;
tau is the integrated autocorrelation time (emcee's ``integrated_time``, Sokal's automatic
window) of the whole chain. A chain shorter than 50 tau is said to be so.
"""

from __future__ import annotations

import logging
import math
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from freezeout.errors import InputError
from freezeout.fitting.posterior_target import PosteriorTarget
from freezeout.fitting.result import FitResult
from freezeout.numbers import finite_or_none
from freezeout.records.run import RunData

#: What to install when emcee is missing.
INSTALL_HINT = "pip install freezeout[posterior]"
#: Default chain: steps per walker and walkers (64,000 evaluations, about 3 s on the
#: bundled silicon run on 2 cores; about 70 autocorrelation times kept).
DEFAULT_STEPS = 1000
DEFAULT_WALKERS = 64
#: Fewest steps a chain may be asked for (an autocorrelation estimate needs a few dozen).
MIN_STEPS = 20
#: Chains shorter than this many autocorrelation times are flagged (emcee's docs). [1]
TAU_FACTOR = 50

BURN_IN_RULE = ("the first max(2 tau_max, 20 % of the steps) steps of every walker, at most "
                "half, tau_max the longest integrated autocorrelation time of the chain")

_LN10 = math.log(10.0)

Progress = Callable[[int, int], None]


def require_sampler():
    """The emcee module, or an InputError saying how to install it."""
    try:
        import emcee
    except ImportError:
        raise InputError("--posterior needs the optional sampler emcee: "
                         f"{INSTALL_HINT}") from None
    return emcee


def check_request(carriers: str, mobility, steps: int, walkers: int = DEFAULT_WALKERS) -> None:
    """Refuse a posterior request this module cannot serve, before any fit.

    Raises
    ------
    InputError
        A two-carrier or joint mobility fit (only the density fit is sampled), too few
        steps or walkers, or emcee missing.
    """
    if carriers == "both" or mobility:
        raise InputError("--posterior samples the density fit only: it cannot be combined "
                         "with --carriers both or --mobility")
    if not (isinstance(steps, int | np.integer) and steps >= MIN_STEPS):
        raise InputError(f"--posterior-steps must be a whole number of at least {MIN_STEPS}, "
                         f"got {steps!r}")
    if not (isinstance(walkers, int | np.integer) and walkers >= 4 and walkers % 2 == 0):
        raise InputError(f"posterior walkers must be an even number of at least 4, got "
                         f"{walkers!r}")
    require_sampler()


@dataclass(frozen=True)
class ParameterPosterior:
    """Median and 95 % credible interval of one quantity, beside the fit's own.

    Attributes
    ----------
    name
        Public name (``N_D1``, ``E_D1``, ``N_A``, ``net_doping``, ``compensation_ratio``).
    unit
        ``"cm^-3"``, ``"eV"`` or ``""``.
    median, ci95
        Posterior median and its 2.5 % and 97.5 % quantiles (the unit's).
    fit_value, fit_ci95, fit_method
        The fit's value, 95 % interval and interval method (profile or Wald).
    """

    name: str
    unit: str
    median: float
    ci95: tuple[float, float]
    fit_value: float
    fit_ci95: tuple[float, float]
    fit_method: str

    def to_dict(self) -> dict:
        """JSON form."""
        return {"unit": self.unit, "median": finite_or_none(self.median),
                "ci95": [finite_or_none(x) for x in self.ci95],
                "fit": {"value": finite_or_none(self.fit_value),
                        "ci95": [finite_or_none(x) for x in self.fit_ci95],
                        "method": self.fit_method}}


@dataclass(frozen=True)
class Posterior:
    """The sampled posterior of a density fit and its summary.

    Attributes
    ----------
    parameters
        Per quantity (free parameters, then net doping and compensation ratio).
    sample_names
        Internal names of the sampled parameters (``log10_N_D1``, ``E_D1``...).
    samples
        Kept samples after burn-in, (walkers x kept steps, parameters), internal units
        (log10 cm^-3, eV); not serialized.
    walkers, steps, steps_requested, burn_in
        Walkers, steps done, steps asked for, steps discarded from every walker.
    acceptance_fraction
        Mean over walkers of the fraction of proposals accepted. [1]
    autocorr_time
        Integrated autocorrelation time per sampled parameter, public names. [steps]
    long_enough
        True when the kept chain is at least 50 tau_max long.
    interrupted
        True when sampling was stopped (Ctrl-C) before the steps asked for.
    likelihood, priors
        The likelihood used, and the prior range of every sampled parameter (public names).
    held
        Held parameters, public names and values.
    seed
        Seed of the starting ball and of the sampler.
    notes
        Plain statements about the chain (too short, interrupted, scale uncertainty).
    """

    parameters: tuple[ParameterPosterior, ...]
    sample_names: tuple[str, ...]
    samples: np.ndarray = field(repr=False, compare=False)
    walkers: int = 0
    steps: int = 0
    steps_requested: int = 0
    burn_in: int = 0
    acceptance_fraction: float = math.nan
    autocorr_time: dict = field(default_factory=dict)
    long_enough: bool = False
    interrupted: bool = False
    likelihood: str = ""
    priors: dict = field(default_factory=dict)
    held: dict = field(default_factory=dict)
    seed: int = 0
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict:
        """JSON form (the ``posterior`` block of the fit document)."""
        tau = [v for v in self.autocorr_time.values() if np.isfinite(v)]
        kept = self.walkers * max(self.steps - self.burn_in, 0)
        return {
            "sampler": ("emcee EnsembleSampler: differential-evolution (80 %) and stretch (20 %) "
                        "moves, walkers evaluated together"),
            "walkers": self.walkers, "steps": self.steps,
            "steps_requested": self.steps_requested, "burn_in_steps": self.burn_in,
            "burn_in_rule": BURN_IN_RULE, "samples_kept": kept,
            "model_evaluations": self.walkers * (self.steps + 1),
            "acceptance_fraction": finite_or_none(self.acceptance_fraction),
            "autocorr_time_steps": {k: finite_or_none(v)
                                    for k, v in self.autocorr_time.items()},
            "effective_samples": finite_or_none(kept / max(tau)) if tau else None,
            "longer_than_50_tau": self.long_enough,
            "interrupted": self.interrupted,
            "likelihood": self.likelihood,
            "priors": self.priors,
            "held": self.held,
            "seed": self.seed,
            "parameters": {p.name: p.to_dict() for p in self.parameters},
            "notes": list(self.notes),
        }


def _autocorr(emcee, chain: np.ndarray) -> np.ndarray:
    """Integrated autocorrelation time per parameter of a (steps, walkers, k) chain."""
    if chain.shape[0] < 4:
        return np.full(chain.shape[2], math.nan)
    log = logging.getLogger("emcee.autocorr")
    level = log.level
    log.setLevel(logging.ERROR)  # quiet=True logs its "chain too short" note: we state it
    try:
        return np.asarray(emcee.autocorr.integrated_time(chain, quiet=True), dtype=float)
    finally:
        log.setLevel(level)


def sample_posterior(result: FitResult, run: RunData | None = None, *,
                     steps: int = DEFAULT_STEPS, walkers: int = DEFAULT_WALKERS, seed: int = 0,
                     progress: Progress | None = None) -> Posterior:
    """Sample the posterior of a density fit's free parameters.

    Parameters
    ----------
    result
        A density-only fit (:func:`freezeout.fitting.fit.fit_run`).
    run
        The run it fitted (its temperature uncertainties, if any, enter the residuals as in
        the fit); None when it has none.
    steps, walkers
        Steps per walker and walkers (even, at least 4 and at least twice the parameters).
    seed
        Seed of the starting ball and of the sampler's moves.
    progress
        Called as ``progress(done, total)`` after every step; a KeyboardInterrupt raised
        there (or by Ctrl-C) stops the sampling and the steps done are summarised.

    Raises
    ------
    InputError
        emcee missing, a joint or two-carrier fit, nothing free to sample, bad counts.
    """
    check_request("both" if result.two_carrier is not None else "majority",
                  result.mobility, steps, walkers)
    emcee = require_sampler()
    target = PosteriorTarget(result, run)
    ndim = len(target.names)
    if ndim == 0:
        raise InputError("--posterior: every parameter is held; there is nothing to sample")
    if walkers < 2 * ndim:
        raise InputError(f"posterior walkers: {walkers} is fewer than twice the {ndim} free "
                         "parameters")
    rng = np.random.default_rng(seed)
    p0 = target.ball(result, walkers, rng)
    moves = [(emcee.moves.DEMove(), 0.8), (emcee.moves.StretchMove(), 0.2)]
    sampler = emcee.EnsembleSampler(walkers, ndim, target, vectorize=True, moves=moves)
    sampler.random_state = np.random.RandomState(seed).get_state()
    interrupted = False
    try:
        for done, _ in enumerate(sampler.sample(p0, iterations=steps), start=1):
            if progress is not None:
                progress(done, steps)
    except KeyboardInterrupt:
        interrupted = True
    return _summary(emcee, result, target, sampler, steps, seed, interrupted, rng)


def _summary(emcee, result: FitResult, target: PosteriorTarget, sampler, steps: int, seed: int,
             interrupted: bool, rng: np.random.Generator) -> Posterior:
    """Quantiles, autocorrelation and the chain's statements from what was sampled."""
    done = int(sampler.iteration)
    walkers = int(sampler.nwalkers)
    chain = sampler.get_chain() if done else np.zeros((0, walkers, len(target.names)))
    tau_all = _autocorr(emcee, chain)
    tau_max = float(np.nanmax(tau_all)) if np.isfinite(tau_all).any() else 0.0
    burn = min(max(math.ceil(2 * tau_max), done // 5), done // 2)
    kept = chain[burn:]
    tau = _autocorr(emcee, kept)
    flat = kept.reshape(-1, len(target.names)).copy()
    notes = []
    if interrupted:
        notes.append(f"sampling interrupted after {done} of {steps} steps: the summary is of "
                     "the steps done")
    finite_tau = tau[np.isfinite(tau)]
    long_enough = bool(finite_tau.size and kept.shape[0] >= TAU_FACTOR * finite_tau.max())
    if not long_enough:
        shown = f"{finite_tau.max():.3g}" if finite_tau.size else "not estimable"
        notes.append(f"the chain is shorter than {TAU_FACTOR} autocorrelation times "
                     f"({kept.shape[0]} steps kept, tau_max {shown} steps): the quantiles "
                     "are rough; ask for more steps (--posterior-steps)")
    scale = float(result.data.scale_uncertainty)
    if scale > 0 and flat.size:
        # a relative uncertainty common to every density moves the concentrations together,
        # as in the fit's intervals (fitting/summary.py): one shift per sample
        shift = rng.standard_normal(flat.shape[0]) * scale / _LN10
        for j, n in enumerate(target.names):
            if n.startswith("log10_"):
                flat[:, j] += shift
        notes.append(f"the {100 * scale:.2g} % uncertainty common to every point is added to "
                     "the sampled concentrations (one common shift per sample)")
    public = {n: n.removeprefix("log10_") for n in target.names}
    names = {public[n]: j for j, n in enumerate(target.names)}
    params = [_quantity(result, name, flat[:, j] if flat.size else None, target.names[j])
              for name, j in names.items()]
    params += _derived(result, target, flat)
    gap_hi = {public[n]: [float(10 ** b[0]), float(10 ** b[1])] if n.startswith("log10_")
              else [float(b[0]), float(b[1])] for n, b in zip(target.names, target.bounds,
                                                              strict=True)}
    priors = {k: {"flat_in": "log10" if k.startswith("N_") else "linear",
                  "range": v, "unit": "cm^-3" if k.startswith("N_") else "eV"}
              for k, v in gap_hi.items()}
    likelihood = ("ln L = -chi^2/(2 s) over the stated uncertainties, s = "
                  f"{target.unit:.4g} (the fit's variance inflation)" if target.weighted else
                  "ln L = -(N/2) ln(SSR): no stated uncertainties, the residual variance "
                  "integrated out under a 1/sigma prior")
    acc = sampler.acceptance_fraction if done else np.array([math.nan])
    return Posterior(
        parameters=tuple(params), sample_names=tuple(target.names), samples=flat,
        walkers=walkers, steps=done, steps_requested=steps, burn_in=burn,
        acceptance_fraction=float(np.mean(acc)),
        autocorr_time={public[n]: float(t) for n, t in zip(target.names, tau, strict=True)},
        long_enough=long_enough, interrupted=interrupted, likelihood=likelihood,
        priors=priors, held=dict(result.fixed), seed=seed, notes=tuple(notes))


def _quantiles(x: np.ndarray | None) -> tuple[float, float, float]:
    if x is None or x.size == 0:
        return math.nan, math.nan, math.nan
    lo, med, hi = np.quantile(x, [0.025, 0.5, 0.975])
    return float(lo), float(med), float(hi)


def _quantity(result: FitResult, name: str, x: np.ndarray | None, internal: str
              ) -> ParameterPosterior:
    """One sampled parameter in public units beside the fit's estimate."""
    lo, med, hi = _quantiles(x)
    stem = name[2:]
    lv = next(v for v in result.levels if v.name == stem)
    est = lv.concentration if name.startswith("N_") else lv.energy
    if internal.startswith("log10_"):
        lo, med, hi = 10.0**lo, 10.0**med, 10.0**hi
    return ParameterPosterior(name, "cm^-3" if name.startswith("N_") else "eV", med, (lo, hi),
                              est.value, tuple(est.ci95), est.method)


def _derived(result: FitResult, target: PosteriorTarget, flat: np.ndarray
             ) -> list[ParameterPosterior]:
    """Net doping and compensation ratio of every sample."""
    rows = flat.shape[0]
    vals = target.values(flat) if rows else {}
    col = {k: np.broadcast_to(np.asarray(v, dtype=float).reshape(-1), (rows,))
           for k, v in vals.items()}
    out = []
    major = sum(10.0 ** col[k] for k in target.major) if rows else None
    minor = 10.0 ** col[target.minor] if rows and target.minor else 0.0
    net = None if major is None else major - minor
    lo, med, hi = _quantiles(net)
    est = result.net_doping
    out.append(ParameterPosterior("net_doping", "cm^-3", med, (lo, hi), est.value,
                                  tuple(est.ci95), est.method))
    if target.minor is not None:
        lo, med, hi = _quantiles(None if major is None else minor / major)
        est = result.compensation_ratio
        out.append(ParameterPosterior("compensation_ratio", "", med, (lo, hi), est.value,
                                      tuple(est.ci95), est.method))
    return out
