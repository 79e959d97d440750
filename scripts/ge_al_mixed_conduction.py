"""Convert a real Al-doped Ge Hall + resistivity sweep into a freezeout reduced run CSV.

REAL DATA, not ours. Source: GitHub repository qnguyen345/SHE-Hall-Effect-in-Al-doped-Ge-
Semiconductor (author's GitHub handle qnguyen345, MIT licence, copyright (c) 2023 Quyen
Nguyen), file ``Data/900uA_3500G_95K_350K.txt`` at commit
c13563973566e523e11fafd3838c9dda293e850a, kept verbatim with its LICENSE in
``sample_data/ge_al_mixed_conduction/source/``. This script is our own; it uses none of the
authors' code.

The file: a tab-separated slow temperature sweep (95 K to 350 K), three preamble lines, a
header, one row per field value. The field cycles +B (about +3070 G), near zero (about
123 G), -B (about -2870 G) while the temperature drifts about 1.3 K per row. Each row holds
the measured current of eight configurations and the matching voltage: current A->B with
voltage "CD" and current A->D with voltage "BC" (the two van der Pauw resistance
configurations; contacts A, B, C, D in order around the edge), current A->C with voltage
"BD" and current B->D with voltage "AC" (the two Hall diagonals), and each of them again with
the current reversed ("-" columns).

What the conversion does (one output point per complete +B, 0, -B cycle of consecutive rows;
a row that does not start such a cycle is skipped and listed):

* every transresistance is R = V / I with that configuration's own measured current, then
  averaged over the current reversal, R = (V/I + V_rev/I_rev) / 2;
* T = mean of the cycle's three temperatures; T_err = (max - min) / sqrt(12), the spread of
  a uniform drift across the cycle (the layout's convention for a set point's spread);
* rho from the near-zero-field row only: van der Pauw's equation solved exactly for the sheet
  resistance (freezeout.reduction.vanderpauw.sheet_resistance_uncertainty, which solves it
  with sheet_resistance and propagates the uncertainties) from the two resistance
  configurations, times the thickness. The row's 123 G is ignored: the magnetoresistance it
  could cause is of order (mu B)^2, below 1e-3 even at the coldest point (mu_H of about
  2.5e4 cm^2/(V s) here, estimate, no source);
* R_H from the +B and -B rows: per diagonal the slope (R(+B) - R(-B)) / (B+ - B-), then
  R_H = t * mean of the two slopes. As labelled, the two diagonals give field-odd parts of
  the same sign at every cold cycle (checked below, the conversion stops otherwise), so they
  are averaged as they stand;
* the sign of R_H: the authors do not state the contact orientation or the field direction,
  so the overall sign cannot be derived from the file. The sample is Al-doped, i.e. p-type
  where it is extrinsic (cold); the sign is chosen so that R_H > 0 at the coldest cycle and
  the same factor is applied to every cycle. That is a convention from the doping, not a
  measurement of the sign; the sign CHANGE with temperature is measured;
* uncertainties (standard, combined in quadrature), our choice:
  rho_err: (i) half the current-reversal difference of each resistance configuration, with
  the readings' last-digit rounding (half a unit of 1e-7 V and 1e-7 A, uniform), propagated
  through van der Pauw's equation (sheet_resistance_uncertainty); (ii) the temperature
  drift: |d rho / dT| * T_err, d rho / dT from the neighbouring cycles (numpy.gradient);
  R_H_err: (i) half the difference of the two diagonals; (ii) the drift of the zero-field
  misalignment offset between the +B and the -B row, which does not cancel in the
  difference: t * |dR_0/dT| * |T(-B) - T(+B)| / (B+ - B-), with R_0 the mean of the two
  diagonals' near-zero-field transresistances and dR_0/dT from the neighbouring cycles;
  (iii) the readings' last-digit rounding, propagated. The thickness (1.25 mm, the value the
  authors use in their own analysis) has no stated uncertainty and is left out: it scales
  every point alike.

Units on the way out: K, ohm cm, cm^3/C (freezeout's canonical units). Only T, rho and a
signed R_H (with uncertainties) are written: the reader takes the carrier type of each point
from the sign of R_H and the density as 1/(q |R_H|).

Run ``python scripts/ge_al_mixed_conduction.py`` to rewrite
``sample_data/ge_al_mixed_conduction/ge_al_900uA.csv``; the output depends only on the
source file (no clock, no random numbers).
"""

from __future__ import annotations

import argparse
import math
import sys
from pathlib import Path

import numpy as np

from freezeout.errors import InputError
from freezeout.reduction.vanderpauw import sheet_resistance_uncertainty

ROOT = Path(__file__).resolve().parent.parent
HERE = ROOT / "sample_data" / "ge_al_mixed_conduction"
SOURCE = HERE / "source" / "900uA_3500G_95K_350K.txt"
OUTPUT = HERE / "ge_al_900uA.csv"

#: Sample thickness used by the authors in their analysis (Calculations_and_Methods.py). [cm]
THICKNESS_CM = 0.125

#: The header of the source files, in order (the trailing tab gives an empty last cell).
COLUMNS = (
    "Temperature (K)", "B-Field (Gauss)",
    "sample current AB", "sample current AD", "sample current AC", "sample current BD",
    "sample current -AB", "sample current -AD", "sample current -AC", "sample current -BD",
    "Voltage CD", "Voltage BC", "Voltage BD", "Voltage AC",
    "Voltage -CD", "Voltage -BC", "Voltage -BD", "Voltage -AC",
)
#: Configuration -> (current column, voltage column, reversed current, reversed voltage).
CONFIGS = {
    "A": ("sample current AB", "Voltage CD", "sample current -AB", "Voltage -CD"),
    "B": ("sample current AD", "Voltage BC", "sample current -AD", "Voltage -BC"),
    "H1": ("sample current AC", "Voltage BD", "sample current -AC", "Voltage -BD"),
    "H2": ("sample current BD", "Voltage AC", "sample current -BD", "Voltage -AC"),
}
#: Field classes (project choice, no source): |B| below 500 G is the near-zero row, beyond
#: 1000 G a +B or -B row; anything between is refused.
ZERO_FIELD_G = 500.0
HIGH_FIELD_G = 1000.0
#: Last-digit rounding of the readings (7 decimals in the file): half a unit, uniform. [V], [A]
ROUNDING = 0.5e-7 / math.sqrt(3.0)
#: Cold cycles on which the two diagonals must agree in sign (project choice, no source).
N_COLD_CHECK = 5


def read_source(path: Path) -> dict[str, np.ndarray]:
    """The columns of one source file as arrays, with the file line of each row.

    Raises
    ------
    InputError
        A header that is not the expected one, a short row, a cell that is not a number.
    """
    text = path.read_text(encoding="utf-8")
    lines = text.split("\n")
    header_at = next((k for k, ln in enumerate(lines) if ln.startswith(COLUMNS[0])), None)
    if header_at is None:
        raise InputError(f"no header line starting with {COLUMNS[0]!r}", file=str(path))
    header = [c.strip() for c in lines[header_at].rstrip("\r").split("\t")]
    if header[-1] == "":
        header = header[:-1]
    if tuple(header) != COLUMNS:
        raise InputError(f"unexpected header {header!r}", file=str(path), line=header_at + 1)
    rows, line_nos = [], []
    for k in range(header_at + 1, len(lines)):
        cells = lines[k].rstrip("\r").split("\t")
        if not lines[k].strip():
            continue
        if cells[-1] == "" and len(cells) == len(COLUMNS) + 1:
            cells = cells[:-1]
        if len(cells) != len(COLUMNS):
            raise InputError(f"row has {len(cells)} cells, the header has {len(COLUMNS)}",
                             file=str(path), line=k + 1)
        row = []
        for name, cell in zip(COLUMNS, cells, strict=True):
            try:
                value = float(cell)
            except ValueError:
                raise InputError(f"not a number: {cell!r}", file=str(path), line=k + 1,
                                 column=name) from None
            if not math.isfinite(value):
                raise InputError(f"not a finite number: {cell!r}", file=str(path),
                                 line=k + 1, column=name)
            row.append(value)
        rows.append(row)
        line_nos.append(k + 1)
    if not rows:
        raise InputError("no data rows after the header", file=str(path), line=header_at + 1)
    data = np.array(rows)
    out = {name: data[:, j] for j, name in enumerate(COLUMNS)}
    out["line"] = np.array(line_nos)
    return out


def field_cycles(field_g: np.ndarray, lines: np.ndarray, path: Path):
    """Consecutive (+B, 0, -B) row triples, and the rows that start no such triple.

    Returns
    -------
    cycles, skipped
        ``[(i_plus, i_zero, i_minus), ...]`` row indices, and the skipped row indices.
    """
    kind = []
    for b, line in zip(field_g, lines, strict=True):
        if abs(b) < ZERO_FIELD_G:
            kind.append("0")
        elif abs(b) > HIGH_FIELD_G:
            kind.append("+" if b > 0 else "-")
        else:
            raise InputError(f"field {b:g} G is neither near zero nor high", file=str(path),
                             line=int(line), column=COLUMNS[1])
    cycles, skipped, i = [], [], 0
    while i < len(kind):
        if kind[i:i + 3] == ["+", "0", "-"]:
            cycles.append((i, i + 1, i + 2))
            i += 3
        else:
            skipped.append(i)
            i += 1
    return cycles, skipped


def transresistance(d: dict, config: str, rows) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Current-reversal averaged transresistance of a configuration on some rows. [ohm]

    Returns
    -------
    r, half_diff, rounding
        The average (V/I + V_rev/I_rev)/2, half the difference of the two, and the standard
        uncertainty of the average from the readings' last-digit rounding.
    """
    i_col, v_col, ir_col, vr_col = CONFIGS[config]
    i, v, ir, vr = (d[c][rows] for c in (i_col, v_col, ir_col, vr_col))
    r_fwd, r_rev = v / i, vr / ir
    rnd_fwd = np.hypot(ROUNDING / i, r_fwd * ROUNDING / i)
    rnd_rev = np.hypot(ROUNDING / ir, r_rev * ROUNDING / ir)
    return 0.5 * (r_fwd + r_rev), 0.5 * np.abs(r_fwd - r_rev), 0.5 * np.hypot(rnd_fwd,
                                                                               rnd_rev)


def reduce_cycles(d: dict, cycles, path: Path) -> dict[str, np.ndarray]:
    """T, rho and signed R_H (with uncertainties) per cycle, in K, ohm cm, cm^3/C."""
    ip, i0, im = (np.array([c[k] for c in cycles], dtype=int) for k in range(3))
    temp = d[COLUMNS[0]]
    trip = np.stack([temp[ip], temp[i0], temp[im]])
    t_mean = trip.mean(axis=0)
    t_err = (trip.max(axis=0) - trip.min(axis=0)) / math.sqrt(12.0)

    r_a, half_a, rnd_a = transresistance(d, "A", i0)
    r_b, half_b, rnd_b = transresistance(d, "B", i0)
    for r, cfg in ((r_a, "A"), (r_b, "B")):
        bad = np.nonzero(r <= 0)[0]
        if bad.size:
            raise InputError(f"resistance configuration {cfg} is not positive ({r[bad[0]]:g} "
                             "ohm) on the near-zero-field row", file=str(path),
                             line=int(d["line"][i0[bad[0]]]), column=CONFIGS[cfg][1])
    r_s, r_s_err = sheet_resistance_uncertainty(r_a, r_b, np.hypot(half_a, rnd_a),
                                                np.hypot(half_b, rnd_b))
    rho = r_s * THICKNESS_CM
    drho_dt = np.gradient(rho, t_mean)
    rho_err = np.hypot(r_s_err * THICKNESS_CM, drho_dt * t_err)

    b_span = d[COLUMNS[1]][ip] - d[COLUMNS[1]][im]  # [G]
    slopes, rounding, offsets = [], [], []
    for cfg in ("H1", "H2"):
        r_plus, _, rnd_plus = transresistance(d, cfg, ip)
        r_minus, _, rnd_minus = transresistance(d, cfg, im)
        r_zero, _, _ = transresistance(d, cfg, i0)
        slopes.append((r_plus - r_minus) / b_span)  # [ohm/G]
        rounding.append(np.hypot(rnd_plus, rnd_minus) / b_span)
        offsets.append(r_zero)
    s1, s2 = slopes
    cold = np.argsort(t_mean)[:N_COLD_CHECK]
    if np.any(np.sign(s1[cold]) != np.sign(s2[cold])):
        raise InputError("the two Hall diagonals disagree in sign at the cold end: their "
                         "orientation cannot be taken as labelled", file=str(path))
    # orientation convention: p-type (Al-doped) when cold, so R_H > 0 at the coldest cycle
    sign = 1.0 if s1[cold[0]] + s2[cold[0]] > 0 else -1.0
    to_cm3 = THICKNESS_CM * 1e8  # t [cm] * (ohm/G) -> cm^3/C (1 G = 1e-4 T)
    r_h = sign * to_cm3 * 0.5 * (s1 + s2)
    spread = to_cm3 * 0.5 * np.abs(s1 - s2)
    r0 = 0.5 * (offsets[0] + offsets[1])
    dr0_dt = np.gradient(r0, temp[i0])
    drift = to_cm3 * np.abs(dr0_dt * (temp[im] - temp[ip])) / b_span
    rnd = to_cm3 * 0.5 * np.hypot(rounding[0], rounding[1])
    r_h_err = np.sqrt(spread**2 + drift**2 + rnd**2)
    return {"T": t_mean, "T_err": t_err, "rho": rho, "rho_err": rho_err, "R_H": r_h,
            "R_H_err": r_h_err, "sign": sign}


def metadata(source: Path, n_cycles: int, skipped_lines: list[int]) -> list[tuple[str, str]]:
    """The ``# key: value`` lines of the output."""
    skipped = ", ".join(str(k) for k in skipped_lines) or "none"
    return [
        ("data", "REAL measurement (not ours), converted by scripts/ge_al_mixed_conduction.py"),
        ("sample", "Al-doped Ge van der Pauw sample of qnguyen345/SHE-Hall-Effect-in-Al-doped-"
                   "Ge-Semiconductor, 900 uA run"),
        ("material", "Ge"),
        ("thickness", f"{THICKNESS_CM * 10:g} mm"),
        ("field", "+0.307 T / 0.0123 T / -0.287 T cycles (+B, 0, -B rows)"),
        ("source", "https://github.com/qnguyen345/SHE-Hall-Effect-in-Al-doped-Ge-Semiconductor "
                   f"commit c13563973566e523e11fafd3838c9dda293e850a, Data/{source.name}"),
        ("source_author", "GitHub user qnguyen345 (Quyen Nguyen)"),
        ("licence", "MIT (c) 2023 Quyen Nguyen; LICENSE kept in source/LICENSE"),
        ("hall_sign", "chosen so that R_H > 0 at the coldest point (Al-doped: p-type when "
                      "cold); the authors do not state the contact orientation"),
        ("points", f"{n_cycles} (+B, 0, -B) cycles; rows not starting a cycle skipped: file "
                   f"line(s) {skipped}"),
        ("uncertainties", "T_err = cycle spread/sqrt(12); rho_err = current-reversal and "
                          "rounding via van der Pauw, and |drho/dT| T_err; R_H_err = half the "
                          "diagonal difference, the offset drift between +B and -B rows, "
                          "rounding; thickness not included"),
    ]


def _fmt(x: float, digits: int) -> str:
    return f"{x:.{digits}g}"


def convert(source: Path, output: Path) -> dict[str, np.ndarray]:
    """Read ``source``, reduce it, write the reduced CSV to ``output``; return the columns."""
    d = read_source(source)
    cycles, skipped = field_cycles(d[COLUMNS[1]], d["line"], source)
    if len(cycles) < 3:
        raise InputError(f"only {len(cycles)} complete (+B, 0, -B) cycle(s)", file=str(source))
    cols = reduce_cycles(d, cycles, source)
    lines = [f"# {k}: {v}" for k, v in metadata(source, len(cycles),
                                                 [int(d["line"][i]) for i in skipped])]
    lines.append("T [K],T_err [K],rho [ohm cm],rho_err [ohm cm],R_H [cm^3/C],R_H_err [cm^3/C]")
    for k in range(len(cycles)):
        lines.append(",".join([_fmt(cols["T"][k], 6), _fmt(cols["T_err"][k], 3),
                               _fmt(cols["rho"][k], 6), _fmt(cols["rho_err"][k], 3),
                               _fmt(cols["R_H"][k], 6), _fmt(cols["R_H_err"][k], 3)]))
    output.parent.mkdir(parents=True, exist_ok=True)
    output.write_text("\n".join(lines) + "\n", encoding="utf-8", newline="\n")
    return cols


def main(argv: list[str] | None = None) -> int:
    """Command line: ``[source] [-o output]``; defaults to the committed files."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("source", nargs="?", type=Path, default=SOURCE)
    parser.add_argument("-o", "--output", type=Path, default=OUTPUT)
    args = parser.parse_args(argv)
    try:
        cols = convert(args.source, args.output)
    except InputError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    print(f"wrote {args.output} ({cols['T'].size} points, Hall sign factor {cols['sign']:+g})")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
