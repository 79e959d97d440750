"""Lot files (our own TOML schema, docs/lot_format.md) and the evaluation of their claims.

Lots, suppliers and measurements here are synthetic: a fictional supplier "Kestrel Ridge
Wafers" measured at a fictional "Harrowgate Cryo Lab". Run files are placeholders (their
content is read by the fit, not by the lot file parser).
"""

from __future__ import annotations

import datetime as dt
import math
import shutil
import textwrap

import pytest

from freezeout.claims import silicon
from freezeout.claims.evaluate import evaluate_claim, evaluate_lot, evaluate_wafer
from freezeout.claims.lot_hash import lot_input_sha256
from freezeout.claims.lot_reader import load_lot, parse_lot
from freezeout.errors import InputError
from freezeout.records.lot import Decision
from freezeout.records.measurement import Measurement, ResistivityPoint

HEAD = """\
supplier = "Kestrel Ridge Wafers"
lot = "KRW-2611-07"
date = 2026-11-03

[decision]
rule = "guarded"
"""

CLAIMS = """
[[claim]]
quantity = "type"
value = "n"

[[claim]]
quantity = "resistivity"
min = 8.0
max = 12.0
unit = "ohm cm"
dopant = "phosphorus"
temperature_K = 296.15

[[claim]]
quantity = "net_doping"
nominal = 5e20
tolerance = "10%"
unit = "m^-3"
"""

WAFERS = """
[[wafer]]
id = "W01"
material = "si"
run = "runs/w01.csv"

[[wafer]]
id = "W02"
material = "Si"
run = "runs/w02.csv"
"""


@pytest.fixture
def lotdir(tmp_path):
    (tmp_path / "runs").mkdir()
    for name in ("w01.csv", "w02.csv", "w03.csv"):
        (tmp_path / "runs" / name).write_text(f"# synthetic placeholder {name}\n")
    return tmp_path


def write(lotdir, text, name="lot.toml"):
    p = lotdir / name
    p.write_text(textwrap.dedent(text))
    return p


def test_good_lot_file_in_canonical_units(lotdir):
    lot = load_lot(write(lotdir, HEAD + CLAIMS + WAFERS))
    assert (lot.supplier, lot.lot, lot.date) == ("Kestrel Ridge Wafers", "KRW-2611-07",
                                                 dt.date(2026, 11, 3))
    assert lot.decision == Decision("guarded", 2.0)  # coverage factor defaults to 2
    t, r, n = lot.claims
    assert (t.key, t.quantity, t.carrier, t.window) == ("claim[1]", "type", "n", None)
    assert t.temperature_K == 300.0  # default
    assert (r.window.lower, r.window.upper, r.window.unit) == (8.0, 12.0, "ohm cm")
    assert r.dopant == "phosphorus" and r.temperature_K == 296.15
    # SI: 1 m^-3 = 1e-6 cm^-3, so 5e20 m^-3 = 5e14 cm^-3; 10 % -> 4.5e14 .. 5.5e14 cm^-3
    assert n.window.nominal == pytest.approx(5e14)
    assert (n.window.lower, n.window.upper) == (pytest.approx(4.5e14), pytest.approx(5.5e14))
    assert n.tolerance_percent == 10.0 and n.unit == "m^-3"
    w1, w2 = lot.wafers
    assert w1.material == "Si"  # bundled material name, case folded
    assert w1.run == (lotdir / "runs" / "w01.csv").resolve()
    assert lot.to_dict()["claims"][2]["spec"]["unit"] == "cm^-3"


def test_absolute_tolerance_and_other_units(lotdir):
    # 10 mohm cm +- 1 mohm cm = 9e-3 .. 11e-3 ohm cm (milli-ohm centimetre)
    text = HEAD + """
    [[claim]]
    quantity = "resistivity"
    nominal = 10
    tolerance = 1
    unit = "mohm cm"
    dopant = "B"
    """ + WAFERS
    (c,) = load_lot(write(lotdir, text)).claims
    assert (c.window.lower, c.window.upper) == (pytest.approx(9e-3), pytest.approx(11e-3))
    assert c.dopant == "boron"


def test_one_sided_claim_and_date_string(lotdir):
    text = HEAD.replace("2026-11-03", '"2026-11-04"') + """
    [[claim]]
    quantity = "net_doping"
    max = 1e15
    unit = "cm^-3"
    """ + WAFERS
    lot = load_lot(write(lotdir, text))
    assert lot.date == dt.date(2026, 11, 4)
    assert (lot.claims[0].window.lower, lot.claims[0].window.upper) == (None, 1e15)


def test_material_file_gives_the_material_name(lotdir):
    # synthetic user material; parameter values are placeholders within the plausible ranges
    (lotdir / "mat.toml").write_text(textwrap.dedent("""\
        name = "Si"
        band_gap_0K_eV = 1.17
        varshni_alpha_eV_per_K = 4.73e-4
        varshni_beta_K = 636.0
        electron_dos_mass = 1.18
        hole_dos_mass = 0.81
        """))
    text = HEAD + CLAIMS + WAFERS.replace('material = "si"', 'material_file = "mat.toml"')
    w1 = load_lot(write(lotdir, text)).wafers[0]
    assert w1.material == "Si" and w1.material_file == (lotdir / "mat.toml").resolve()


def err(lotdir, text) -> InputError:
    with pytest.raises(InputError) as info:
        load_lot(write(lotdir, text))
    return info.value


@pytest.mark.parametrize(
    ("edit", "column", "message"),
    [
        # unknown keys are errors, not ignored
        (lambda s: s.replace('lot = "KRW', 'colour = "grey"\nlot = "KRW'), "colour",
         "unknown key 'colour'"),
        (lambda s: s.replace('rule = "guarded"', 'rule = "guarded"\nrisk = 0.05'),
         "decision.risk", "unknown key"),
        (lambda s: s.replace("max = 12.0", "maximum = 12.0"), "claim[2].maximum",
         "unknown key 'maximum'"),
        (lambda s: s.replace('id = "W02"', 'id = "W02"\nthickness_um = 525'),
         "wafer[2].thickness_um", "unknown key"),
        # missing keys
        (lambda s: s.replace('supplier = "Kestrel Ridge Wafers"\n', ""), "supplier",
         "missing key 'supplier'"),
        (lambda s: s.replace('rule = "guarded"\n', ""), "decision.rule", "missing key 'rule'"),
        (lambda s: s.replace('run = "runs/w02.csv"\n', ""), "wafer[2].run", "missing key"),
        (lambda s: s.replace('unit = "ohm cm"\n', ""), "claim[2].unit", "missing key 'unit'"),
        (lambda s: s.replace('value = "n"\n', ""), "claim[1].value", "missing key 'value'"),
        # wrong types and values
        (lambda s: s.replace("min = 8.0", 'min = "8.0"'), "claim[2].min", "must be a number"),
        (lambda s: s.replace('rule = "guarded"', 'rule = "guarded"\ncoverage_factor = true'),
         "decision.coverage_factor", "must be a number"),
        (lambda s: s.replace('id = "W02"', "id = 2"), "wafer[2].id", "must be a string"),
        (lambda s: s.replace('rule = "guarded"', 'rule = "lenient"'), "decision.rule",
         "rule must be one of"),
        (lambda s: s.replace('quantity = "type"', 'quantity = "mobility"'), "claim[1].quantity",
         "quantity must be one of"),
        (lambda s: s.replace('unit = "ohm cm"', 'unit = "ohm inch"'), "claim[2].unit",
         "unknown unit"),
        (lambda s: s.replace('value = "n"', 'value = "N-type"'), "claim[1].value",
         '"n" or "p"'),
        (lambda s: s.replace('material = "Si"', 'material = "unobtainium"'),
         "wafer[2].material", '(or give material_file = "FILE.toml")'),
        (lambda s: s.replace("date = 2026-11-03", "date = 2026-11-03T08:00:00"), "date",
         "must be a date"),
        # missing files
        (lambda s: s.replace("runs/w02.csv", "runs/w99.csv"), "wafer[2].run",
         "run file not found"),
        (lambda s: s.replace('material = "Si"', 'material_file = "nope.toml"'),
         "wafer[2].material_file", "material file not found"),
        (lambda s: s.replace('material = "Si"\n', ""), "wafer[2]", "exactly one of"),
        # impossible claims
        (lambda s: s.replace("min = 8.0", "min = 13.0"), "claim[2].max",
         "must be greater than min"),
        (lambda s: s.replace("min = 8.0", "min = -8.0"), "claim[2].min", "must be > 0"),
        (lambda s: s.replace('tolerance = "10%"', "tolerance = 0"), "claim[3].tolerance",
         "tolerance must be > 0"),
        (lambda s: s.replace('tolerance = "10%"', 'tolerance = "-5%"'), "claim[3].tolerance",
         "tolerance must be > 0"),
        (lambda s: s.replace('tolerance = "10%"', 'tolerance = "100%"'), "claim[3].tolerance",
         "at or below zero"),
        (lambda s: s.replace('tolerance = "10%"', "tolerance = 6e20"), "claim[3].tolerance",
         "at or below zero"),
        (lambda s: s.replace('tolerance = "10%"', 'tolerance = "ten"'), "claim[3].tolerance",
         "neither a number nor a percentage"),
        (lambda s: s.replace('tolerance = "10%"\n', ""), "claim[3].tolerance",
         "nominal given without tolerance"),
        (lambda s: s.replace("max = 12.0", "max = 12.0\nnominal = 10.0"), "claim[2].nominal",
         "not both"),
        (lambda s: s.replace('value = "n"', 'value = "n"\nmin = 1.0'), "claim[1].min",
         "type claim takes"),
        # ASTM F723 has boron and phosphorus relations only
        (lambda s: s.replace('dopant = "phosphorus"', 'dopant = "arsenic"'), "claim[2].dopant",
         "boron and phosphorus only"),
        # the window 5e3..6e3 ohm cm lies wholly above the F723 phosphorus range (<= 4e3)
        (lambda s: s.replace("min = 8.0", "min = 5e3").replace("max = 12.0", "max = 6e3"),
         "claim[2]", "wholly outside the ASTM F723 phosphorus range"),
        # a resistivity conversion for a germanium wafer
        (lambda s: s.replace('material = "Si"', 'material = "Ge"'), "wafer[2].material",
         "for silicon only"),
        # contradictions between claims
        (lambda s: s.replace('value = "n"', 'value = "p"'), "claim[2].dopant",
         "makes silicon n-type"),
        (lambda s: s + '\n[[claim]]\nquantity = "type"\nvalue = "p"\n', "claim[4].value",
         "contradict"),
        (lambda s: s.replace('id = "W02"', 'id = "W01"'), "wafer[2].id", "duplicate wafer id"),
        # the Hall factor: unknown keys, bad values, an uncertainty without its value
        (lambda s: s.replace("[decision]", "[measurement]\nhall_factr = 1.1\n\n[decision]"),
         "measurement.hall_factr", "unknown key 'hall_factr'"),
        (lambda s: s.replace("[decision]", "[measurement]\nhall_factor = 0\n\n[decision]"),
         "measurement.hall_factor", "between 0.1 and 10"),
        (lambda s: s.replace("[decision]", 'measurement = 1.1\n\n[decision]'),
         "measurement", "must be a table"),
        (lambda s: s.replace('id = "W02"', 'id = "W02"\nhall_factor = "1.1"'),
         "wafer[2].hall_factor", "must be a number"),
        (lambda s: s.replace('id = "W02"', 'id = "W02"\nhall_factor = 1.1\n'
                             'hall_factor_uncertainty = -0.1'),
         "wafer[2].hall_factor_uncertainty", "must be >= 0"),
        (lambda s: s.replace('id = "W02"', 'id = "W02"\nhall_factor_uncertainty = 0.05'),
         "wafer[2].hall_factor_uncertainty", "no hall_factor"),
        (lambda s: s.replace("[decision]",
                             "[measurement]\nhall_factor_uncertainty = 0.05\n\n[decision]"),
         "measurement.hall_factor_uncertainty", "wafer W01 has no hall_factor"),
    ],
)
def test_bad_lot_files_give_clear_errors(lotdir, edit, column, message):
    text = edit(HEAD + CLAIMS + WAFERS)
    e = err(lotdir, text)
    assert e.column == column, str(e)
    assert message in e.message, str(e)
    assert e.file == str((lotdir / "lot.toml").resolve())


def test_hall_factor_of_the_lot_and_of_a_wafer(lotdir):
    # no [measurement]: r_H is the run's own (value None), with no uncertainty
    lot = load_lot(write(lotdir, HEAD + CLAIMS + WAFERS))
    assert lot.measurement.value is None and lot.wafers[0].hall_factor.stderr == 0.0
    assert lot.wafers[0].hall_factor.relative_uncertainty == 0.0
    # the lot's [measurement] applies to every wafer; a wafer's own keys override it, each
    # key on its own (W02 takes its r_H but keeps the lot's uncertainty)
    text = (HEAD + "\n[measurement]\nhall_factor = 1.15\nhall_factor_uncertainty = 0.05\n"
            + CLAIMS + WAFERS.replace('id = "W02"', 'id = "W02"\nhall_factor = 0.75'))
    lot = load_lot(write(lotdir, text))
    w1, w2 = (w.hall_factor for w in lot.wafers)
    assert (w1.value, w1.stderr, w1.value_key) == (1.15, 0.05, "measurement.hall_factor")
    assert (w2.value, w2.stderr) == (0.75, 0.05)
    assert (w2.value_key, w2.stderr_key) == ("wafer[2].hall_factor",
                                             "measurement.hall_factor_uncertainty")
    # u(r_H)/r_H: 0.05 / 1.15 = 0.043478 (by hand)
    assert w1.relative_uncertainty == pytest.approx(0.043478, rel=1e-4)
    assert lot.to_dict()["measurement"]["value"] == 1.15
    assert lot.to_dict()["wafers"][1]["hall_factor"]["value"] == 0.75
    # an uncertainty given only where a wafer states its own r_H is fine
    text = HEAD + CLAIMS + WAFERS.replace(
        'id = "W02"', 'id = "W02"\nhall_factor = 1.1\nhall_factor_uncertainty = 0.1')
    w2 = load_lot(write(lotdir, text)).wafers[1].hall_factor
    assert (w2.value, w2.stderr) == (1.1, 0.1)


def test_errors_carry_the_line(lotdir):
    text = HEAD + CLAIMS + WAFERS
    bad = text.replace("max = 12.0", "maximum = 12.0")
    e = err(lotdir, bad)
    assert e.line == bad.splitlines().index("maximum = 12.0") + 1
    assert f"line {e.line}" in str(e) and "claim[2].maximum" in str(e)
    e = err(lotdir, text.replace("[decision]", "[decision"))
    assert "not valid TOML" in e.message and e.line == 5


def test_empty_or_missing_sections(lotdir):
    assert "[[claim]]" in err(lotdir, HEAD + WAFERS).message
    assert "[[wafer]]" in err(lotdir, HEAD + CLAIMS).message
    assert "[decision]" in err(lotdir, HEAD.replace('[decision]\nrule = "guarded"\n', "")
                               + CLAIMS + WAFERS).message
    # a top-level empty array (before any table header)
    empty = HEAD.replace("[decision]", "claim = []\n\n[decision]") + WAFERS
    assert "at least one" in err(lotdir, empty).message
    with pytest.raises(InputError, match="lot file not found"):
        load_lot(lotdir / "absent.toml")


def test_input_hash_covers_runs_but_not_location(lotdir, tmp_path_factory):
    p = write(lotdir, HEAD + CLAIMS + WAFERS)
    h = lot_input_sha256(load_lot(p))
    assert len(h) == 64
    moved = tmp_path_factory.mktemp("moved") / "lot"
    shutil.copytree(lotdir, moved)
    assert lot_input_sha256(load_lot(moved / "lot.toml")) == h
    (moved / "runs" / "w02.csv").write_text("# synthetic placeholder, edited\n")
    assert lot_input_sha256(load_lot(moved / "lot.toml")) != h


# ---------------------------------------------------------------------------------------------
# evaluation of claims against measured quantities


def measured(n=5.0e14, u=5.0e12, carrier="n", rho=None, material="Si", comp=None):
    """A synthetic Measurement; ``rho`` one point's dict or a list of them."""
    points = [] if rho is None else [rho] if isinstance(rho, dict) else rho
    return Measurement(material=material, carrier=carrier, net_doping=n, net_doping_stderr=u,
                       resistivity=tuple(ResistivityPoint(**p) for p in points),
                       compensation_ratio=comp)


def lot_of(lotdir, claims=CLAIMS, rule="guarded"):
    return load_lot(write(lotdir, HEAD.replace("guarded", rule) + claims + WAFERS))


def test_net_doping_compared_directly(lotdir):
    lot = lot_of(lotdir)
    c = lot.claims[2]  # 4.5e14 .. 5.5e14 cm^-3
    # y = 5e14, u = 5e12 -> U = 1e13; y +- U = 4.9e14 .. 5.1e14 inside; margin 5e13/1e13 = +5
    v = evaluate_claim(c, measured(), lot.decision)
    assert (v.verdict, v.measured, v.stderr, v.margin) == ("accept", 5e14, 5e12,
                                                            pytest.approx(5.0))
    # p-type fits report N_D - N_A < 0: the magnitude is compared
    assert evaluate_claim(c, measured(n=-5e14, carrier="p"), lot.decision).measured == 5e14
    # y = 5.45e14, U = 1e13 -> y + U = 5.55e14 > 5.5e14: straddles; margin 5e12/1e13 = +0.5
    v = evaluate_claim(c, measured(n=5.45e14), lot.decision)
    assert (v.verdict, v.margin) == ("indeterminate", pytest.approx(0.5))


def test_resistivity_by_f723_conversion_adds_its_uncertainty(lotdir):
    lot = lot_of(lotdir)
    c = lot.claims[1]  # resistivity 8..12 ohm cm, phosphorus, 296.15 K
    n, u = 5.0e14, 1.0e13  # 2 % relative
    v = evaluate_claim(c, measured(n, u), lot.decision)
    rho = silicon.resistivity_from_dopant_density(n, "phosphorus")  # ASTM F723 eq. (5), (6)
    assert v.measured == pytest.approx(rho)
    # u_rel = hypot(|slope| * 2 %, 4.5 %) with slope = d ln rho / d ln N (secant, +-1 %)
    up = silicon.resistivity_from_dopant_density(n * 1.01, "phosphorus")
    dn = silicon.resistivity_from_dopant_density(n / 1.01, "phosphorus")
    slope = math.log(up / dn) / (2 * math.log(1.01))
    assert v.stderr / v.measured == pytest.approx(math.hypot(slope * 0.02, 0.045), rel=1e-3)
    assert "ASTM F723" in v.method and any("4.5 %" in note for note in v.notes)
    # ASTM F723 eq. (5), (6) give 8.787 ohm cm; u = 8.787 * hypot(0.98 * 2 %, 4.5 %) = 0.431,
    # U = 0.862; y - U = 7.925 < 8 = T_L < y + U: straddles the lower limit -> indeterminate,
    # margin (8.787 - 8)/0.862 = +0.91. Without the 4.5 % the same wafer would be accepted
    # (U = 2 * 8.787 * 0.0196 = 0.345, y - U = 8.44 >= 8).
    assert v.measured == pytest.approx(8.787, abs=5e-4)
    assert (v.verdict, v.margin) == ("indeterminate", pytest.approx(0.913, abs=1e-3))


def test_measured_resistivity_near_the_claim_temperature_is_preferred(lotdir):
    lot = lot_of(lotdir)
    c = lot.claims[1]
    pts = [{"temperature_K": 77.0, "value": 2.0, "stderr": 0.01},
           {"temperature_K": 296.5, "value": 10.0, "stderr": 0.1}]
    # |296.5 - 296.15| = 0.35 K <= 1 K tolerance: used as measured, with the type-B term of
    # the uncorrected 0.35 K: 0.35 * 0.008 / sqrt(3) = 1.6166e-3 relative, 0.016166 ohm cm;
    # u = hypot(0.1, 0.016166) = 0.101298, U = 0.202597, margin 2 / 0.202597 = 9.8718 (by hand)
    v = evaluate_claim(c, measured(rho=pts), lot.decision)
    assert (v.measured, v.verdict) == (10.0, "accept")
    assert v.stderr == pytest.approx(0.101298, rel=1e-5)
    assert v.margin == pytest.approx(9.8718, rel=1e-4) and "296.50 K" in v.method
    assert any("0.162 %" in note and "no temperature correction" in note for note in v.notes)
    # too far (tolerance 0.2 K): the conversion is used instead
    v = evaluate_claim(c, measured(rho=pts), lot.decision, temperature_tolerance_K=0.2)
    assert "ASTM F723" in v.method
    # a measured point without uncertainty: conversion preferred, and a note says why
    v = evaluate_claim(c, measured(rho={"temperature_K": 296.2, "value": 10.0, "stderr": None}),
                       lot.decision)
    assert "ASTM F723" in v.method and any("no uncertainty" in s for s in v.notes)


def test_resistivity_claims_that_cannot_be_compared(lotdir):
    no_dopant = CLAIMS.replace('dopant = "phosphorus"\n', "")
    lot = lot_of(lotdir, no_dopant)
    with pytest.raises(InputError, match="needs a measured resistivity"):
        evaluate_claim(lot.claims[1], measured(), lot.decision, wafer_id="W01")
    # without a dopant, a measured point with unknown uncertainty is used (guarded: cannot
    # prove conformity -> indeterminate)
    v = evaluate_claim(lot.claims[1],
                       measured(rho={"temperature_K": 296.2, "value": 10.0, "stderr": None}),
                       lot.decision)
    assert (v.verdict, v.margin) == ("indeterminate", None)
    # F723 refers to 23 degC; a 77 K claim cannot use it
    cold = lot_of(lotdir, CLAIMS.replace("temperature_K = 296.15", "temperature_K = 77"))
    with pytest.raises(InputError, match="23 degC"):
        evaluate_claim(cold.claims[1], measured(), cold.decision)
    # F723 is for silicon (material from the measurement, e.g. a user material file)
    lot = lot_of(lotdir)
    with pytest.raises(InputError, match="for silicon"):
        evaluate_claim(lot.claims[1], measured(material="Ge"), lot.decision)


def test_conversion_outside_its_range_is_indeterminate(lotdir):
    lot = lot_of(lotdir)
    # 5e11 cm^-3 is below the F723 phosphorus density range (>= 1.02e12): cannot decide
    v = evaluate_claim(lot.claims[1], measured(n=5e11, u=1e10), lot.decision)
    assert v.verdict == "indeterminate" and "cannot be converted" in v.sentence


def test_conversion_caveats_are_noted(lotdir):
    warm = lot_of(lotdir, CLAIMS.replace("temperature_K = 296.15", "temperature_K = 300"))
    v = evaluate_claim(warm.claims[1], measured(n=-5e14, comp=0.3, carrier="p"),
                       warm.decision)
    text = " ".join(v.notes)
    assert "no temperature correction" in text
    assert "uncompensated" in text and "does not match phosphorus" in text


def test_type_claim_and_missing_measurements(lotdir):
    lot = lot_of(lotdir)
    assert evaluate_claim(lot.claims[0], measured(carrier="p"), lot.decision).verdict == "reject"
    with pytest.raises(InputError, match="no carrier type"):
        evaluate_claim(lot.claims[0], measured(carrier=None), lot.decision)
    with pytest.raises(InputError, match="no net doping"):
        evaluate_claim(lot.claims[2], Measurement(material="Si", carrier="n"), lot.decision)
    # a non-finite fitted uncertainty is "unknown", never replaced by an invented one
    v = evaluate_claim(lot.claims[2], measured(u=math.nan), lot.decision)
    assert v.stderr is None and v.verdict == "indeterminate"


def test_whole_lot(lotdir):
    text = HEAD + CLAIMS + WAFERS + '\n[[wafer]]\nid = "W03"\nmaterial = "Si"\nrun = ' \
        '"runs/w03.csv"\n'
    lot = load_lot(write(lotdir, text))
    # W01 accepted on everything (measured resistivity 10 +- 0.1 at 296.2 K);
    # W02 rejected on type; W03 indeterminate on net doping (5.45e14, U = 1e13, see above)
    rho = {"temperature_K": 296.2, "value": 10.0, "stderr": 0.1}
    data = {"W01": measured(rho=rho), "W02": measured(carrier="p", rho=rho),
            "W03": measured(n=5.45e14, rho=rho)}
    v = evaluate_lot(lot, data)
    assert [w.verdict for w in v.wafers] == ["accept", "reject", "indeterminate"]
    assert (v.verdict, v.decided_by_wafer, v.decided_by_claim) == ("reject", "W02", "claim[1]")
    # without W02's rejection the lot is indeterminate, decided by W03's net doping claim
    v = evaluate_lot(lot, data, unmeasured={"W02": "fit failed (synthetic)"})
    assert v.verdict == "indeterminate"
    assert v.wafers[1].verdict == "indeterminate"
    w = evaluate_wafer("W01", measured(rho=rho), lot.claims, lot.decision)
    assert w.verdict == "accept"
    with pytest.raises(InputError) as info:
        evaluate_lot(lot, {"W01": data["W01"]})
    assert info.value.column == "wafer[2]" and info.value.file == str(lot.path)


def test_simple_rule_lot(lotdir):
    lot = lot_of(lotdir, rule="simple")
    # simple rule: y = 5.45e14 inside 4.5e14..5.5e14 -> accept, margin still +0.5 U
    v = evaluate_claim(lot.claims[2], measured(n=5.45e14), lot.decision)
    assert (v.verdict, v.margin) == ("accept", pytest.approx(0.5))
    assert parse_lot(HEAD.replace("guarded", "simple") + CLAIMS + WAFERS,
                     lotdir / "lot.toml").decision.rule == "simple"


def test_a_claim_that_cannot_be_compared_is_located_on_its_line(lotdir):
    # evaluate_lot names the lot file, and the line of the claim's [[claim]] header
    cold = lot_of(lotdir, CLAIMS.replace("temperature_K = 296.15", "temperature_K = 77"))
    wafers = {w.wafer_id: measured() for w in cold.wafers}
    with pytest.raises(InputError, match="23 degC") as info:
        evaluate_lot(cold, wafers)
    e = info.value
    lines = cold.path.read_text().splitlines()
    headers = [i + 1 for i, line in enumerate(lines) if line.strip() == "[[claim]]"]
    assert e.column == "claim[2]" and e.line == headers[1] and e.file == str(cold.path)
