"""The model a run plan is computed for: from given levels, or from a fit's JSON document.

Either way the result is a :class:`PlanModel`, the parameters of the fit's carrier model
(:class:`freezeout.fitting.model.CarrierModel`) in public names and units: for an n-type
model ``N_D1``, ``E_D1``, ... and a fully ionized compensating ``N_A``. JSON is read here, at
the edge, and nothing past this module sees a dict of it.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

from freezeout.errors import InputError

if TYPE_CHECKING:
    from freezeout.physics.materials import Material


@dataclass(frozen=True)
class PlanModel:
    """The carrier model a plan is made for.

    Attributes
    ----------
    material
        Host material.
    carrier
        Majority carrier, ``"n"`` or ``"p"``.
    statistics
        ``"fermi-dirac"`` or ``"boltzmann"``.
    n_levels
        Partially ionized majority-type levels.
    compensated
        True when a fully ionized compensating species is included.
    degeneracy
        Ground-state degeneracy of the majority levels, or None for the default. [1]
    values
        Public parameter name -> value (cm^-3 or eV), in the model's parameter order.
    held
        Public names the fit held fixed: known, so not in the Fisher information.
    source
        Where the model came from (``"levels"`` or the fit file's name).
    notes
        What the reader should know about how the levels were mapped.
    """

    material: Material
    carrier: str
    statistics: str
    n_levels: int
    compensated: bool
    degeneracy: float | None
    values: dict
    held: tuple[str, ...] = ()
    source: str = "levels"
    notes: tuple[str, ...] = ()


def _tuple(spec, kind: str) -> tuple[float, float | None, float | None]:
    spec = tuple(spec)
    if not 2 <= len(spec) <= 3:
        raise InputError(f"{kind} {spec!r}: give (concentration, energy[, degeneracy])")
    try:
        conc = float(spec[0])
        energy = None if spec[1] is None else float(spec[1])
        g = None if len(spec) < 3 or spec[2] is None else float(spec[2])
    except (TypeError, ValueError):
        raise InputError(f"{kind} {spec!r}: concentration, energy and degeneracy must be "
                         "numbers") from None
    if not (math.isfinite(conc) and conc > 0):
        raise InputError(f"{kind} {spec!r}: concentration must be a finite number > 0 cm^-3")
    if energy is not None and not (math.isfinite(energy) and energy > 0):
        raise InputError(f"{kind} {spec!r}: ionization energy must be a finite number > 0 eV")
    if g is not None and not (math.isfinite(g) and 0 < g <= 100):
        raise InputError(f"{kind} {spec!r}: degeneracy must be above 0 and at most 100")
    return conc, energy, g


def model_from_levels(material: Material, donors, acceptors,
                      statistics: str = "fermi-dirac") -> PlanModel:
    """The fit's model for levels given as simulate takes them.

    The majority carrier is the type of the larger total concentration. Every majority-type
    level must have an energy (the fit's model has no fully ionized majority species) and
    one degeneracy; the minority-type levels become one fully ionized compensating species
    of their total concentration, as the fit models compensation.

    Parameters
    ----------
    material
        Host material.
    donors, acceptors
        Levels ``(concentration [cm^-3], energy [eV] or None, degeneracy [1] or None)``.
    statistics
        ``"fermi-dirac"`` or ``"boltzmann"``.

    Raises
    ------
    InputError
        No levels, equal totals, a fully ionized majority level, mixed degeneracies.
    """
    d = [_tuple(x, "donor") for x in donors]
    a = [_tuple(x, "acceptor") for x in acceptors]
    n_d, n_a = sum(x[0] for x in d), sum(x[0] for x in a)
    if not d and not a:
        raise InputError("give the levels to plan for: --donor and/or --acceptor, or "
                         "--from-fit")
    if n_d == n_a:
        raise InputError("the donor and acceptor totals are equal: no majority carrier")
    carrier = "n" if n_d > n_a else "p"
    major, minor = (d, a) if carrier == "n" else (a, d)
    ms, mn = ("D", "A") if carrier == "n" else ("A", "D")
    word = "donor" if carrier == "n" else "acceptor"
    if any(e is None for _, e, _ in major):
        raise InputError(f"every {word} level needs an ionization energy: the fit's model has "
                         f"no fully ionized {word} (its level is what the run measures)")
    gs = {g for _, _, g in major}
    if len(gs) > 1:
        raise InputError(f"the {word} levels must share one degeneracy (the fit's model uses "
                         f"one), got {', '.join('default' if g is None else f'{g:g}' for g in gs)}")
    values = {}
    for i, (conc, energy, _) in enumerate(major, 1):
        values[f"N_{ms}{i}"] = conc
        values[f"E_{ms}{i}"] = energy
    notes = []
    if minor:
        values[f"N_{mn}"] = sum(x[0] for x in minor)
        if len(minor) > 1 or any(e is not None for _, e, _ in minor):
            notes.append(f"the compensating levels are one fully ionized N_{mn} of their total "
                         f"{values[f'N_{mn}']:.4g} cm^-3, as the fit models compensation")
    return PlanModel(material, carrier, statistics, len(major), bool(minor), gs.pop(),
                     values, (), "levels", tuple(notes))


def _member(doc, key: str, kind, file: str, where: str = ""):
    if not isinstance(doc, dict) or key not in doc:
        raise InputError(f"not a fit result: no {where}{key!r} member", file=file,
                         column=f"{where}{key}")
    value = doc[key]
    if kind is not None and not isinstance(value, kind):
        raise InputError(f"not a fit result: {where}{key!r} has the wrong type", file=file,
                         column=f"{where}{key}")
    return value


def _number(doc, key: str, file: str, where: str) -> float:
    v = _member(doc, key, (int, float), file, where)
    if isinstance(v, bool) or not math.isfinite(v):
        raise InputError(f"not a usable fit result: {where}{key} is not a finite number",
                         file=file, column=f"{where}{key}")
    return float(v)


def model_from_fit_json(path: str | Path, material: Material | None = None) -> PlanModel:
    """The fitted model of a ``freezeout fit --json`` document (or a report's fit.json).

    Reads the carrier, the statistics, the levels (values as fitted), the held parameters
    and the material (rebuilt from its parameters in the document unless ``material`` is
    given). A joint or two-carrier fit's mobility part is not used: the plan is for n(T).

    Raises
    ------
    InputError
        Not JSON, or a JSON document that is not a fit result (naming the member).
    """
    from freezeout.io.text_file import read_text_file
    from freezeout.physics.materials import MATERIAL_KEYS, material_from_mapping

    file = str(path)
    text = "\n".join(read_text_file(path).lines)
    try:
        doc = json.loads(text)
    except json.JSONDecodeError as exc:
        raise InputError(f"not a fit result: not JSON ({exc.msg})", file=file,
                         line=exc.lineno, column=exc.colno) from None
    if not isinstance(doc, dict) or "schema_version" not in doc or "levels" not in doc:
        raise InputError("not a fit result: a 'freezeout fit --json' document has "
                         "'schema_version' and 'levels'", file=file)
    carrier = _member(doc, "carrier", str, file)
    if carrier not in ("n", "p"):
        raise InputError(f"not a fit result: carrier {carrier!r} is not 'n' or 'p'",
                         file=file, column="carrier")
    stats = _member(_member(doc, "statistics", dict, file), "model", str, file, "statistics.")
    if stats not in ("fermi-dirac", "boltzmann"):
        raise InputError(f"not a fit result: statistics model {stats!r}", file=file,
                         column="statistics.model")
    if material is None:
        mdoc = _member(doc, "material", dict, file)
        if mdoc.get("dos_mass_model", "constant") != "constant":
            raise InputError("plan does not take a fit made with --dos-mass temperature yet",
                             file=file, column="material.dos_mass_model")
        material = material_from_mapping({k: v for k, v in mdoc.items()
                                          if k in MATERIAL_KEYS and v is not None},
                                         file=file, description=str(mdoc.get("description", "")),
                                         sources=mdoc.get("sources") or {})
    levels = _member(doc, "levels", list, file)
    ms, mn = ("D", "A") if carrier == "n" else ("A", "D")
    values, gs, n_levels, compensated = {}, set(), 0, False
    for i, lv in enumerate(levels):
        where = f"levels[{i}]."
        name = _member(lv, "name", str, file, where)
        conc = _number(_member(lv, "concentration_cm3", dict, file, where), "value", file,
                       f"{where}concentration_cm3.")
        energy_doc = _member(lv, "energy_eV", (dict, type(None)), file, where)
        if name == mn and energy_doc is None:
            values[f"N_{mn}"] = conc
            compensated = True
            continue
        if energy_doc is None or not (name.startswith(ms) and name[1:].isdigit()):
            raise InputError(f"not a fit result of the fit's model: level {name!r}",
                             file=file, column=f"{where}name")
        if "excited_states" in lv or "energy_vs_density" in lv:
            raise InputError("plan does not take levels fitted with --excited-states or "
                             "--energy-vs-density yet", file=file, column=f"{where}name")
        n_levels += 1
        values[f"N_{name}"] = conc
        values[f"E_{name}"] = _number(energy_doc, "value", file, f"{where}energy_eV.")
        g = lv.get("degeneracy")
        gs.add(None if g is None else float(g))
    if n_levels == 0:
        raise InputError("not a usable fit result: no partially ionized majority level",
                         file=file, column="levels")
    expected = [f"{q}_{ms}{i}" for i in range(1, n_levels + 1) for q in ("N", "E")]
    if [k for k in values if k != f"N_{mn}"] != expected:
        raise InputError("not a fit result of the fit's model: levels not numbered "
                         f"{ms}1..{ms}{n_levels}", file=file, column="levels")
    fixed = doc.get("fixed") or {}
    if not isinstance(fixed, dict):
        raise InputError("not a fit result: 'fixed' is not an object", file=file,
                         column="fixed")
    held = tuple(k for k in values if k in fixed)
    if compensated:  # the compensation last, as the model orders it
        values[f"N_{mn}"] = values.pop(f"N_{mn}")
    return PlanModel(material, carrier, stats, n_levels, compensated,
                     gs.pop() if len(gs) == 1 else None, values, held, file, ())
