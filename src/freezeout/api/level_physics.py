"""The optional level and band physics of a fit or a simulation, from its options.

Three options, each off by default (the results are then those without them):
``excited_states`` (a bundled donor set, ``si-p``, ``si-as``, ``si-sb``: g_eff(T) of
:mod:`freezeout.physics.excited_states`), ``energy_vs_density`` (``pearson-bardeen``,
``pearson-bardeen:ALPHA``, ``altermatt-p``, ``altermatt-b``: E(N) of
:mod:`freezeout.physics.level_energy`, N the level's own concentration) and ``dos_mass``
(``constant`` or ``temperature``: the masses of :mod:`freezeout.physics.dos_mass`, Si only).
"""

from __future__ import annotations

from dataclasses import dataclass

from freezeout.errors import InputError


@dataclass(frozen=True)
class LevelPhysics:
    """The parsed options.

    Attributes
    ----------
    excited
        ``(E_0 - E_i [eV], g_i)`` of the majority levels' excited states, or ().
    ground_degeneracy
        g_0 of the excited-state set, or None.
    lowering
        The energy-versus-density model, or None.
    dos_mass
        ``"constant"`` or ``"temperature"``.
    options
        What was used, for the fit JSON's provenance (empty when everything is off).
    """

    excited: tuple
    ground_degeneracy: float | None
    lowering: object | None
    dos_mass: str
    options: dict
    host: str | None = None

    def check_host(self, material) -> None:
        """InputError when the options' values belong to another host than ``material``.

        The excited-state sets and the default energy-versus-density values are silicon's.
        """
        from freezeout.physics.level_energy import check_lowering_use

        if self.host is not None and material.name != self.host:
            raise InputError(f"--excited-states: the set is for {self.host}, the material is "
                             f"{material.name}")
        check_lowering_use(self.lowering, material.name)

    def note(self, levels) -> str | None:
        """A plain statement of the options a fit used and what its energies mean, or None.

        ``levels`` are the fit's level estimates (name, concentration, energy).
        """
        if not self.active:
            return None
        parts = []
        if self.excited:
            set_ = self.options["excited_states"]
            parts.append(f"donor excited states of {set_.get('name', 'the set')} (g_eff(T) "
                         "from the set's states)")
        if self.lowering is not None:
            moved = []
            for lv in levels:
                if lv.energy is None:
                    continue
                e0, n = lv.energy.value, lv.concentration.value
                moved.append(f"{lv.name} at {float(self.lowering.energy(e0, n)):.4g} eV "
                             f"(E_0 = {e0:.4g} eV)")
            parts.append(f"energy versus density ({self.options['energy_vs_density']['model']}"
                         "): the energies reported are E_0, the isolated-centre values, and at "
                         "its concentration each level lies lower: " + "; ".join(moved))
        if self.dos_mass != "constant":
            parts.append(f"{self.dos_mass}-dependent density-of-states masses")
        return ("level physics used: " + ", ".join(parts) + "; no level spectrum is drawn "
                "(it assumes a constant degeneracy and energy)")

    @property
    def active(self) -> bool:
        """Whether any option is on."""
        return bool(self.options)

    def material(self, material):
        """The host with the chosen density-of-states masses (checked against the set's)."""
        self.check_host(material)
        return material if self.dos_mass == "constant" else material.with_dos_mass_model(
            self.dos_mass)

    def degeneracy(self, given: float | None) -> float | None:
        """The majority levels' ground-state degeneracy: the one given, else the set's."""
        return self.ground_degeneracy if given is None else given


def level_physics(excited_states: str | None = None, energy_vs_density: str | None = None,
                  dos_mass: str | None = None) -> LevelPhysics:
    """Parse the three options (see the module docstring).

    Raises
    ------
    InputError
        An unknown set, model or mass model (the message lists the valid ones).
    """
    from freezeout.physics.dos_mass import DOS_MASS_MODELS
    from freezeout.physics.excited_states import get_excited_states
    from freezeout.physics.level_energy import parse_energy_vs_density

    options = {}
    excited, g0, host = (), None, None
    if excited_states is not None and excited_states.strip().lower() not in ("", "none"):
        states = get_excited_states(excited_states)
        excited, g0, host = states.splittings, states.ground_degeneracy, states.host
        options["excited_states"] = states.to_dict()
    lowering = parse_energy_vs_density(energy_vs_density)
    if lowering is not None:
        options["energy_vs_density"] = {**lowering.to_dict(),
                                        "concentration": "the level's own N"}
    mass = "constant" if dos_mass is None else dos_mass.strip().lower()
    if mass not in DOS_MASS_MODELS:
        raise InputError(f"unknown --dos-mass {dos_mass!r}; valid: {', '.join(DOS_MASS_MODELS)}")
    if mass != "constant":
        options["dos_mass"] = mass
    return LevelPhysics(excited, g0, lowering, mass, options, host)


def check_fit_use(physics: LevelPhysics, carrier: str, *, joint: bool,
                  posterior: bool, majority_levels: int | str = 1) -> None:
    """Refuse the combinations not built.

    Excited states of acceptors or of more than one majority level (a set belongs to one
    dopant), an energy-versus-density set of the other level kind, and any option with the
    joint and two-carrier fits or the posterior.

    Raises
    ------
    InputError
        Naming the option and what it cannot be combined with.
    """
    from freezeout.physics.level_energy import check_lowering_use

    if physics.excited and carrier == "p":
        raise InputError("--excited-states: the bundled sets are donor states; this run is "
                         "p-type")
    if physics.excited and majority_levels != 1:
        raise InputError("--excited-states: a set is the states of one dopant; fit one donor "
                         f"level with it (--donors 1), not {majority_levels}")
    check_lowering_use(physics.lowering, None, "donor" if carrier == "n" else "acceptor")
    if physics.options and (joint or posterior):
        names = ", ".join("--" + k.replace("_", "-") for k in physics.options)
        raise InputError(f"{names} work with the density-only fit; not (yet) with --mobility, "
                         "--carriers both or --posterior")
