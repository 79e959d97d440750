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
        """InputError when the excited-state set belongs to another host than ``material``."""
        if self.host is not None and material.name != self.host:
            raise InputError(f"--excited-states: the set is for {self.host}, the material is "
                             f"{material.name}")

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
                  posterior: bool) -> None:
    """Refuse the combinations not built.

    Excited states of acceptors, and any option with the joint and two-carrier fits or the
    posterior.

    Raises
    ------
    InputError
        Naming the option and what it cannot be combined with.
    """
    if physics.excited and carrier == "p":
        raise InputError("--excited-states: the bundled sets are donor states; this run is "
                         "p-type")
    if physics.options and (joint or posterior):
        names = ", ".join("--" + k.replace("_", "-") for k in physics.options)
        raise InputError(f"{names} work with the density-only fit; not (yet) with --mobility, "
                         "--carriers both or --posterior")
