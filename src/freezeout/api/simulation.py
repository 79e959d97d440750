"""The forward simulation behind ``freezeout simulate``, and the CSV run it writes."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING

from freezeout.api.level_physics import LevelPhysics, level_physics
from freezeout.api.materials import load_material
from freezeout.errors import InputError

if TYPE_CHECKING:
    from freezeout.physics.materials import Material

#: A level as the API takes it: (concentration [cm^-3], energy [eV] or None, degeneracy
#: [1] or None).
LevelSpec = tuple

#: Highest temperature the simulation accepts (project choice: beyond any cryostat or
#: heated stage, and beyond where constant density-of-states masses mean anything). [K]
MAX_TEMPERATURE_K = 5000.0

#: Highest level concentration the simulation accepts (project choice: a few percent of a
#: host's atomic density, past which a dopant is an alloy constituent). [cm^-3]
MAX_CONCENTRATION = 1e22


def _levels(kind: str, specs: Sequence[LevelSpec], physics: LevelPhysics):
    from freezeout.physics.neutrality import DopantLevel

    # an energy-versus-density set of one level kind (Altermatt's Si:P, Si:B) applies to
    # that kind only
    lowering = physics.lowering
    if lowering is not None and lowering.kind not in (None, kind):
        lowering = None

    def options(energy, g) -> dict:  # the optional physics of a partially ionized level
        if energy is None:
            return {}
        if kind == "donor" and physics.excited:
            return {"excited": physics.excited, "lowering": lowering,
                    "degeneracy": physics.degeneracy(g)}
        return {"lowering": lowering}

    out = []
    for spec in specs:
        spec = tuple(spec)
        if not 2 <= len(spec) <= 3:
            raise InputError(f"{kind} {spec!r}: give (concentration, energy[, degeneracy])")
        g = None if len(spec) < 3 or spec[2] is None else float(spec[2])
        try:
            energy = None if spec[1] is None else float(spec[1])
            out.append(DopantLevel(kind, float(spec[0]), energy, g) if not physics.active
                       else DopantLevel(kind, float(spec[0]), energy,
                                        **{"degeneracy": g, **options(energy, g)}))
        except (TypeError, ValueError) as exc:
            raise InputError(f"{kind} {spec!r}: {exc}") from None
    return out


def check_statistics(statistics: str) -> str:
    """The statistics name, lower case, or an InputError listing the valid ones."""
    s = str(statistics).strip().lower()
    if s not in ("fermi-dirac", "boltzmann"):
        raise InputError(f"unknown statistics {statistics!r}; valid: fermi-dirac, boltzmann")
    return s


def simulate(
    material: str | Material | None = None,
    material_file: str | Path | None = None,
    donors: Sequence[LevelSpec] = (),
    acceptors: Sequence[LevelSpec] = (),
    temperatures=(10.0, 700.0, 60),
    statistics: str = "fermi-dirac",
    mobility: Sequence[str] | str = (),
    lattice_mu300: float | None = None,
    lattice_exponent: float | None = None,
    minority_mu300: float | None = None,
    minority_exponent: float | None = None,
    *,
    excited_states: str | None = None,
    energy_vs_density: str | None = None,
    dos_mass: str | None = None,
):
    """Simulate a run: n, p, E_F and ionized fractions versus temperature.

    Parameters
    ----------
    material, material_file
        Library name (default ``Si``) or TOML file.
    donors, acceptors
        Levels as ``(concentration [cm^-3], energy [eV] or None, degeneracy [1] or None)``.
    temperatures
        ``(t_min, t_max, n)``, n points evenly spaced in 1000/T, or an array of
        temperatures. [K]
    statistics
        ``"fermi-dirac"`` or ``"boltzmann"``.
    mobility
        Scattering mechanisms of the majority carrier's mobility, e.g. ``("lattice",
        "brooks-herring")`` or ``"lattice+brooks-herring"`` (valid: lattice,
        brooks-herring, conwell-weisskopf, neutral); empty for no transport columns. With
        them the run gains ``mu_H``, ``rho`` and ``R_H`` of the majority carrier, the Hall
        factor from the scattering.
    lattice_mu300, lattice_exponent
        Lattice mobility at 300 K and exponent a of mu_L ~ T^-a, needed with ``lattice``.
        [cm^2/(V s)], [1]
    minority_mu300, minority_exponent
        The minority carrier's lattice term (both or neither): with them electrons and holes
        conduct together and ``R_H``, ``rho`` and ``mu_H = |R_H| / rho`` are the two-carrier
        values, so a hot run shows its mixed conduction and Hall sign reversal.
        [cm^2/(V s)], [1]
    excited_states, energy_vs_density, dos_mass
        Optional physics, off by default (:mod:`freezeout.api.level_physics`): the excited
        states go to every partially ionized donor (its g the set's g_0 unless given), the
        energy-versus-density model to every partially ionized level (its energy is E_0).

    Returns
    -------
    Simulation
        The simulated run (:mod:`freezeout.physics.simulation`).
    """
    import numpy as np

    from freezeout.physics.simulation import simulate as _simulate
    from freezeout.physics.simulation import temperature_grid

    physics = level_physics(excited_states, energy_vs_density, dos_mass)
    mat = physics.material(load_material(material, material_file))
    if isinstance(temperatures, tuple) and len(temperatures) == 3:
        try:
            t = temperature_grid(float(temperatures[0]), float(temperatures[1]),
                                 int(temperatures[2]))
        except ValueError as exc:
            raise InputError(f"temperatures: {exc}") from None
    else:
        t = np.asarray(temperatures, dtype=float)
    if t.size == 0 or not np.all(np.isfinite(t)) or np.any(t <= 0) or np.any(
            t > MAX_TEMPERATURE_K):
        raise InputError(f"temperatures must be above 0 K and at most {MAX_TEMPERATURE_K:g} K")
    statistics = check_statistics(statistics)
    gap = float(np.min(mat.band_gap(t)))
    if not gap > 0:
        raise InputError(f"the band gap of {mat.name} closes within these temperatures")
    levels = {"donor": _levels("donor", donors, physics), "acceptor": _levels(
        "acceptor", acceptors, physics)}
    for kind, lvs in levels.items():
        for lv in lvs:
            if not lv.concentration <= MAX_CONCENTRATION:
                raise InputError(f"{kind} concentration {lv.concentration:g} cm^-3 is above "
                                 f"{MAX_CONCENTRATION:g} cm^-3, beyond the model")
            if lv.energy is not None and not lv.energy < gap:
                raise InputError(f"{kind} ionization energy {lv.energy:g} eV is not below the "
                                 f"band gap ({gap:.4g} eV)")
            if lv.energy is not None and lv.lowering is not None:
                lowered = float(lv.lowering.energy(lv.energy, lv.concentration))
                if not lowered > 0:
                    raise InputError(f"{kind} level {lv.concentration:g} cm^-3, {lv.energy:g} "
                                     f"eV: the energy-versus-density model lowers it to "
                                     f"{lowered:.3g} eV, into the band; the model does not "
                                     "describe such a level")
    if mobility:
        from freezeout.physics.majority_mobility import check_lattice, check_mechanisms

        check_lattice(check_mechanisms(mobility), lattice_mu300, lattice_exponent)
    minority = None
    if (minority_mu300 is None) != (minority_exponent is None):
        raise InputError("the minority carrier's lattice term needs both its mobility at "
                         "300 K and its exponent")
    if minority_mu300 is not None:
        if not mobility or "lattice" not in check_mechanisms(mobility):
            raise InputError("the minority carrier's lattice term needs the lattice "
                             "mechanism in the mobility models")
        minority = check_lattice(("lattice",), minority_mu300, minority_exponent)
    return _simulate(mat, t, levels["donor"], levels["acceptor"], statistics,
                     mobility=mobility, lattice_mu300=lattice_mu300,
                     lattice_exponent=lattice_exponent, minority_lattice=minority)


def simulation_metadata(sim, statistics: str) -> dict[str, str]:
    """The ``# key: value`` lines of a simulated run's CSV (material, statistics, levels)."""
    meta = {"source": "freezeout simulate (synthetic)", "material": sim.material.name,
            "statistics": statistics}
    for kind, levels in (("donor", sim.donors), ("acceptor", sim.acceptors)):
        for i, lv in enumerate(levels, 1):
            meta[f"{kind}_{i}"] = f"{lv.concentration:g} cm^-3, " + (
                "fully ionized" if lv.energy is None
                else f"{lv.energy:g} eV, g={lv.degeneracy:g}") + (
                ", excited states " + " ".join(f"{d * 1e3:g}meV/g={g:g}" for d, g in lv.excited)
                if lv.excited else "") + (
                ", energy vs density " + " ".join(
                    f"{k}={v:g}" if isinstance(v, float) else f"{k}={v}"
                    for k, v in lv.lowering.to_dict().items() if k != "source")
                if lv.lowering else "")
    if sim.material.dos_mass_model != "constant":
        meta["dos_mass"] = sim.material.dos_mass_model
    tr = getattr(sim, "transport", None)
    if tr is not None and hasattr(tr, "electron_lattice"):  # both carriers
        meta["mobility"] = "+".join(tr.models) + (
            f" (electron lattice {tr.electron_lattice[0]:g} cm^2/(V s) at 300 K, exponent "
            f"{tr.electron_lattice[1]:g}; hole lattice {tr.hole_lattice[0]:g} cm^2/(V s), "
            f"exponent {tr.hole_lattice[1]:g})")
        meta["mobility_carrier"] = "both"
        meta["hall_factor_varies"] = ("yes (two-carrier R_H, each carrier's r_H(T) from the "
                                      "scattering)")
    elif tr is not None:
        meta["mobility"] = "+".join(tr.models) + (
            f" (lattice {tr.lattice_mobility_300:g} cm^2/(V s) at 300 K, exponent "
            f"{tr.lattice_exponent:g})" if "lattice" in tr.models else "")
        meta["mobility_carrier"] = tr.carrier
        # the R_H column carries r_H(T) from the scattering: no one constant Hall factor
        meta["hall_factor_varies"] = "yes (R_H = -+ r_H(T) / (q n), r_H from the scattering)"
    return meta


def simulation_csv(sim, statistics: str) -> str:
    """A simulated run as CSV text (a valid input to ``freezeout fit``)."""
    from freezeout.io.writers import format_csv

    return format_csv(sim.columns(), simulation_metadata(sim, statistics))


def write_simulation_csv(sim, statistics: str, path: str | Path, *,
                         material_file: str | Path | None = None) -> Path:
    """Write :func:`simulation_csv` to ``path`` (temporary file, then rename).

    Refuses (:class:`InputError`, nothing written) when ``path`` is the ``material_file``
    the simulation read, under any name (:func:`freezeout.api.guard.refuse_overwrite`).
    """
    from freezeout.api.guard import refuse_overwrite
    from freezeout.io.atomic import atomic_write_text

    refuse_overwrite([path], [material_file])
    return atomic_write_text(path, simulation_csv(sim, statistics))
