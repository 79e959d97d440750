"""The command line: exact forms, exit codes, --json against the API, bad input."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

import freezeout
from cli_runner import cli


@pytest.fixture
def sim_csv(tmp_path, monkeypatch, capsys):
    p = tmp_path / "sim.csv"
    code, _, _ = cli(monkeypatch, capsys, "simulate", "--material", "Si", "--donor",
                     "1e16,0.045", "--acceptor", "1e14,none", "--temperatures", "20:600:40",
                     "--out", p)
    assert code == 0
    return p


def test_simulate_columns(sim_csv):
    lines = [ln for ln in sim_csv.read_text().splitlines() if not ln.startswith("#")]
    assert lines[0].split(",")[:4] == ["T [K]", "n [cm^-3]", "p [cm^-3]", "E_F - E_v [eV]"]
    assert "ionized donor 1 [1]" in lines[0] and len(lines) == 41
    t = [float(ln.split(",")[0]) for ln in lines[1:]]
    inv = [1000 / x for x in t]
    steps = [inv[i] - inv[i + 1] for i in range(len(inv) - 1)]
    assert max(steps) - min(steps) < 1e-9  # evenly spaced in 1000/T


def test_fit_json_equals_api(sim_csv, monkeypatch, capsys, tmp_path):
    code, out, _ = cli(monkeypatch, capsys, "fit", sim_csv, "--material", "Si", "--donors", 1,
                       "--acceptors", 1, "--statistics", "fermi-dirac", "--hall-factor", 1,
                       "--json")
    assert code == 0
    printed = json.loads(out)
    api = freezeout.fit_file(sim_csv, material="Si", donors=1, acceptors=1,
                             statistics="fermi-dirac", hall_factor=1.0).to_dict()
    assert printed == json.loads(json.dumps(api))
    assert printed["carrier"] == "n"
    assert printed["levels"][0]["energy_eV"]["value"] == pytest.approx(0.045, rel=1e-6)


def test_fit_writes_report(sim_csv, monkeypatch, capsys, tmp_path):
    out_dir = tmp_path / "rep"
    code, out, _ = cli(monkeypatch, capsys, "fit", sim_csv, "--out", out_dir)
    assert code == 0 and "report" in out
    for name in ("fit.json", "report.html", "density.png", "residuals.png", "fermi_level.png",
                 "ionization.png"):
        assert (out_dir / name).stat().st_size > 1000
    html = (out_dir / "report.html").read_text()
    assert "data:image/png;base64," in html and "sha256" in html
    assert not list(out_dir.glob(".*.tmp"))


def test_fit_material_file(sim_csv, monkeypatch, capsys, tmp_path):
    m = tmp_path / "si_copy.toml"
    m.write_text('name = "Si-copy"\nband_gap_0K_eV = 1.17\nvarshni_alpha_eV_per_K = 4.73e-4\n'
                 'varshni_beta_K = 636.0\nelectron_dos_mass = 1.18\nhole_dos_mass = 0.81\n')
    code, out, _ = cli(monkeypatch, capsys, "fit", sim_csv, "--material-file", m, "--json")
    assert code == 0 and json.loads(out)["material"]["name"] == "Si-copy"


def test_materials_command(monkeypatch, capsys):
    code, out, _ = cli(monkeypatch, capsys, "materials")
    assert code == 0 and "4H-SiC" in out and "GaN" in out
    code, out, _ = cli(monkeypatch, capsys, "materials", "GaAs")
    assert code == 0 and "Blakemore" in out
    code, _, err = cli(monkeypatch, capsys, "materials", "Unobtainium")
    assert code == 2 and "unknown material" in err


@pytest.mark.parametrize(
    ("args", "match"),
    [
        (["fit", "missing.csv"], "cannot read file"),
        (["fit", "{sim}", "--statistics", "maxwell"], "unknown statistics"),
        (["fit", "{sim}", "--material", "Unobtainium"], "unknown material"),
        (["fit", "{sim}", "--fix", "E_D1"], "NAME=VALUE"),
        (["fit", "{sim}", "--fix", "E_Q=0.1"], "unknown parameter"),
        (["fit", "{sim}", "--hall-factor", "-1"], "Hall factor"),
        (["simulate", "--temperatures", "20:10:5", "--donor", "1e16,0.045"], "TMIN < TMAX"),
        (["simulate", "--temperatures", "20:300:x"], "whole number"),
        (["simulate", "--temperatures", "20:300:10", "--donor", "1e16"], "CONC,ENERGY"),
        (["fit", "{bad}"], "line 3"),
    ],
)
def test_bad_input_exit_2_without_traceback(args, match, sim_csv, tmp_path, monkeypatch,
                                            capsys):
    bad = tmp_path / "bad.csv"
    bad.write_text("T [K],n [cm^-3]\n300,1e16\n200,oops\n")
    args = [a.format(sim=sim_csv, bad=bad) for a in args]
    code, _, err = cli(monkeypatch, capsys, *args)
    assert code == 2
    assert match in err and "Traceback" not in err


def test_help_is_fast_and_console_script():
    """The console script runs; --help does not import the numerical stack."""
    out = subprocess.run([sys.executable, "-c",
                          "import sys; from freezeout.cli.app import app; "
                          "print('numpy' in sys.modules, 'matplotlib' in sys.modules)"],
                         capture_output=True, text=True, check=True)
    assert out.stdout.split() == ["False", "False"]
    r = subprocess.run([sys.executable, "-m", "freezeout.cli.app", "--help"],
                       capture_output=True, text=True)
    assert r.returncode == 0 and "fit" in r.stdout and "simulate" in r.stdout


def test_simulate_json_equals_api(monkeypatch, capsys):
    code, out, _ = cli(monkeypatch, capsys, "simulate", "--material", "GaN", "--acceptor",
                       "2e19,0.17,4", "--donor", "3e17,none", "--temperatures", "150:700:12",
                       "--json")
    assert code == 0
    api = freezeout.simulate("GaN", acceptors=[(2e19, 0.17, 4)], donors=[(3e17, None)],
                             temperatures=(150, 700, 12)).to_dict()
    assert json.loads(out) == json.loads(json.dumps(api))


def test_fit_failure_exit_1(sim_csv, monkeypatch, capsys):
    from freezeout import api
    from freezeout.errors import FitError

    def broken(*a, **k):
        raise FitError("no starting point gave a finite fit", optimizer_message="diverged")

    monkeypatch.setattr(api, "fit_file", broken)
    code, _, err = cli(monkeypatch, capsys, "fit", sim_csv)
    assert code == 1 and "fit failed" in err and "diverged" in err


def test_report_does_not_clobber_on_failure(sim_csv, monkeypatch, capsys, tmp_path):
    """A report folder from an earlier run is left whole when a later run fails on bad
    input (outputs are written to a temporary file and renamed only when complete)."""
    out_dir = tmp_path / "rep"
    assert cli(monkeypatch, capsys, "fit", sim_csv, "--out", out_dir)[0] == 0
    before = (out_dir / "fit.json").read_bytes()
    bad = tmp_path / "bad.csv"
    bad.write_text("T [K],n [cm^-3]\n300,1e16\n200\n")
    assert cli(monkeypatch, capsys, "fit", bad, "--out", out_dir)[0] == 2
    assert (out_dir / "fit.json").read_bytes() == before
