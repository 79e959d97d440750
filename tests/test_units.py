"""Units read with the case that carries their meaning: every SI prefix on every unit family.

The prefixes and their factors are those of BIPM, The International System of Units (SI
Brochure), 9th edition (2019), Table 7, copied here by hand (``u`` is the usual ASCII
stand-in for ``µ``, common practice, no source). 1 G = 1e-4 T and 0 degC = 273.15 K are the
definitions (from memory). Which prefixes each quantity accepts is a project choice, no
source (numbers/units.py ``ACCEPTED``): the table of accepted spellings below pins it.
"""

from __future__ import annotations

import pytest

from freezeout.errors import InputError
from freezeout.numbers.units import SI_PREFIXES, parse_unit

#: SI Brochure, 9th ed. (2019), Table 7: symbol -> (name, factor)
TABLE_7 = {
    "Y": ("yotta", 1e24), "Z": ("zetta", 1e21), "E": ("exa", 1e18), "P": ("peta", 1e15),
    "T": ("tera", 1e12), "G": ("giga", 1e9), "M": ("mega", 1e6), "k": ("kilo", 1e3),
    "h": ("hecto", 1e2), "da": ("deca", 1e1), "d": ("deci", 1e-1), "c": ("centi", 1e-2),
    "m": ("milli", 1e-3), "µ": ("micro", 1e-6), "n": ("nano", 1e-9), "p": ("pico", 1e-12),
    "f": ("femto", 1e-15), "a": ("atto", 1e-18), "z": ("zepto", 1e-21), "y": ("yocto", 1e-24),
}

#: Each unit family: dimension, the base unit as written, its name, the base unit in the
#: canonical unit, and the power the prefix's factor is raised to (cm^-3: the metre's
#: prefix, cubed and inverted).
FAMILIES = [
    ("temperature", "K", "kelvin", 1.0, 1),
    ("density", "m^-3", "metre^-3", 1e-6, -3),
    ("hall_coefficient", "m^3/C", "metre^3 per coulomb", 1e6, 3),
    ("mobility", "m^2/(V s)", "metre^2 per volt second", 1e4, 2),
    ("resistivity", "ohm cm", "ohm centimetre", 1.0, 1),
    ("resistivity", "ohm m", "ohm metre", 100.0, 1),
    ("conductivity", "S/cm", "siemens per centimetre", 1.0, 1),
    ("conductivity", "S/m", "siemens per metre", 1e-2, 1),
    ("field", "T", "tesla", 1.0, 1),
    ("field", "G", "gauss", 1e-4, 1),
    ("current", "A", "ampere", 1.0, 1),
    ("voltage", "V", "volt", 1.0, 1),
    ("length", "m", "metre", 100.0, 1),
    ("energy", "eV", "electronvolt", 1.0, 1),
]

#: Every prefixed spelling that is accepted (project choice), with its factor to the
#: canonical unit (K, cm^-3, cm^3/C, cm^2/(V s), ohm cm, T, A, V, cm, eV), worked by hand
#: from Table 7; every other prefix on these units is refused.
ACCEPTED = {
    ("temperature", "mK"): 1e-3, ("temperature", "µK"): 1e-6, ("temperature", "uK"): 1e-6,
    ("density", "cm^-3"): 1.0, ("density", "mm^-3"): 1e3, ("density", "µm^-3"): 1e12,
    ("density", "um^-3"): 1e12, ("density", "nm^-3"): 1e21,
    ("hall_coefficient", "cm^3/C"): 1.0,
    ("mobility", "cm^2/(V s)"): 1.0,
    ("resistivity", "µohm cm"): 1e-6, ("resistivity", "uohm cm"): 1e-6,
    ("resistivity", "mohm cm"): 1e-3, ("resistivity", "kohm cm"): 1e3,
    ("resistivity", "Mohm cm"): 1e6, ("resistivity", "Gohm cm"): 1e9,
    ("resistivity", "µohm m"): 1e-4, ("resistivity", "uohm m"): 1e-4,
    ("resistivity", "mohm m"): 0.1, ("resistivity", "kohm m"): 1e5,
    ("resistivity", "Mohm m"): 1e8, ("resistivity", "Gohm m"): 1e11,
    ("conductivity", "nS/cm"): 1e-9, ("conductivity", "µS/cm"): 1e-6,
    ("conductivity", "uS/cm"): 1e-6, ("conductivity", "mS/cm"): 1e-3,
    ("conductivity", "kS/cm"): 1e3, ("conductivity", "nS/m"): 1e-11,
    ("conductivity", "µS/m"): 1e-8, ("conductivity", "uS/m"): 1e-8,
    ("conductivity", "mS/m"): 1e-5, ("conductivity", "kS/m"): 10.0,
    ("field", "mT"): 1e-3, ("field", "µT"): 1e-6, ("field", "uT"): 1e-6, ("field", "kG"): 0.1,
    ("current", "mA"): 1e-3, ("current", "µA"): 1e-6, ("current", "uA"): 1e-6,
    ("current", "nA"): 1e-9, ("current", "pA"): 1e-12,
    ("voltage", "mV"): 1e-3, ("voltage", "µV"): 1e-6, ("voltage", "uV"): 1e-6,
    ("voltage", "nV"): 1e-9,
    ("length", "dm"): 10.0, ("length", "cm"): 1.0, ("length", "mm"): 0.1,
    ("length", "µm"): 1e-4, ("length", "um"): 1e-4, ("length", "nm"): 1e-7,
    ("energy", "meV"): 1e-3,
}


def _sweep():
    """(dimension, spelling, prefix as written or None, family) for every SI prefix on every
    family, in its own case and in the other case."""
    out = []
    for fam in FAMILIES:
        dim, base = fam[0], fam[1]
        for prefix in TABLE_7:
            for written in dict.fromkeys((prefix, prefix.swapcase(), "u" if prefix == "µ"
                                          else prefix)):
                out.append(pytest.param(dim, written + base, written, fam,
                                        id=f"{dim}:{written}{base}"))
    return out


def test_the_prefix_table_is_table_7():
    # SI Brochure, 9th ed., Table 7 (u for µ)
    assert {("µ" if k == "u" else k): (name, 10.0 ** e) for k, (name, e) in SI_PREFIXES.items()
            } == TABLE_7


@pytest.mark.parametrize(("dim", "spelling", "written", "family"), _sweep())
def test_every_prefix_in_both_cases(dim, spelling, written, family):
    _, base, base_name, base_factor, power = family
    prefix = "µ" if written == "u" else written
    try:
        unit = parse_unit(spelling, dim)
    except ValueError as exc:
        assert (dim, spelling) not in ACCEPTED, f"{spelling} refused: {exc}"
        msg = str(exc)
        if prefix in TABLE_7:
            # read as the prefix written: its own name, never the other case's
            name = TABLE_7[prefix][0]
            assert f"{name}{base_name}" in msg or "ambiguous" in msg, msg
        else:
            # not a prefix in this case (K, H, D, C, N, F, U, ...): unknown, or refused as
            # a reading of the lower-case spelling
            assert "unknown unit" in msg or "ambiguous" in msg or "SI prefix" in msg, msg
        return
    assert (dim, spelling) in ACCEPTED, f"{spelling} accepted as {unit.scale:g}"
    assert unit.scale == pytest.approx(ACCEPTED[(dim, spelling)], rel=1e-15)
    # and that factor is the prefix as written (case exact), from Table 7
    assert unit.scale == pytest.approx(base_factor * TABLE_7[prefix][1] ** power, rel=1e-15)


@pytest.mark.parametrize(("dim", "spelling", "factor", "offset"), [
    # base units and their usual spellings (project choice, no source, for the spellings)
    ("temperature", "K", 1.0, 0.0), ("temperature", "kelvin", 1.0, 0.0),
    ("temperature", "k", 1.0, 0.0),  # k alone has one reading: kelvin
    ("temperature", "degC", 1.0, 273.15), ("temperature", "°C", 1.0, 273.15),
    ("temperature", "deg C", 1.0, 273.15), ("temperature", "C", 1.0, 273.15),
    ("density", "cm-3", 1.0, 0.0), ("density", "1/cm3", 1.0, 0.0), ("density", "/cm3", 1.0, 0.0),
    ("density", "cm⁻³", 1.0, 0.0), ("density", "CM^-3", 1.0, 0.0), ("density", "m^-3", 1e-6, 0.0),
    ("hall_coefficient", "cm3/C", 1.0, 0.0), ("hall_coefficient", "m^3/C", 1e6, 0.0),
    ("hall_coefficient", "m^3 C^-1", 1e6, 0.0), ("hall_coefficient", "cm^3 C^-1", 1.0, 0.0),
    ("conductivity", "S/cm", 1.0, 0.0), ("conductivity", "S cm^-1", 1.0, 0.0),
    ("conductivity", "1/(ohm cm)", 1.0, 0.0), ("conductivity", "(Ohm cm)^-1", 1.0, 0.0),
    ("conductivity", "ohm^-1 cm^-1", 1.0, 0.0), ("conductivity", "1/Ohm-cm", 1.0, 0.0),
    ("conductivity", "S/m", 0.01, 0.0), ("conductivity", "1/(ohm m)", 0.01, 0.0),
    ("conductivity", "s/cm", 1.0, 0.0),  # one reading: siemens
    ("mobility", "cm2/Vs", 1.0, 0.0), ("mobility", "cm^2/(V s)", 1.0, 0.0),
    ("mobility", "cm2V-1s-1", 1.0, 0.0), ("mobility", "cm^2 V^-1 s^-1", 1.0, 0.0),
    ("mobility", "m^2/(V s)", 1e4, 0.0),
    ("resistivity", "ohm cm", 1.0, 0.0), ("resistivity", "Ohm cm", 1.0, 0.0),
    ("resistivity", "OHM CM", 1.0, 0.0), ("resistivity", "Ohm-cm", 1.0, 0.0),
    ("resistivity", "ohm-cm", 1.0, 0.0), ("resistivity", "ohms cm", 1.0, 0.0),
    ("resistivity", "Ω·cm", 1.0, 0.0), ("resistivity", "Ω cm", 1.0, 0.0),
    ("resistivity", "ohm*cm", 1.0, 0.0), ("resistivity", "ohm m", 100.0, 0.0),
    ("resistivity", "mΩ cm", 1e-3, 0.0), ("resistivity", "MΩ·cm", 1e6, 0.0),
    ("resistivity", "mOhm cm", 1e-3, 0.0), ("resistivity", "MOhm cm", 1e6, 0.0),
    ("resistivity", "kOhm-cm", 1e3, 0.0), ("resistivity", "kOHM CM", 1e3, 0.0),
    ("field", "T", 1.0, 0.0), ("field", "tesla", 1.0, 0.0), ("field", "G", 1e-4, 0.0),
    ("field", "gauss", 1e-4, 0.0), ("field", "kG", 0.1, 0.0),
    ("current", "A", 1.0, 0.0), ("current", "μA", 1e-6, 0.0),  # Greek mu, U+03BC
    ("voltage", "V", 1.0, 0.0), ("length", "m", 100.0, 0.0), ("length", "CM", 1.0, 0.0),
    ("energy", "eV", 1.0, 0.0), ("dimensionless", "%", 0.01, 0.0),
    ("dimensionless", "", 1.0, 0.0), ("dimensionless", "1", 1.0, 0.0),
])
def test_accepted_spellings(dim, spelling, factor, offset):
    unit = parse_unit(spelling, dim)
    assert (unit.scale, unit.offset) == (pytest.approx(factor, rel=1e-15), offset)


@pytest.mark.parametrize(("dim", "spelling", "reason"), [
    # case is meaning: M is mega, m milli (SI Brochure, 9th ed., Table 7)
    ("temperature", "MK", "megakelvin"),  # 1e6 K: too large, refused, not read as mK
    ("temperature", "MK", "too large"),
    ("temperature", "MK", "did you mean mK"),
    ("temperature", "kK", "kilokelvin"),
    ("temperature", "mk", "ambiguous"),  # mK or MK? the case was lost
    ("temperature", "MILLIKELVIN", "unknown unit"),
    ("resistivity", "MOHM CM", "ambiguous"),  # mohm cm or Mohm cm?
    ("resistivity", "mOHM cm", "ambiguous"),
    ("resistivity", "Tohm cm", "teraohm centimetre"),
    ("resistivity", "nohm cm", "too small"),
    ("resistivity", "ohm inch", "unknown unit"),
    ("resistivity", "KOHM CM", "wrong case"),  # K is not a prefix; kilo is k
    ("resistivity", "gohm cm", "wrong case"),  # g is not a prefix; giga is G
    ("resistivity", "S/cm", "unknown unit"),  # a conductivity is not a resistivity
    ("field", "MT", "megatesla"), ("field", "GT", "gigatesla"), ("field", "MG", "megagauss"),
    ("field", "mt", "ambiguous"),
    ("current", "PA", "petaampere"), ("current", "MA", "megaampere"),
    ("current", "kA", "too large"), ("current", "NA", "wrong case"),  # not nA
    ("voltage", "MV", "megavolt"), ("voltage", "pV", "too small"),
    ("length", "Mm", "megametre"), ("length", "km", "kilometre"), ("length", "MM", "ambiguous"),
    ("length", "K", "unknown unit"), ("length", "parsec", "unknown unit"),
    ("density", "Mm^-3", "megametre^-3"), ("density", "km^-3", "too small"),
    ("density", "Nm^-3", "wrong case"), ("density", "Cm^-3", "wrong case"),
    ("field", "KG", "wrong case"),
    ("hall_coefficient", "mm^3/C", "millimetre^3 per coulomb"),
    ("mobility", "mm^2/(V s)", "millimetre^2 per volt second"),
    ("energy", "MeV", "megaelectronvolt"), ("energy", "keV", "kiloelectronvolt"),
    ("energy", "mev", "ambiguous"),
    ("conductivity", "MS/cm", "megasiemens per centimetre"),
    ("conductivity", "ms/cm", "ambiguous"),  # mS/cm or MS/cm?
    ("conductivity", "ohm cm", "unknown unit"),  # a resistivity is not a conductivity
])
def test_refused_spellings_with_their_reason(dim, spelling, reason):
    with pytest.raises(ValueError) as info:
        parse_unit(spelling, dim)
    assert reason in str(info.value), str(info.value)
    assert repr(spelling) in str(info.value)  # the message quotes what was written


def test_readers_apply_the_case(tmp_path):
    # through the reduced-run reader: Mohm cm is 1e6 ohm cm (not milliohm cm), MK refused
    from freezeout.io.reduced_csv_reader import read_reduced_csv

    good = tmp_path / "r.csv"
    good.write_text("T [mK],n [cm^-3],rho [Mohm cm]\n300000,1e15,2\n")
    run = read_reduced_csv(good)
    assert run.temperature[0] == pytest.approx(300.0)
    assert run.resistivity[0] == pytest.approx(2e6)
    bad = tmp_path / "b.csv"
    bad.write_text("T [MK],n [cm^-3]\n0.0003,1e15\n")
    with pytest.raises(InputError, match="megakelvin") as info:
        read_reduced_csv(bad)
    assert info.value.column == "T [MK]"
