"""The measured quantities of a single room-temperature result, through the library.

Every run here is an invented single point (synthetic), built in memory; the lot is one of the
fictional supplier "Kestrel Ridge Wafers". Expected numbers are worked by hand in the comments;
n_i is the tool's own (material model), not a published value.
"""

from __future__ import annotations

import math
import textwrap

import numpy as np
import pytest

from freezeout.claims.dopants import net_doping_dopants
from freezeout.claims.lot_reader import load_lot
from freezeout.claims.room_point import ROOM_TEMPERATURE_RANGE_K, room_point_measurement
from freezeout.errors import InputError
from freezeout.physics.materials import get_material
from freezeout.records.measurement import HallFactorUsed, Measurement, ResistivityPoint
from freezeout.records.run import RunData

T23 = 296.15
SI = get_material("Si")


def point(density=8.0e14, err=8.0e12, carrier="n", t=T23, rho=5.0, rho_err=0.05,
          severe=False, scale=0.0, notes=()) -> RunData:
    """A synthetic one-point run."""
    def arr(x):
        return None if x is None else np.array([x], dtype=float)

    return RunData(source="/tmp/synthetic/r.csv", sha256="0" * 64, temperature=arr(t),
                   density=arr(density), density_err=arr(err), carrier=carrier,
                   point_carrier=(carrier,), resistivity=arr(rho), resistivity_err=arr(rho_err),
                   severe=np.array([severe]), notes=tuple(notes), scale_uncertainty=scale)


def test_net_doping_of_an_n_type_point():
    m = 8.0e14
    ni = float(SI.intrinsic_density(T23))  # ~6.3e9 cm^-3 in the tool's model
    got = room_point_measurement(point(notes=("synthetic note",)), SI,
                                 dopants=("phosphorus",))
    assert isinstance(got, Measurement)
    # net doping m - n_i^2/m (charge neutrality with n p = n_i^2, every dopant ionized;
    # S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed., Sec. 1.4; from memory)
    assert got.net_doping == pytest.approx(m - ni * ni / m, rel=1e-12)
    # u = hypot(u_m, 0) (1 + n_i^2/m^2) = 8e12 to within 1e-10 relative (by hand)
    assert got.net_doping_stderr == pytest.approx(8.0e12, rel=1e-9)
    assert (got.material, got.carrier, got.source) == ("Si", "n", "r.csv")
    assert got.net_doping_method == ("majority carrier density at 296.15 K (single "
                                     "room-temperature result)")
    assert got.resistivity == (ResistivityPoint(T23, 5.0, 0.05),)
    assert got.compensation_ratio is None
    assert got.hall_factor == HallFactorUsed(1.0, 0.0, "default")
    # phosphorus at 8e14 cm^-3 is more than 99 % ionized at 296 K: the check passes
    check = got.ionization["phosphorus"]
    assert check.reason is None and check.fraction > 0.99
    assert got.warnings[0].startswith("single room-temperature result: net doping")
    assert "Hall factor r_H = 1 (default)." in got.warnings[0]
    assert got.warnings[1] == "synthetic note"


def test_p_type_point_is_signed_negative_and_keeps_the_lot_hall_factor():
    hall = HallFactorUsed(1.15, 0.05, "lot file measurement.hall_factor")
    got = room_point_measurement(point(carrier="p"), SI, dopants=("boron", None),
                                 hall_factor=hall)
    assert got.net_doping < 0 and got.hall_factor is hall
    # one check per dopant named, "" for none named
    assert set(got.ionization) == {"boron", ""}
    assert "knows boron and phosphorus" in got.ionization[""].reason
    assert "r_H = 1.15 (lot file measurement.hall_factor)" in got.warnings[0]


def test_common_scale_uncertainty_is_added():
    # s = 0.02 common, u_m = 1 % of 1e15: u = hypot(1e13, 2e13) = 2.23607e13 (by hand)
    got = room_point_measurement(point(density=1e15, err=1e13, scale=0.02), SI)
    assert got.net_doping_stderr == pytest.approx(math.hypot(1e13, 2e13), rel=1e-9)
    assert "2 % common to every point" in got.warnings[0]


def test_unknown_uncertainties_and_unusable_resistivity():
    got = room_point_measurement(point(err=math.nan, rho=-1.0), SI)
    assert got.net_doping_stderr is None and got.resistivity == ()
    got = room_point_measurement(point(rho_err=math.inf), SI)
    assert got.resistivity == (ResistivityPoint(T23, 5.0, None),)


@pytest.mark.parametrize(("run", "words"), [
    (point(t=77.0), r"not a room-temperature result \(250 to 350 K\)"),
    (point(severe=True), "failed a severe data-quality check"),
    (point(density=1e9), "does not exceed the intrinsic density"),
])
def test_points_that_give_no_net_doping(run, words):
    assert ROOM_TEMPERATURE_RANGE_K == (250.0, 350.0)  # project choice, no source
    with pytest.raises(InputError, match=words) as info:
        room_point_measurement(run, SI)
    assert info.value.file == "r.csv"


LOT = """\
supplier = "Kestrel Ridge Wafers"
lot = "KRW-TEST-RP"
date = 2026-11-03

[decision]
rule = "guarded"

[[claim]]
quantity = "type"
value = "n"
{more}
[[wafer]]
id = "W01"
material = "Si"
run = "w01.csv"
"""

RHO_P = """
[[claim]]
quantity = "resistivity"
min = 4.0
max = 6.0
unit = "ohm cm"
dopant = "phosphorus"
temperature_K = 296.15
"""

NET = """
[[claim]]
quantity = "net_doping"
min = 1e14
unit = "cm^-3"
"""


@pytest.mark.parametrize(("more", "expected"), [
    ("", [None]),                         # no claim rests on a net doping
    (NET, [None]),                        # net doping, no dopant named anywhere
    (RHO_P + NET, ["phosphorus"]),        # the resistivity claim names it for both
    (NET.replace('unit = "cm^-3"', 'unit = "cm^-3"\ndopant = "arsenic"'), ["arsenic"]),
])
def test_net_doping_dopants(tmp_path, more, expected):
    (tmp_path / "w01.csv").write_text("# synthetic placeholder\n")
    p = tmp_path / "lot.toml"
    p.write_text(textwrap.dedent(LOT.format(more=more)))
    assert net_doping_dopants(load_lot(p)) == expected
