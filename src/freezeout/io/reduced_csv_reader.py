"""Reader of reduced temperature runs from CSV files into a :class:`RunData`.

A run file has ``#`` comment lines (``# key: value`` pairs kept as provenance), one header row
whose names carry units, and one row per temperature. Recognised columns (any order, case and
spacing free; the unit in brackets or parentheses, or after a final underscore):

=================  ==========================================  ============================
quantity           names                                       units
=================  ==========================================  ============================
temperature        T, Temperature, Temp                        K, mK, degC
carrier density    n, p, carrier density, density, n_H, p_H    cm^-3, m^-3
Hall coefficient   R_H, RH, Hall coefficient                   cm^3/C, m^3/C
Hall mobility      mu, mu_H, mobility, Hall mobility           cm^2/(V s), m^2/(V s)
resistivity        rho, resistivity                            ohm cm, ohm m, mohm cm
uncertainty        <name>_err, <name>_error, <name>_unc, <name>_sigma, <name>_std
flags              flags                                       (data-quality codes)
=================  ==========================================  ============================

A density column is a Hall density 1/(q |R_H|) unless a ``# hall_factor: X`` line says it was
computed with r_H = X; the fit's Hall factor rescales it. Columns not listed are ignored
(and named in the run's notes). The reduced CSV that ``freezeout reduce`` writes
(:mod:`freezeout.io.reduced_csv_writer`) is one such file.
"""

from __future__ import annotations

import csv
import io
import re
from pathlib import Path

import numpy as np

from freezeout.errors import InputError
from freezeout.io.raw_reader import parse_length
from freezeout.io.reduced_csv_layout import severe_from_flags
from freezeout.io.text_file import read_text_lines
from freezeout.numbers.cells import is_missing, parse_number_cell
from freezeout.numbers.digest import sha256_bytes
from freezeout.numbers.units import parse_unit, split_header
from freezeout.physics.constants import Q
from freezeout.records.limits import check_hall_factor
from freezeout.records.run import RunData, run_carrier
from freezeout.records.run_rules import mixed_note, split_scale_uncertainty

__all__ = ["parse_metadata", "read_reduced_csv"]

_NAMES = {
    "temperature": {"t", "temperature", "temp"},
    "density": {"n", "p", "carrierdensity", "density", "nh", "ph", "halldensity",
                "carrierconcentration", "concentration", "bulkconcentration"},
    "hall_coefficient": {"rh", "hallcoefficient", "hallcoef"},
    "mobility": {"mu", "muh", "mobility", "hallmobility", "μ", "μh"},
    "resistivity": {"rho", "resistivity"},
}
_ERR_SUFFIXES = ("err", "error", "unc", "uncertainty", "sigma", "std", "stderr")
_RANGES = {
    "temperature": (0.0, 5000.0),
    "density": (0.0, 1e24),
    "density_p": (0.0, 1e24),
    "hall_coefficient": (1e-8, 1e30),
    "mobility": (0.0, 1e8),
    "resistivity": (0.0, 1e16),
}


def _key(name: str) -> str:
    return re.sub(r"[\s_\-./]", "", name.strip().lower())


def _classify(header: str) -> tuple[str, bool, str | None, str] | None:
    """Return (quantity, is_error, unit, base_key) for a header, or None if not recognised."""
    name, unit = split_header(header)
    raw = name.strip()
    lowered = raw.lower()
    is_err = False
    for suffix in _ERR_SUFFIXES:
        for sep in ("_", " ", "-"):
            if lowered.endswith(sep + suffix):
                raw = raw[: -(len(suffix) + 1)]
                lowered = raw.lower()
                is_err = True
                break
        if is_err:
            break
    key = _key(raw)
    for quantity, names in _NAMES.items():
        if key in names:
            return quantity, is_err, unit, key
    # unit after a final underscore: Temperature_K, n_cm-3
    if unit is None and "_" in raw:
        base, _, tail = raw.rpartition("_")
        bkey = _key(base)
        for quantity, names in _NAMES.items():
            if bkey in names:
                return quantity, is_err, tail, bkey
    return None


def _all_or_none(values, fname, line_nos, cols, key):
    """An optional uncertainty column: given on every row, or on none."""
    if values is None or np.all(np.isnan(values)):
        return None
    bad = np.nonzero(np.isnan(values))[0]
    if bad.size:
        raise InputError("uncertainty must be given on every row or none", file=fname,
                         line=line_nos[bad[0]], column=cols[key][2])
    return values


def _is_forward_model_column(header: str) -> bool:
    """Columns that ``freezeout simulate`` writes besides the densities (E_F, fractions)."""
    name = header.strip().lower()
    return name.startswith(("e_f", "ionized ", "ionised "))


def parse_metadata(lines: list[str]) -> tuple[dict[str, str], int]:
    """Collect ``# key: value`` lines before the header; return (metadata, header index)."""
    meta: dict[str, str] = {}
    for i, line in enumerate(lines):
        s = line.strip()
        if not s:
            continue
        if s.startswith("#"):
            body = s.lstrip("#").strip()
            if ":" in body:
                k, _, v = body.partition(":")
                k = k.strip().lower().replace(" ", "_")
                if k and k not in meta:
                    meta[k] = v.strip()
            continue
        return meta, i
    return meta, len(lines)


def _dialect(header_line: str) -> str:
    counts = {d: header_line.count(d) for d in (",", ";", "\t")}
    return max(counts, key=counts.get) if max(counts.values()) > 0 else ","


def read_reduced_csv(path: str | Path, *, hall_factor: float | None = None,
                     include_mixed: bool = False) -> RunData:
    """Read a reduced run.

    Parameters
    ----------
    path
        CSV file.
    hall_factor
        Hall scattering factor r_H applied to the densities; None keeps the file's own
        (its ``# hall_factor:`` line, else 1). [1]
    include_mixed
        Keep points whose Hall sign differs from the run's majority carrier (they are
        otherwise marked for exclusion from a single-carrier fit).

    Raises
    ------
    InputError
        With file, line and column, for any malformed content.
    """
    data, lines = read_text_lines(path)
    fname = str(path)
    if hall_factor is not None:
        hall_factor = check_hall_factor(hall_factor)
    meta, hidx = parse_metadata(lines)
    if hidx >= len(lines):
        raise InputError("no header row found (the file is empty or only comments)", file=fname)
    delim = _dialect(lines[hidx])
    header = next(csv.reader([lines[hidx]], delimiter=delim))
    header = [h.strip() for h in header]
    cols: dict[tuple[str, bool], tuple[int, object, str]] = {}
    ignored = []
    flag_col = None
    base_names = {}
    for j, h in enumerate(header):
        if _key(h) == "flags":
            flag_col = j
            continue
        c = _classify(h)
        if c is None:
            if h:
                ignored.append(h)
            continue
        quantity, is_err, unit, key = c
        if quantity == "density" and key in ("p", "ph"):
            quantity = "density_p"  # a hole column may stand beside an electron column
        if (quantity, is_err) in cols:
            prev = header[cols[(quantity, is_err)][0]]
            raise InputError(f"two columns give the {quantity.replace('_', ' ')}: {prev!r} "
                             f"and {h!r}", file=fname, line=hidx + 1, column=h)
        if unit is None:
            if not is_err:
                raise InputError(f"column {h!r} has no unit; write it like 'T [K]', "
                                 "'n [cm^-3]'", file=fname, line=hidx + 1, column=h)
        try:
            dim = "density" if quantity == "density_p" else quantity
            u = parse_unit(unit, dim) if unit is not None else None
        except ValueError as exc:
            raise InputError(str(exc), file=fname, line=hidx + 1, column=h) from None
        cols[(quantity, is_err)] = (j, u, h)
        if not is_err:
            base_names[quantity] = key
    if ("density_p", False) in cols and ("density", False) not in cols:
        # only a hole column: it is the density column
        for e in (False, True):
            if ("density_p", e) in cols:
                cols[("density", e)] = cols.pop(("density_p", e))
        base_names["density"] = base_names.pop("density_p")
    if ("temperature", False) not in cols:
        raise InputError("no temperature column (expected e.g. 'T [K]')", file=fname,
                         line=hidx + 1)
    if ("density", False) not in cols and ("hall_coefficient", False) not in cols:
        raise InputError("no carrier density or Hall coefficient column (expected e.g. "
                         "'n [cm^-3]', 'p [cm^-3]' or 'R_H [cm^3/C]')", file=fname,
                         line=hidx + 1)
    for (quantity, is_err), (_, u, h) in list(cols.items()):
        if is_err and u is None:
            if (quantity, False) not in cols:
                raise InputError(f"uncertainty column {h!r} has no matching value column",
                                 file=fname, line=hidx + 1, column=h)
            cols[(quantity, True)] = (cols[(quantity, True)][0], cols[(quantity, False)][1], h)

    values: dict[tuple[str, bool], list[float]] = {k: [] for k in cols}
    flags: list[str] = []
    line_nos: list[int] = []
    required = {("temperature", False), ("density", False), ("hall_coefficient", False),
                ("density_p", False)}
    reader = csv.reader(io.StringIO("\n".join(lines[hidx + 1:])), delimiter=delim)
    for offset, row in enumerate(reader):
        lineno = hidx + 2 + offset
        if not row or all(not c.strip() for c in row) or row[0].lstrip().startswith("#"):
            continue
        if len(row) < len(header):
            # a truncated last line or a missing cell
            if flag_col is not None and len(row) == len(header) - 1 and flag_col == len(header) - 1:
                row = [*row, ""]
            else:
                cells = "cell" if len(row) == 1 else "cells"
                raise InputError(f"row has {len(row)} {cells}, the header has {len(header)} "
                                 "(truncated line?)", file=fname, line=lineno)
        if len(row) > len(header) and any(c.strip() for c in row[len(header):]):
            raise InputError(f"row has {len(row)} cells, the header has {len(header)}",
                             file=fname, line=lineno)
        for k, (j, u, h) in cols.items():
            cell = row[j].strip()
            if is_missing(cell):
                if k in required:
                    raise InputError(f"missing value {cell!r}" if cell else "empty cell",
                                     file=fname, line=lineno, column=h)
                values[k].append(np.nan)
                continue
            v = parse_number_cell(cell, file=fname, line=lineno, column=h)
            quantity, is_err = k
            v = u.scale_uncertainty(v) if is_err else u.to_canonical(v)
            lo, hi = _RANGES[quantity]
            mag = abs(v) if quantity in ("density", "hall_coefficient") and not is_err else v
            if is_err:
                if v < 0:
                    raise InputError(f"uncertainty {cell} is negative", file=fname,
                                     line=lineno, column=h)
            elif quantity == "temperature" and v <= 0:
                raise InputError(f"temperature {cell} is not above absolute zero", file=fname,
                                 line=lineno, column=h)
            elif not lo <= mag <= hi:
                raise InputError(f"{quantity.replace('_', ' ')} {cell} is outside the plausible"
                                 f" range [{lo:g}, {hi:g}] in canonical units", file=fname,
                                 line=lineno, column=h)
            values[k].append(v)
        flags.append(row[flag_col].strip() if flag_col is not None else "")
        line_nos.append(lineno)
    if not line_nos:
        raise InputError("no data rows after the header", file=fname, line=hidx + 1)

    arr = {k: np.asarray(v, dtype=float) for k, v in values.items()}
    t = arr[("temperature", False)]
    order = np.argsort(t, kind="stable")
    st = t[order]
    dup = np.nonzero(np.diff(st) == 0)[0]
    if dup.size:
        a, b = line_nos[order[dup[0]]], line_nos[order[dup[0] + 1]]
        raise InputError(f"duplicate temperature {st[dup[0]]:g} K (also on line {a})",
                         file=fname, line=b, column=cols[("temperature", False)][2])
    arr = {k: v[order] for k, v in arr.items()}
    flags = [flags[i] for i in order]
    line_nos = [line_nos[i] for i in order]
    t = arr[("temperature", False)]
    notes = []

    r_file = 1.0
    if "hall_factor" in meta:
        r_file = check_hall_factor(meta["hall_factor"], "metadata hall_factor", file=fname)
    if hall_factor is None:
        hall_factor = r_file
    stated = meta.get("carrier", meta.get("type", meta.get("carrier_type", ""))).strip().lower()
    stated = {"n": "n", "n-type": "n", "electrons": "n", "p": "p", "p-type": "p",
              "holes": "p"}.get(stated)

    rh = arr.get(("hall_coefficient", False))
    rh_err = arr.get(("hall_coefficient", True))
    if ("density_p", False) in arr:
        # electron and hole columns side by side (e.g. simulate output): per point the
        # larger one is the majority carrier and the one the Hall effect measures
        n_col, p_col = arr[("density", False)], arr[("density_p", False)]
        take_p = p_col > n_col
        arr[("density", False)] = np.where(take_p, p_col, n_col)
        if ("density", True) in arr and ("density_p", True) in arr:
            arr[("density", True)] = np.where(take_p, arr[("density_p", True)],
                                              arr[("density", True)])
        else:
            arr.pop(("density", True), None)
        base_names["density"] = "np"
        point_hint = ["p" if x else "n" for x in take_p]
    else:
        point_hint = None
    if ("density", False) in arr:
        dens = arr[("density", False)]
        dens_err = arr.get(("density", True))
        key = base_names["density"]
        named = {"n": "n", "nh": "n", "p": "p", "ph": "p"}.get(key)
        if point_hint is not None:
            point_type = point_hint
        elif named is not None:
            bad = np.nonzero(dens <= 0)[0]
            if bad.size:
                raise InputError(f"{key} must be > 0 (the column name gives the type)",
                                 file=fname, line=line_nos[bad[0]],
                                 column=cols[("density", False)][2])
            point_type = [named] * t.size
            if stated is not None and stated != named:
                notes.append(f"the file says '# carrier: {stated}' but its density column is "
                             f"{key!r}: the column's type ({named}) is used")
            if rh is not None:
                point_type = ["p" if x > 0 else "n" for x in rh]
        elif rh is not None:
            point_type = ["p" if x > 0 else "n" for x in rh]
        elif np.any(dens < 0):
            point_type = ["n" if x < 0 else "p" for x in dens]
            notes.append("signed density column: negative values read as electrons")
        else:
            point_type = [stated or "n"] * t.size
            if stated is None:
                notes.append("carrier type not stated: assumed electrons (n); name the column "
                             "'n' or 'p', or add a '# carrier: p' line")
        density = np.abs(dens) * hall_factor / r_file
        density_err = None if dens_err is None else dens_err * hall_factor / r_file
    else:
        point_type = ["p" if x > 0 else "n" for x in rh]
        density = hall_factor / (Q * np.abs(rh))
        density_err = None if rh_err is None else density * rh_err / np.abs(rh)
    scale = 0.0
    if density_err is not None and "reduce" in meta.get("produced_by", ""):
        # our own reduced CSV: its uncertainties include the thickness, common to all points
        try:
            t_val, t_err = parse_length(meta.get("thickness", ""), "thickness")
        except ValueError:
            t_val, t_err = 1.0, 0.0
        density_err, scale = split_scale_uncertainty(density, density_err, t_err / t_val)
    if density_err is not None:
        if np.all(np.isnan(density_err)):
            density_err = None
        elif np.any(np.isnan(density_err)) or np.any(density_err <= 0):
            i = int(np.nonzero(np.isnan(density_err) | (density_err <= 0))[0][0])
            raise InputError("density uncertainty must be given (> 0) on every row or none",
                             file=fname, line=line_nos[i],
                             column=cols.get(("density", True),
                                             cols.get(("hall_coefficient", True)))[2])
    unexplained = [h for h in ignored if not _is_forward_model_column(h)]
    if unexplained:
        notes.append("columns not used (not a recognised quantity or uncertainty): "
                     + ", ".join(repr(h) for h in unexplained))
    carrier = run_carrier(point_type, t, stated)
    note = mixed_note(point_type, carrier, t, include_mixed)
    if note:
        notes.append(note)
        if include_mixed:
            point_type = [carrier] * t.size
    severe = None
    if flag_col is not None:
        severe = severe_from_flags(flags)
        if severe.any():
            notes.append(f"{int(severe.sum())} point(s) are flagged as failing a severe "
                         "data-quality check and are left out of the fit unless "
                         "--include-flagged is given")

    return RunData(
        source=fname,
        sha256=sha256_bytes(data),
        temperature=t,
        density=density,
        density_err=density_err,
        carrier=carrier,
        point_carrier=tuple(point_type),
        resistivity=arr.get(("resistivity", False)),
        resistivity_err=arr.get(("resistivity", True)),
        mobility=arr.get(("mobility", False)),
        mobility_err=arr.get(("mobility", True)),
        hall_coefficient=rh,
        hall_coefficient_err=rh_err,
        flags=tuple(flags),
        severe=severe,
        metadata=meta,
        notes=tuple(notes),
        ignored_columns=tuple(ignored),
        scale_uncertainty=scale,
        hall_factor=float(hall_factor),
        temperature_err=_all_or_none(arr.get(("temperature", True)), fname, line_nos, cols,
                                     ("temperature", True)),
    )
