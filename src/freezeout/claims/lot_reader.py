"""The lot file: a supplier's certificate claims and the wafers measured to check them.

A lot file is TOML in freezeout's own schema (documented, with an example, in
``docs/lot_format.md``)::

    supplier = "Kestrel Ridge Wafers"
    lot = "KRW-2611-07"
    date = 2026-11-03

    [decision]
    rule = "guarded"          # or "simple"
    coverage_factor = 2       # k in U = k u; default 2

    [[claim]]
    quantity = "type"
    value = "n"

    [[claim]]
    quantity = "resistivity"
    min = 8.0
    max = 12.0
    unit = "ohm cm"
    dopant = "phosphorus"
    temperature_K = 296.15    # default 300

    [[claim]]
    quantity = "net_doping"
    nominal = 5e14
    tolerance = "10%"         # or an absolute number in `unit`
    unit = "cm^-3"

    [measurement]             # optional
    hall_factor = 1.15        # r_H applied to the Hall densities; default: the run's own
    hall_factor_uncertainty = 0.05   # standard uncertainty of r_H, absolute; default 0

    [[wafer]]
    id = "W01"
    material = "Si"           # or material_file = "materials/si.toml"
    run = "runs/w01.csv"      # relative to this file
    # hall_factor, hall_factor_uncertainty: as in [measurement], for this wafer only

Unknown keys, missing keys, wrong types, missing files and impossible claims are
:class:`freezeout.errors.InputError` naming the file, the line where it can be found, and the
key path as ``column`` (``claim[2].max``; claims and wafers are numbered from 1 in the order
they appear). All values are converted to canonical units (cm^-3, ohm cm, K) here, at the edge.
The claims themselves are read by :mod:`freezeout.claims.lot_claims`.
"""

from __future__ import annotations

import datetime as _dt
import re
import tomllib
from pathlib import Path

from freezeout.claims import silicon
from freezeout.claims.dopants import is_silicon
from freezeout.claims.lot_claims import parse_claim
from freezeout.claims.lot_fields import (
    check_keys,
    read_number,
    read_string,
    read_table,
    read_tables,
)
from freezeout.claims.lot_locator import LotContext, key_index, key_path
from freezeout.errors import InputError
from freezeout.io.material_file import read_material_file
from freezeout.physics.materials import get_material
from freezeout.records.limits import HALL_FACTOR_RANGE
from freezeout.records.lot import Claim, Decision, HallFactor, LotFile, Wafer
from freezeout.records.verdicts import RULES

_TOP_KEYS = {"supplier", "lot", "date", "certificate", "note", "decision", "measurement",
             "claim", "wafer"}
_DECISION_KEYS = {"rule", "coverage_factor"}
_HALL_KEYS = {"hall_factor", "hall_factor_uncertainty"}
_MEASUREMENT_KEYS = set(_HALL_KEYS)
_WAFER_KEYS = {"id", "material", "material_file", "run", "note", *_HALL_KEYS}


def _parse_decision(ctx: LotContext, d: dict) -> Decision:
    check_keys(ctx, d, _DECISION_KEYS, "decision", None)
    rule = read_string(ctx, d, "rule", "decision", None, required=True)
    if rule not in RULES:
        raise ctx.error(f"rule must be one of {', '.join(RULES)}, got {rule!r}",
                        "decision.rule", "decision", None, "rule")
    k = read_number(ctx, d, "coverage_factor", "decision", None)
    if k is None:
        k = 2.0
    if not 0 < k <= 10:
        # k = 2 for about 95 % is usual; beyond 10 the value is a typing slip, not a choice
        raise ctx.error(f"coverage_factor must be above 0 and at most 10, got {k:g}",
                        "decision.coverage_factor", "decision", None, "coverage_factor")
    return Decision(rule=rule, coverage_factor=k)


def _parse_hall(ctx: LotContext, d: dict, table: str, index: int | None,
                inherit: HallFactor) -> HallFactor:
    """The Hall-factor keys of ``[measurement]`` or of one ``[[wafer]]`` over ``inherit``."""
    value, stderr = inherit.value, inherit.stderr
    value_key, stderr_key = inherit.value_key, inherit.stderr_key
    v = read_number(ctx, d, "hall_factor", table, index)
    if v is not None:
        lo, hi = HALL_FACTOR_RANGE
        if not lo <= v <= hi:
            raise ctx.error(f"hall_factor must be between {lo:g} and {hi:g} (near 1 in "
                            f"practice), got {v:g}",
                            key_path(table, index, "hall_factor"), table, index, "hall_factor")
        value, value_key = v, key_path(table, index, "hall_factor")
    u = read_number(ctx, d, "hall_factor_uncertainty", table, index)
    if u is not None:
        if not u >= 0:
            raise ctx.error(f"hall_factor_uncertainty (a standard uncertainty) must be >= 0, "
                            f"got {u:g}", key_path(table, index, "hall_factor_uncertainty"),
                            table, index, "hall_factor_uncertainty")
        stderr, stderr_key = u, key_path(table, index, "hall_factor_uncertainty")
    return HallFactor(value, stderr, value_key, stderr_key)


def _parse_measurement(ctx: LotContext, top: dict) -> HallFactor:
    if "measurement" not in top:
        return HallFactor()
    d = top["measurement"]
    if not isinstance(d, dict):
        raise ctx.error("measurement must be a table [measurement]", "measurement",
                        "measurement")
    check_keys(ctx, d, _MEASUREMENT_KEYS, "measurement", None)
    return _parse_hall(ctx, d, "measurement", None, HallFactor())


def _inside(ctx: LotContext, resolved: Path, base: Path, i: int, key: str,
            allow_outside: bool) -> Path:
    """Refuse a wafer's file that leaves the lot's folder (``..``, absolute, symlink out).

    ``resolved`` is the path with every symbolic link followed; ``base`` the lot file's
    resolved folder. Project choice, no source: a lot names the files beside it, so a lot
    received from elsewhere cannot make freezeout read (and copy into a report) any file.
    """
    if allow_outside or resolved.is_relative_to(base):
        return resolved
    raise ctx.error(
        f"{key} {resolved} is outside the lot's folder {base} (through '..', an absolute path "
        "or a symbolic link); pass --allow-outside-paths (API: allow_outside=True) to read it",
        key_path("wafer", i, key), "wafer", i, key)


def _material_of(ctx: LotContext, d: dict, i: int, base: Path,
                 allow_outside: bool = False) -> tuple[str, Path | None]:
    """The wafer's material name, and its resolved material file (None: bundled)."""
    t = "wafer"
    material = read_string(ctx, d, "material", t, i, required=False)
    material_file_s = read_string(ctx, d, "material_file", t, i, required=False)
    if (material is None) == (material_file_s is None):
        raise ctx.error("give exactly one of material or material_file", key_path(t, i), t, i,
                        "material" if material else None)
    if material_file_s is None:
        try:
            # in a lot file the way out is its material_file key, not the fit's option
            return get_material(material, other='material_file = "FILE.toml"').name, None
        except InputError as exc:
            raise ctx.error(exc.message, key_path(t, i, "material"), t, i,
                            "material") from None
    material_file = _inside(ctx, (base / material_file_s).resolve(), base, i, "material_file",
                            allow_outside)
    if not material_file.is_file():
        raise ctx.error(f"material file not found: {material_file}",
                        key_path(t, i, "material_file"), t, i, "material_file")
    try:
        return read_material_file(material_file).name, material_file
    except InputError as exc:
        raise ctx.error(f"bad material file: {exc}", key_path(t, i, "material_file"), t, i,
                        "material_file") from None


def _parse_wafer(ctx: LotContext, d: dict, i: int, base: Path, lot_hall: HallFactor,
                 allow_outside: bool = False) -> Wafer:
    t = "wafer"
    check_keys(ctx, d, _WAFER_KEYS, t, i)
    if "id" in d and isinstance(d["id"], int) and not isinstance(d["id"], bool):
        raise ctx.error(f"id must be a string (write id = \"{d['id']}\")",
                        key_path(t, i, "id"), t, i, "id")
    wid = read_string(ctx, d, "id", t, i, required=True)
    material, material_file = _material_of(ctx, d, i, base, allow_outside)
    run_s = read_string(ctx, d, "run", t, i, required=True)
    run = _inside(ctx, (base / run_s).resolve(), base, i, "run", allow_outside)
    if not run.is_file():
        raise ctx.error(f"run file not found: {run}", key_path(t, i, "run"), t, i, "run")
    note = read_string(ctx, d, "note", t, i, required=False)
    hall = _parse_hall(ctx, d, t, i, lot_hall)
    if hall.stderr > 0 and hall.value is None:
        # an uncertainty means nothing without the value it belongs to
        key = hall.stderr_key or key_path(t, i, "hall_factor_uncertainty")
        table, index = ("measurement", None) if key.startswith("measurement") else (t, i)
        raise ctx.error(
            f"{key.rsplit('.', 1)[0]} gives hall_factor_uncertainty, but wafer {wid} has no "
            "hall_factor (in [measurement] or its [[wafer]] entry) for it to belong to: state "
            "the r_H the uncertainty is for", key, table, index, "hall_factor_uncertainty")
    return Wafer(key_path(t, i), wid, material, material_file, run, note, hall)


def _parse_date(ctx: LotContext, top: dict) -> _dt.date:
    if "date" not in top:
        raise ctx.error("missing key 'date' at the top level", "date")
    v = top["date"]
    if isinstance(v, _dt.datetime):
        raise ctx.error(f"date must be a date like 2026-11-03, got the date-time {v}", "date",
                        "", None, "date")
    if isinstance(v, _dt.date):
        return v
    if isinstance(v, str):
        try:
            return _dt.date.fromisoformat(v.strip())
        except ValueError:
            pass
    raise ctx.error(f"date must be a date like 2026-11-03, got {v!r}", "date", "", None, "date")


def _cross_checks(ctx: LotContext, claims: list[Claim], wafers: list[Wafer]) -> None:
    types = [c for c in claims if c.quantity == "type"]
    if len({c.carrier for c in types}) > 1:
        c = types[-1]
        raise ctx.error(f"type claims contradict each other ({types[0].carrier} and "
                        f"{c.carrier})", f"{c.key}.value", "claim", key_index(c.key), "value")
    claimed_type = types[0].carrier if types else None
    for c in claims:
        if c.dopant in silicon.CARRIER_OF_DOPANT:
            implied = silicon.CARRIER_OF_DOPANT[c.dopant]
            if claimed_type is not None and implied != claimed_type:
                raise ctx.error(
                    f"dopant {c.dopant} makes silicon {implied}-type, but the lot claims "
                    f"type {claimed_type}", f"{c.key}.dopant", "claim", key_index(c.key),
                    "dopant")
        if c.quantity == "resistivity" and c.dopant in silicon.DOPANTS:
            for w in wafers:
                if not is_silicon(w.material):
                    mkey = "material" if w.material_file is None else "material_file"
                    raise ctx.error(
                        f"{c.key} converts net doping to resistivity with ASTM F723, which is "
                        f"for silicon only, but wafer {w.wafer_id} is {w.material}; omit "
                        "dopant to compare a measured resistivity, or claim net_doping",
                        f"{w.key}.{mkey}", "wafer", key_index(w.key), mkey)
    seen: dict[str, Wafer] = {}
    for w in wafers:
        if w.wafer_id in seen:
            raise ctx.error(f"duplicate wafer id {w.wafer_id!r} (also {seen[w.wafer_id].key})",
                            f"{w.key}.id", "wafer", key_index(w.key), "id")
        seen[w.wafer_id] = w


def parse_lot(text: str, path: str | Path, *, allow_outside: bool = False) -> LotFile:
    """Parse the text of a lot file.

    Parameters
    ----------
    text
        The TOML text.
    path
        The lot file's path; ``run`` and ``material_file`` paths are resolved relative to its
        directory, and it is named in errors.
    allow_outside
        Accept ``run`` and ``material_file`` paths that leave the lot file's folder (through
        ``..``, an absolute path or a symbolic link); refused by default.

    Returns
    -------
    LotFile
        The lot, in canonical units.

    Raises
    ------
    InputError
        For a TOML syntax error, values nested too deep, an unknown or missing key, a wrong
        type, a missing file, a file outside the lot's folder or an impossible claim; ``file``,
        ``line`` (when it can be found) and the key path as ``column`` say where.
    """
    path = Path(path).resolve()
    ctx = LotContext(path, text)
    try:
        top = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        msg = str(exc)
        m = re.search(r"line (\d+)", msg)
        raise InputError(f"not valid TOML: {msg}", file=str(path),
                         line=int(m.group(1)) if m else None) from None
    except RecursionError:
        # tomllib descends once per [ or { level; no lot file nests more than a few
        raise InputError("not a lot file: arrays or inline tables nested too deep",
                         file=str(path), line=_deepest_line(text)) from None
    check_keys(ctx, top, _TOP_KEYS, "", None)
    supplier = read_string(ctx, top, "supplier", "", None, required=True)
    lot = read_string(ctx, top, "lot", "", None, required=True)
    date = _parse_date(ctx, top)
    certificate = read_string(ctx, top, "certificate", "", None, required=False)
    note = read_string(ctx, top, "note", "", None, required=False)
    decision = _parse_decision(ctx, read_table(ctx, top, "decision"))
    measurement = _parse_measurement(ctx, top)
    claims = [parse_claim(ctx, d, i) for i, d in
              enumerate(read_tables(ctx, top, "claim"), start=1)]
    wafers = [_parse_wafer(ctx, d, i, path.parent, measurement, allow_outside) for i, d in
              enumerate(read_tables(ctx, top, "wafer"), start=1)]
    _cross_checks(ctx, claims, wafers)
    return LotFile(path, supplier, lot, date, decision, tuple(claims), tuple(wafers),
                   certificate, note, measurement)


def _deepest_line(text: str) -> int | None:
    """The line (1-based) where brackets and braces first nest deepest, ignoring strings."""
    depth = best = 0
    best_line = None
    for lineno, line in enumerate(text.splitlines(), start=1):
        for ch in line:
            if ch in "[{":
                depth += 1
                if depth > best:
                    best, best_line = depth, lineno
            elif ch in "]}":
                depth = max(depth - 1, 0)
    return best_line


def load_lot(path: str | Path, *, allow_outside: bool = False) -> LotFile:
    """Read and parse a lot file.

    Parameters
    ----------
    path
        Path of the TOML lot file.
    allow_outside
        Accept wafer files outside the lot file's folder (see :func:`parse_lot`).

    Returns
    -------
    LotFile
        The lot, in canonical units.

    Raises
    ------
    InputError
        If the file cannot be read or is not a valid lot file (see :func:`parse_lot`).
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError("lot file not found", file=str(p)) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read lot file: {exc}", file=str(p)) from None
    return parse_lot(text, p, allow_outside=allow_outside)
