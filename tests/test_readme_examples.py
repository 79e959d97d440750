"""The README's examples against the bundled sample files.

Every ``sample_data`` path the README names exists; every ``freezeout`` command line in it that
names a sample file runs (in a temporary copy of ``sample_data``, so nothing is written into
the repository) with the exit code the README gives; the example rows it quotes from sample
files are in those files to the README's rounding; the figures it quotes from the sample runs
still hold; the usage synopsis names only options the commands have; the safety cautions and
the licence are there. The README is the reference here: project choice, no source.
"""

from __future__ import annotations

import contextlib
import io
import re
import shlex
import shutil
import sys
import tomllib
from pathlib import Path

import pytest

from freezeout.cli.app import main

ROOT = Path(__file__).resolve().parents[1]
README = ROOT / "README.md"
TEXT = README.read_text(encoding="utf-8")
PROSE = " ".join(TEXT.split())  # whitespace-normalized, for sentences broken across lines
BLOCKS = re.findall(r"^```(\w*)\n(.*?)^```", TEXT, re.S | re.M)
SAMPLE_PATH = re.compile(r"sample_data/[\w.\-/$]+")
LOOP = re.compile(r"for (\w+) in ([^;]+); do (.+?); done")


def _segments(line: str) -> list[str]:
    """The shell command segments of one line, ``for`` loops expanded."""
    loop = LOOP.search(line)
    if loop:
        var, values, body = loop.groups()
        rest = (line[:loop.start()] + line[loop.end():]).strip()
        expanded = [body.replace(f"${var}", v) for v in values.split()]
        return expanded + (_segments(rest) if rest else [])
    return [s.strip() for s in re.split(r"&&|;", line) if s.strip()]


def _freezeout_commands(body: str) -> list[list[str]]:
    """Every ``freezeout ...`` command in a shell block, as argv lists."""
    out = []
    for line in body.splitlines():
        for seg in _segments(line):
            argv = shlex.split(seg, comments=True)
            if argv and argv[0] == "time":
                argv = argv[1:]
            if argv and argv[0] == "freezeout":
                out.append(argv)
    return out


SHELL_BLOCKS = [body for lang, body in BLOCKS if lang in ("bash", "sh", "shell", "console")]
INLINE = [" ".join(c.split()) for c in re.findall(r"`([^`]+)`", re.sub(r"^```.*?^```", "", TEXT,
                                                                      flags=re.S | re.M))]
INLINE = [c for c in INLINE if re.match(r"(time )?freezeout ", c)]
SAMPLE_COMMANDS = [argv for body in SHELL_BLOCKS for argv in _freezeout_commands(body)
                   if any("sample_data/" in a for a in argv)]
SAMPLE_COMMANDS += [argv for c in INLINE for argv in _freezeout_commands(c)
                    if any("sample_data/" in a for a in argv)]
# the shell blocks that name a sample file: their other freezeout lines (history) run too
SAMPLE_BLOCKS = [body for body in SHELL_BLOCKS if "sample_data/" in body]


def _cli(monkeypatch, args: list[str]) -> tuple[int, str, str]:
    """Run ``freezeout ARGS`` in this process; return (exit code, stdout, stderr)."""
    monkeypatch.setattr(sys, "argv", ["freezeout", *args])
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        with pytest.raises(SystemExit) as info:
            main()
    return info.value.code or 0, out.getvalue(), err.getvalue()


def _named_sample_paths() -> set[str]:
    paths = set()
    for argv in SAMPLE_COMMANDS:
        paths.update(SAMPLE_PATH.findall(" ".join(argv)))
    for found in SAMPLE_PATH.findall(TEXT):
        if "$" not in found:  # loop variables: expanded in SAMPLE_COMMANDS
            paths.add(found)
    return {p.rstrip(".") for p in paths}


def test_the_readme_names_sample_files_and_commands():
    assert _named_sample_paths(), "the README names no sample file"
    assert SAMPLE_COMMANDS, "the README shows no freezeout command on a sample file"


@pytest.mark.parametrize("path", sorted(_named_sample_paths()))
def test_every_named_sample_path_exists(path):
    assert (ROOT / path).exists(), path


@pytest.fixture(scope="module")
def ran(tmp_path_factory):
    """Run the README's sample commands in order, in a copy of sample_data.

    Each shell block naming a sample file runs in full (its ``history`` line needs the
    qualifications before it); the inline commands are checked by
    :func:`test_inline_sample_commands_parse` (they repeat the block's fit). ``qualify`` gets
    ``--workers 1`` (the same fits, in this process: faster on a small machine). Returns the
    work folder and a list of (argv, exit code, stdout, stderr).
    """
    work = tmp_path_factory.mktemp("readme")
    shutil.copytree(ROOT / "sample_data", work / "sample_data")
    commands = [argv for body in SAMPLE_BLOCKS for argv in _freezeout_commands(body)]
    runs = []
    before = _repo_snapshot()
    with pytest.MonkeyPatch.context() as mp:
        mp.chdir(work)
        mp.setenv("FREEZEOUT_DB", f"sqlite:///{work / 'history.sqlite3'}")
        for argv in commands:
            args = argv[1:] + (["--workers", "1"] if argv[1] == "qualify" else [])
            runs.append((argv, *_cli(mp, args)))
    assert _repo_snapshot() == before, "a README command wrote into the repository"
    return work, runs


def _repo_snapshot() -> dict[str, float]:
    """Modification times of everything under the repository's sample_data and reports."""
    return {str(p): p.stat().st_mtime for top in ("sample_data", "reports")
            for p in (ROOT / top).rglob("*")}


def _expected_exit(argv: list[str]) -> int:
    """The exit code the README states for a command: 3 for the lot it says is rejected."""
    if argv[1] == "qualify":
        said = re.search(r"it exits (\d)[^`]*```bash\n(freezeout qualify [^\n]+)\n", TEXT)
        assert said, "the README no longer says what the sample lot exits with"
        if " ".join(argv) == said.group(2).strip():
            return int(said.group(1))
    return 0


def test_sample_commands_run_with_the_stated_exit_codes(ran):
    _, runs = ran
    assert runs
    for argv, code, _out, err in runs:
        assert code == _expected_exit(argv), (" ".join(argv), code, err[-1500:])


INLINE_SAMPLE = [argv for c in INLINE for argv in _freezeout_commands(c)
                 if any("sample_data/" in a for a in argv)]


@pytest.mark.parametrize("argv", INLINE_SAMPLE, ids=" ".join)
def test_inline_sample_commands_parse(argv, monkeypatch):
    # every option the inline command uses exists, and its sample files are there
    code, out, err = _cli(monkeypatch, [argv[1], "--help"])
    assert code == 0, err
    for word in argv[2:]:
        if word.startswith("--"):
            assert re.search(rf"{word.split('=')[0]}\b", out), (argv, word)
        elif word.startswith("sample_data/"):
            assert (ROOT / word).exists(), word


def test_sample_commands_write_into_the_copy(ran):
    # the fixture checks that the repository's sample_data and reports are untouched
    work, _ = ran
    assert (work / "reports").is_dir()


def test_fit_writes_the_report_where_the_readme_says(ran):
    work, _ = ran
    said = re.search(r"\(writes `(reports/[^`]+)`\)", TEXT)
    assert said
    assert (work / said.group(1)).is_file()


def test_the_sample_lot_verdict_is_as_stated(ran):
    # "it exits 3: one wafer is out of specification, one indeterminate"
    import json

    work, runs = ran
    said = re.search(r"it exits \d: (\w+) wafer is out of specification, (\w+) indeterminate",
                     PROSE)
    assert said
    words = {"one": 1, "two": 2, "three": 3, "no": 0}
    lot_runs = [argv for argv, code, *_ in runs if argv[1] == "qualify" and code == 3]
    assert lot_runs
    lot_file = work / next(a for a in lot_runs[0] if a.endswith(".toml"))
    lot_id = tomllib.loads(lot_file.read_text(encoding="utf-8"))["lot"]
    counts = json.loads((work / "reports" / lot_id / "lot.json").read_text())["counts"]
    assert counts["reject"] == words[said.group(1)]
    assert counts["indeterminate"] == words[said.group(2)]


def test_the_sample_supplier_drifts_upward(ran):
    # "three lots of the same fictional supplier whose doping drifts upward"
    import freezeout

    work, _ = ran
    assert "whose doping drifts upward" in PROSE
    supplier = re.search(r'freezeout history --supplier "([^"]+)"', TEXT).group(1)
    trend = freezeout.history(supplier=supplier, db=f"sqlite:///{work / 'history.sqlite3'}",
                              draw=False).trends[supplier]
    ratios = [p.mean_ratio for p in sorted(trend, key=lambda p: p.lot_date)
              if p.quantity == "net_doping"]
    assert len(ratios) == 3
    assert ratios == sorted(ratios) and ratios[0] < ratios[-1]
    assert list((work / "reports" / "history").glob("trend_*.png"))


def test_python_example_runs(tmp_path, monkeypatch):
    code = next(body for lang, body in BLOCKS if lang == "python")
    shutil.copytree(ROOT / "sample_data", tmp_path / "sample_data")
    monkeypatch.chdir(tmp_path)
    names: dict = {}
    exec(compile(code, "README.md (python example)", "exec"), names)  # noqa: S102
    assert names["result"].to_dict()["provenance"]["input"].endswith("harrowgate_si_n_run.csv")
    assert len(names["sim"].temperature) == 48


def _number(text: str) -> float | None:
    try:
        return float(text)
    except ValueError:
        return None


def _half_last_digit(text: str) -> float:
    """Half a unit in the last digit the README writes: '1.79e9' -> 5e6, '30.000' -> 5e-4."""
    mantissa, _, exponent = text.lower().partition("e")
    decimals = len(mantissa.partition(".")[2])
    return 0.5 * 10.0 ** (-decimals) * 10.0 ** int(exponent or 0)


def _row_matches(readme_row: str, file_row: str) -> bool:
    a, b = readme_row.split(","), file_row.split(",")
    if len(a) != len(b):
        return False
    for x, y in zip(a, b, strict=True):
        fx, fy = _number(x), _number(y)
        if fx is None or fy is None:
            if x.strip() != y.strip():
                return False
        elif abs(fx - fy) > _half_last_digit(x.strip()) * (1 + 1e-9):
            return False
    return True


def _quoted_samples() -> list[tuple[str, Path]]:
    """README text blocks with a ``# sample:`` line, and the sample file of that sample."""
    out = []
    for lang, body in BLOCKS:
        sample = re.search(r"^# sample: (.+)$", body, re.M)
        if lang != "text" or not sample:
            continue
        matches = [p for p in sorted((ROOT / "sample_data").rglob("*.csv"))
                   if re.search(rf"^# sample: {re.escape(sample.group(1).strip())}\b",
                                p.read_text(encoding="utf-8"), re.M)]
        assert len(matches) == 1, (sample.group(1), matches)
        out.append((body, matches[0]))
    return out


def test_the_readme_quotes_sample_files():
    assert len(_quoted_samples()) >= 2  # the reduced and the raw example


@pytest.mark.parametrize("body,path", _quoted_samples(), ids=lambda v: getattr(v, "name", ""))
def test_quoted_rows_are_in_the_sample_file(body, path):
    lines = path.read_text(encoding="utf-8").splitlines()
    comments = {ln.strip() for ln in lines if ln.startswith("#")}
    table = [ln for ln in lines if ln.strip() and not ln.startswith("#")]
    readme_lines = [ln for ln in body.splitlines() if ln.strip() and ln.strip() != "..."]
    readme_table = [ln for ln in readme_lines if not ln.startswith("#")]
    for ln in readme_lines:  # a metadata line may be shortened ("# sample: X" of "X (...)")
        if ln.startswith("#"):
            assert any(c.startswith(ln.strip()) for c in comments), (path.name, ln)
    assert readme_table[0] == table[0], (path.name, readme_table[0])
    at = 1
    for row in readme_table[1:]:  # in the file's order, each to the README's rounding
        while at < len(table) and not _row_matches(row, table[at]):
            at += 1
        assert at < len(table), (path.name, row)
        at += 1


def test_reduce_writes_the_columns_the_readme_names(tmp_path, monkeypatch):
    raw = next(p for _, p in _quoted_samples() if "I+" in p.read_text(encoding="utf-8"))
    out = tmp_path / "reduced.csv"
    code, _, err = _cli(monkeypatch, ["reduce", str(raw), "--out", str(out)])
    assert code == 0, err
    header = next(ln for ln in out.read_text(encoding="utf-8").splitlines()
                  if not ln.startswith("#")).split(",")
    said = re.search(r"`freezeout reduce RAW.csv` writes a reduced CSV \((.*?)\) and", PROSE)
    assert said
    named = re.findall(r"`([^`]+)`", said.group(1))
    columns = {c.split(" [")[0] for c in header}
    for name in named:
        if name in ("n [cm^-3]", "p [cm^-3]"):
            assert "n [cm^-3]" in header or "p [cm^-3]" in header
        elif name == "_err":  # "an `_err` column for each"
            values = [c for c in header if c != "flags" and "_err" not in c]
            assert all(f"{c.split(' [')[0]}_err" in columns for c in values), header
        else:  # a full header (`T [K]`) or a column named without its unit (`T_err`)
            assert name in header or name in columns, (name, header)


def test_materials_and_simulate_run(tmp_path, monkeypatch):
    code, out, err = _cli(monkeypatch, ["materials"])
    assert code == 0, err
    for name in ("Si", "4H-SiC"):  # the hosts the README's examples use
        assert name in out
    csv = tmp_path / "sim.csv"
    code, _, err = _cli(monkeypatch, ["simulate", "--material", "4H-SiC", "--donor",
                                      "3e15,0.052", "--donor", "5e15,0.092", "--acceptor",
                                      "2e14,none", "--temperatures", "40:800:48", "--out",
                                      str(csv)])
    assert code == 0, err
    rows = [ln for ln in csv.read_text(encoding="utf-8").splitlines() if ln and ln[0] != "#"]
    assert len(rows) == 1 + 48


def _synopsis() -> list[list[str]]:
    """The usage lines (``freezeout CMD [...]``, continuation lines joined)."""
    out = []
    for body in SHELL_BLOCKS:
        if "sample_data/" in body:
            continue
        joined = re.sub(r"\n[ \t]+", " ", body)
        out += [ln.split() for ln in joined.splitlines() if ln.startswith("freezeout ")]
    return out


@pytest.mark.parametrize("words", _synopsis(), ids=lambda w: w[1])
def test_synopsis_options_exist(words, monkeypatch):
    code, out, err = _cli(monkeypatch, [words[1], "--help"])
    assert code == 0, err
    for opt in re.findall(r"--[a-z][a-z0-9-]*", " ".join(words)):
        assert re.search(rf"{opt}\b", out), (words[1], opt)


def test_safety_cautions():
    section = TEXT.split("## Safety", 1)[1].split("\n## ", 1)[0]
    text = " ".join(section.split())
    for phrase in ("nitrogen", "helium", "superconducting magnet", "pacemakers", "Heated stages",
                   "mains-powered", "local codes", "laboratory's safety rules",
                   "licensed practitioners", "relief", "quench", "never block"):
        assert phrase in text, phrase
    # the acceptance decision and its consequences rest with the user
    assert re.search(r"decision and its consequences rest with", text)
    assert "specification" in text


def test_licence_matches_pyproject():
    project = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["project"]
    assert project["license"] == {"text": "MIT"}
    licence = (ROOT / "LICENSE").read_text(encoding="utf-8")
    assert licence.startswith("MIT License")
    assert "Copyright (c) 2026 the freezeout authors" in licence
    last = TEXT.rstrip().splitlines()[-1]
    assert "MIT" in last and "LICENSE" in last
