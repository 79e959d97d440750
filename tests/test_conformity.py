"""Decision rules with measurement uncertainty (JCGM 106:2012, ISO 14253-1:2017).

The numbers are our own (not JCGM 106's worked examples); each case carries its guard-band
arithmetic checked by hand. Rule statements: JCGM 106:2012 acceptance limits A_L = T_L + w,
A_U = T_U - w with w = U for guarded and w = 0 for simple acceptance; ISO 14253-1:2017
conformity proven for T_L + U <= y <= T_U - U, nonconformity proven for y <= T_L - U or
y >= T_U + U (limits inclusive; clause numbers not cited, from memory only).
"""

from __future__ import annotations

import json
import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.stats import norm

from freezeout.claims.aggregate import aggregate_lot, aggregate_wafer
from freezeout.claims.decide import conformance_probability, decide, decide_type
from freezeout.records.verdicts import DEFERENCE, SpecWindow

W = SpecWindow(8.0, 12.0, unit="ohm cm")  # specification 8 to 12 ohm cm


def test_conformance_probability_worked_number():
    # JCGM 106:2012 p_c = Phi((T_U - y)/u) - Phi((T_L - y)/u) for a normal PDF.
    # spec 8..12, y = 11.5, u = 0.25: (12 - 11.5)/0.25 = 2, (8 - 11.5)/0.25 = -14,
    # p_c = Phi(2) - Phi(-14) = 0.97725 (standard normal table: Phi(2) = 0.97725).
    assert conformance_probability(11.5, 0.25, 8.0, 12.0) == pytest.approx(0.97725, abs=5e-6)
    # same against an independent implementation (scipy)
    assert conformance_probability(11.5, 0.25, 8.0, 12.0) == pytest.approx(
        norm.cdf(2.0) - norm.cdf(-14.0), rel=1e-12)
    # one-sided (upper limit only): Phi(2)
    assert conformance_probability(11.5, 0.25, None, 12.0) == pytest.approx(norm.cdf(2.0))
    # on a limit of a wide window: Phi(0) - Phi(-16) = 0.5
    assert conformance_probability(12.0, 0.25, 8.0, 12.0) == pytest.approx(0.5, abs=1e-12)


@pytest.mark.parametrize(("y", "lower", "upper"), [(20.0, 8.0, 12.0), (0.0, 8.0, 12.0)])
def test_conformance_probability_far_outside_keeps_precision(y, lower, upper):
    # y = 20: Phi(-32) - Phi(-48); y = 0: Phi(48) - Phi(32) = sf(32) - sf(48) ~ 2.6e-225,
    # which a naive 1 - 1 would lose. Reference: scipy.stats.norm.sf.
    p = conformance_probability(y, 0.25, lower, upper)
    assert p > 0
    assert p == pytest.approx(norm.sf(32.0) - norm.sf(48.0), rel=1e-9)


# (y, u, k, expected guarded verdict, expected simple verdict, expected margin in U)
CASES = [
    # U = 2 * 0.5 = 1.0; y - U = 9 >= 8 and y + U = 11 <= 12: inside; margin min(2, 2)/1 = +2
    (10.0, 0.5, 2.0, "accept", "accept", 2.0),
    # U = 0.5; y + U = 12.0 = T_U exactly (inclusive): accept; margin (12 - 11.5)/0.5 = +1
    (11.5, 0.25, 2.0, "accept", "accept", 1.0),
    # U = 0.5; y + U = 12.25 > 12 > y - U = 11.25: straddles; margin 0.25/0.5 = +0.5;
    # simple: 11.75 inside 8..12 -> accept
    (11.75, 0.25, 2.0, "indeterminate", "accept", 0.5),
    # U = 0.5; y - U = 11.75 < 12 < y + U: straddles; margin (12 - 12.25)/0.5 = -0.5;
    # simple: 12.25 > 12 -> reject
    (12.25, 0.25, 2.0, "indeterminate", "reject", -0.5),
    # U = 0.5; y - U = 12.0 >= T_U (inclusive, ISO 14253-1 y >= USL + U): reject; margin -1
    (12.5, 0.25, 2.0, "reject", "reject", -1.0),
    # U = 0.5; y + U = 7.5 <= 8 = T_L: wholly below; margin (7 - 8)/0.5 = -2
    (7.0, 0.25, 2.0, "reject", "reject", -2.0),
    # k = 3: U = 1.2; y + U = 12.2 > 12: straddles; margin (12 - 11)/1.2 = +0.8333
    (11.0, 0.4, 3.0, "indeterminate", "accept", 1.0 / 1.2),
    # k = 2: U = 0.8; y + U = 11.8 <= 12, y - U = 10.2 >= 8: accept; margin 1/0.8 = +1.25
    (11.0, 0.4, 2.0, "accept", "accept", 1.25),
    # U = 3 exceeds half the tolerance width (2): the acceptance zone [11, 9] is empty, so even
    # the centre y = 10 (7..13 straddles both limits) is indeterminate; margin 2/3
    (10.0, 1.5, 2.0, "indeterminate", "accept", 2.0 / 3.0),
]


@pytest.mark.parametrize(("y", "u", "k", "guarded", "simple", "margin"), CASES)
def test_guard_band_arithmetic(y, u, k, guarded, simple, margin):
    g = decide(y, u, W, rule="guarded", coverage_factor=k, quantity="resistivity")
    s = decide(y, u, W, rule="simple", coverage_factor=k, quantity="resistivity")
    assert g.verdict == guarded
    assert s.verdict == simple
    assert g.margin == pytest.approx(margin, rel=1e-12)
    assert s.margin == pytest.approx(margin, rel=1e-12)  # margin does not depend on the rule
    assert g.expanded == pytest.approx(k * u)
    assert g.conformance_probability == pytest.approx(
        norm.cdf((12.0 - y) / u) - norm.cdf((8.0 - y) / u), abs=1e-12)
    assert guarded in g.sentence and f"{margin:+.2f} U" in g.sentence


def test_one_sided_windows():
    # max only 12: y = 3, u = 1, k = 2 -> U = 2, y + U = 5 <= 12: accept; margin (12-3)/2 = 4.5
    v = decide(3.0, 1.0, SpecWindow(None, 12.0), rule="guarded")
    assert (v.verdict, v.margin) == ("accept", pytest.approx(4.5))
    assert v.conformance_probability == pytest.approx(norm.cdf(9.0))
    # min only 1e15 cm^-3: y = 1.1e15, u = 4e13 -> U = 8e13, y - U = 1.02e15 >= 1e15: accept;
    # margin (1.1e15 - 1e15)/8e13 = 1.25
    v = decide(1.1e15, 4e13, SpecWindow(1e15, None, unit="cm^-3"), rule="guarded")
    assert (v.verdict, v.margin) == ("accept", pytest.approx(1.25))
    # min only 1e15: y = 9.5e14, u = 4e13 -> U = 8e13, y + U = 1.03e15 > 1e15: straddles;
    # margin -5e13/8e13 = -0.625
    v = decide(9.5e14, 4e13, SpecWindow(1e15, None, unit="cm^-3"), rule="guarded")
    assert (v.verdict, v.margin) == ("indeterminate", pytest.approx(-0.625))


def test_unknown_or_zero_uncertainty():
    # unknown u: guarded acceptance cannot prove conformity; simple still decides on y
    g = decide(10.0, None, W, rule="guarded")
    assert g.verdict == "indeterminate" and g.margin is None and g.expanded is None
    s = decide(10.0, None, W, rule="simple")
    assert s.verdict == "accept" and s.margin is None and s.conformance_probability is None
    # u = 0: U = 0, guarded reduces to simple; margin undefined (division by U)
    z = decide(12.0, 0.0, W, rule="guarded")
    assert z.verdict == "accept" and z.margin is None and z.conformance_probability is None
    assert decide(12.1, 0.0, W, rule="guarded").verdict == "reject"


def test_bad_arguments():
    with pytest.raises(ValueError):
        decide(10.0, 0.1, W, rule="lenient")
    with pytest.raises(ValueError):
        decide(10.0, -0.1, W, rule="guarded")
    with pytest.raises(ValueError):
        decide(math.nan, 0.1, W, rule="guarded")
    with pytest.raises(ValueError):
        decide(10.0, 0.1, W, rule="guarded", coverage_factor=0.0)


def test_spec_windows():
    # 10 ohm cm +- 10 %: 9 to 11; 10 +- 0.5 (absolute): 9.5 to 10.5
    w = SpecWindow.from_nominal(10.0, 10.0, percent=True)
    assert (w.lower, w.upper, w.nominal) == (pytest.approx(9.0), pytest.approx(11.0), 10.0)
    w = SpecWindow.from_nominal(10.0, 0.5)
    assert (w.lower, w.upper) == (9.5, 10.5)
    assert w.reference() == 10.0
    assert SpecWindow(8.0, 12.0).reference() == 10.0
    assert SpecWindow(None, 12.0).reference() == 12.0
    for bad in (lambda: SpecWindow(12.0, 8.0), lambda: SpecWindow(8.0, 8.0),
                lambda: SpecWindow(None, None), lambda: SpecWindow.from_nominal(10.0, 0.0),
                lambda: SpecWindow.from_nominal(10.0, -1.0)):
        with pytest.raises(ValueError):
            bad()


@settings(max_examples=300, deadline=None)
@given(
    y=st.floats(min_value=0.0, max_value=20.0),
    u=st.floats(min_value=1e-3, max_value=3.0),
    k=st.sampled_from([1.0, 2.0, 3.0]),
)
def test_rules_are_consistent(y, u, k):
    # JCGM 106:2012: guarded acceptance limits lie inside the tolerance limits, so a guarded
    # acceptance is a simple acceptance and a guarded rejection is a simple rejection; simple
    # acceptance never says indeterminate. ISO 14253-1: margin >= 1 proves conformity,
    # margin <= -1 proves nonconformity (margin = signed distance to nearest limit over U).
    g = decide(y, u, W, rule="guarded", coverage_factor=k)
    s = decide(y, u, W, rule="simple", coverage_factor=k)
    assert s.verdict in ("accept", "reject")
    if g.verdict == "accept":
        assert s.verdict == "accept"
        assert g.margin >= 1 - 1e-9
    elif g.verdict == "reject":
        assert s.verdict == "reject"
        assert g.margin <= -1 + 1e-9
    else:
        assert -1 - 1e-9 <= g.margin <= 1 + 1e-9
    assert (s.verdict == "accept") == (8.0 <= y <= 12.0)
    assert 0.0 <= g.conformance_probability <= 1.0


def test_type_claims_have_no_uncertainty():
    # common practice, no source: the conductivity type is the sign of the Hall coefficient
    a = decide_type("n", "n", rule="guarded")
    r = decide_type("p", "n", rule="guarded")
    assert (a.verdict, r.verdict) == ("accept", "reject")
    assert a.stderr is None and a.margin is None and a.conformance_probability is None
    assert "no uncertainty" in r.sentence
    with pytest.raises(ValueError):
        decide_type("x", "n", rule="simple")


def _wafer(wid, *verdicts):
    return aggregate_wafer(wid, list(verdicts))


def test_wafer_and_lot_aggregation():
    # guard-band arithmetic as in CASES (spec 8..12, k = 2)
    ok = decide(10.0, 0.5, W, rule="guarded", claim_key="claim[1]", quantity="resistivity")
    near = decide(11.5, 0.25, W, rule="guarded", claim_key="claim[1]", quantity="resistivity")
    maybe = decide(11.75, 0.25, W, rule="guarded", claim_key="claim[1]", quantity="resistivity")
    bad = decide(13.0, 0.25, W, rule="guarded", claim_key="claim[1]", quantity="resistivity")
    worse = decide(14.0, 0.25, W, rule="guarded", claim_key="claim[1]", quantity="resistivity")
    t_ok = decide_type("n", "n", rule="guarded", claim_key="claim[2]")
    t_bad = decide_type("p", "n", rule="guarded", claim_key="claim[2]")

    w1 = _wafer("W01", ok, t_ok)  # margins +2 and none -> accept, closest claim[1]
    assert (w1.verdict, w1.decided_by, w1.margin) == ("accept", "claim[1]", 2.0)
    w2 = _wafer("W02", maybe, t_ok)
    assert (w2.verdict, w2.decided_by) == ("indeterminate", "claim[1]")
    w3 = _wafer("W03", bad, t_ok)  # (12 - 13)/0.5 = -2
    assert (w3.verdict, w3.margin) == ("reject", -2.0)
    w4 = _wafer("W04", worse, t_ok)  # (12 - 14)/0.5 = -4
    w5 = _wafer("W05", ok, t_bad)
    assert (w5.verdict, w5.decided_by, w5.margin) == ("reject", "claim[2]", None)
    w6 = _wafer("W06", near, t_ok)

    meta = {"lot": "KRW-0001", "supplier": "Kestrel Ridge Wafers", "date": "2026-11-03",
            "rule": "guarded", "coverage_factor": 2.0}
    # any wafer rejected -> lot rejected; decided by the worst rejection (most negative margin)
    lot = aggregate_lot([w1, w2, w3, w4], **meta)
    assert (lot.verdict, lot.decided_by_wafer, lot.decided_by_claim) == ("reject", "W04",
                                                                         "claim[1]")
    assert lot.margin == -4.0
    assert lot.counts() == {"accept": 1, "indeterminate": 1, "reject": 2}
    # a type rejection carries no margin and ranks as the worst rejection
    assert aggregate_lot([w3, w5], **meta).decided_by_wafer == "W05"
    # none rejected, one indeterminate -> indeterminate
    lot = aggregate_lot([w1, w2, w6], **meta)
    assert (lot.verdict, lot.decided_by_wafer) == ("indeterminate", "W02")
    # all accepted -> accepted, the closest wafer named (W06, margin +1)
    lot = aggregate_lot([w1, w6], **meta)
    assert (lot.verdict, lot.decided_by_wafer, lot.margin) == ("accept", "W06", 1.0)
    assert DEFERENCE in lot.sentence
    with pytest.raises(ValueError):
        aggregate_lot([], **meta)


def test_lot_json_has_the_documented_shape():
    v = decide(10.0, 0.5, W, rule="guarded", claim_key="claim[1]", quantity="resistivity")
    lot = aggregate_lot([_wafer("W01", v)], lot="KRW-0001", supplier="Kestrel Ridge Wafers",
                        date="2026-11-03", rule="guarded", coverage_factor=2.0)
    d = json.loads(json.dumps(lot.to_dict(), allow_nan=False))
    assert {"lot", "supplier", "verdict", "wafers"} <= d.keys()
    c = d["wafers"][0]["claims"][0]
    assert d["wafers"][0]["id"] == "W01" and d["wafers"][0]["verdict"] == "accept"
    assert c["quantity"] == "resistivity" and c["verdict"] == "accept"
    assert c["measured"] == {"value": 10.0, "stderr": 0.5}
    assert c["margin_U"] == 2.0 and c["spec"] == {"min": 8.0, "max": 12.0, "nominal": None,
                                                   "unit": "ohm cm"}
    assert d["deference"] == DEFERENCE


@pytest.mark.parametrize(("k", "lower", "upper", "verdict"), [
    (2.0, 0.1, 0.5, "accept"),  # y - U = 0.3 - 0.2 = 0.1, the inclusive lower limit
    (3.0, 0.6, 0.9, "reject"),  # y + U = 0.3 + 0.3 = 0.6, on the lower limit from below
    (2.0, 0.1000001, 0.5, "indeterminate"),  # just past it: straddles
])
def test_a_guard_that_ends_on_an_inclusive_limit_decides_as_the_rule_says(k, lower, upper,
                                                                            verdict):
    """JCGM 106:2012, 8.3.2 (guarded acceptance; the acceptance limits inclusive, as the
    window): in decimal, 0.3 - 2 x 0.1 is exactly the limit 0.1; in binary floating point it
    is 0.09999999999999998, which must not turn an accept into indeterminate."""
    w = SpecWindow(lower, upper, unit="ohm cm")
    got = decide(0.3, 0.1, w, rule="guarded", coverage_factor=k, quantity="resistivity")
    assert got.verdict == verdict
