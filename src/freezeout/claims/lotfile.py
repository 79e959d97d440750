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
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import math
import re
import tomllib
from pathlib import Path

from freezeout.claims import silicon
from freezeout.errors import InputError
from freezeout.io.material_file import read_material_file
from freezeout.numbers.units import CANONICAL, parse_unit
from freezeout.physics.materials import get_material
from freezeout.records.lot import Claim, Decision, HallFactor, LotFile, Wafer  # noqa: F401
from freezeout.records.verdicts import RULES, SpecWindow

QUANTITIES = ("net_doping", "resistivity", "type")
_DIMENSION = {"net_doping": "density", "resistivity": "resistivity"}

_TOP_KEYS = {"supplier", "lot", "date", "certificate", "note", "decision", "measurement",
             "claim", "wafer"}
_DECISION_KEYS = {"rule", "coverage_factor"}
_HALL_KEYS = {"hall_factor", "hall_factor_uncertainty"}
_MEASUREMENT_KEYS = set(_HALL_KEYS)
_CLAIM_KEYS = {
    "quantity", "min", "max", "nominal", "tolerance", "unit", "dopant", "temperature_K",
    "value", "note",
}
_WAFER_KEYS = {"id", "material", "material_file", "run", "note", *_HALL_KEYS}
_SILICON_NAMES = {"si", "silicon"}

#: Accepted Hall factors, the same range the run readers accept. [1]
HALL_FACTOR_RANGE = (0.1, 10.0)


def is_silicon(material: str | None) -> bool:
    """Whether a material name denotes silicon (``"Si"``, ``"silicon"``, any case)."""
    return material is not None and material.strip().lower() in _SILICON_NAMES


def claim_dopant(claim: Claim, claims) -> str | None:
    """The dopant that the net doping behind ``claim`` is taken to come from.

    The claim's own ``dopant`` when it names one; otherwise the single boron or phosphorus
    dopant that the lot's claims name (e.g. a resistivity claim's ``dopant = "phosphorus"``);
    otherwise None (none, or both, named).

    Parameters
    ----------
    claim
        The claim being decided.
    claims
        All the lot's claims.

    Returns
    -------
    str or None
        ``"boron"``, ``"phosphorus"``, another dopant as written (lower case), or None.
    """
    if claim.dopant:
        return claim.dopant
    named = {c.dopant for c in claims if c.dopant in silicon.DOPANTS}
    return named.pop() if len(named) == 1 else None



# ---------------------------------------------------------------------------------------------
# locating keys in the text (tomllib gives no positions)


class _Locator:
    _ARRAY = re.compile(r"^\s*\[\[\s*([A-Za-z0-9_.\-]+)\s*\]\]")
    _TABLE = re.compile(r"^\s*\[\s*([A-Za-z0-9_.\-]+)\s*\]")
    _KEY = re.compile(r"""^\s*["']?([A-Za-z0-9_\-]+)["']?\s*=""")

    def __init__(self, text: str) -> None:
        # (table name, occurrence index or None, line number) for each header
        self.keys: dict[tuple[str, int | None, str], int] = {}
        self.headers: dict[tuple[str, int | None], int] = {}
        counts: dict[str, int] = {}
        current: tuple[str, int | None] = ("", None)
        for lineno, line in enumerate(text.splitlines(), start=1):
            m = self._ARRAY.match(line)
            if m:
                name = m.group(1)
                counts[name] = counts.get(name, 0) + 1
                current = (name, counts[name])
                self.headers.setdefault(current, lineno)
                continue
            m = self._TABLE.match(line)
            if m:
                current = (m.group(1), None)
                self.headers.setdefault(current, lineno)
                continue
            m = self._KEY.match(line)
            if m:
                self.keys.setdefault((current[0], current[1], m.group(1)), lineno)

    def line(self, table: str, index: int | None = None, key: str | None = None) -> int | None:
        if key is not None and (table, index, key) in self.keys:
            return self.keys[(table, index, key)]
        return self.headers.get((table, index))


class _Ctx:
    def __init__(self, path: Path, text: str) -> None:
        self.file = str(path)
        self.loc = _Locator(text)

    def error(
        self, message: str, column: str, table: str = "", index: int | None = None,
        key: str | None = None,
    ) -> InputError:
        return InputError(message, file=self.file, line=self.loc.line(table, index, key),
                          column=column)


def _path(table: str, index: int | None, key: str | None = None) -> str:
    base = table if index is None else f"{table}[{index}]"
    if not base:
        return key or ""
    return base if key is None else f"{base}.{key}"


def _check_keys(ctx: _Ctx, d: dict, allowed: set[str], table: str, index: int | None) -> None:
    for k in d:
        if k not in allowed:
            known = ", ".join(sorted(allowed))
            raise ctx.error(f"unknown key {k!r} (known keys: {known})", _path(table, index, k),
                            table, index, k)


def _string(ctx, d, key, table, index, *, required: bool) -> str | None:
    if key not in d:
        if required:
            where = f"[{_path(table, index)}]" if table else "the top level"
            raise ctx.error(f"missing key {key!r} in {where}", _path(table, index, key),
                            table, index)
        return None
    v = d[key]
    if not isinstance(v, str) or not v.strip():
        raise ctx.error(f"{key} must be a non-empty string, got {v!r}", _path(table, index, key),
                        table, index, key)
    return v.strip()


def _number(ctx, d, key, table, index) -> float | None:
    if key not in d:
        return None
    v = d[key]
    if isinstance(v, bool) or not isinstance(v, int | float):
        raise ctx.error(f"{key} must be a number, got {v!r}", _path(table, index, key),
                        table, index, key)
    if not math.isfinite(v):
        raise ctx.error(f"{key} must be finite, got {v!r}", _path(table, index, key),
                        table, index, key)
    return float(v)


def _table(ctx, top, key) -> dict:
    if key not in top:
        raise ctx.error(f"missing table [{key}]", key)
    v = top[key]
    if not isinstance(v, dict):
        raise ctx.error(f"{key} must be a table [{key}]", key, key)
    return v


def _array_of_tables(ctx, top, key) -> list[dict]:
    if key not in top:
        raise ctx.error(f"missing [[{key}]] entries: at least one is needed", key)
    v = top[key]
    if not isinstance(v, list) or not all(isinstance(e, dict) for e in v):
        raise ctx.error(f"{key} must be an array of tables [[{key}]]", key, key)
    if not v:
        raise ctx.error(f"at least one [[{key}]] entry is needed", key)
    return v


# ---------------------------------------------------------------------------------------------


def _parse_decision(ctx: _Ctx, d: dict) -> Decision:
    _check_keys(ctx, d, _DECISION_KEYS, "decision", None)
    rule = _string(ctx, d, "rule", "decision", None, required=True)
    if rule not in RULES:
        raise ctx.error(f"rule must be one of {', '.join(RULES)}, got {rule!r}",
                        "decision.rule", "decision", None, "rule")
    k = _number(ctx, d, "coverage_factor", "decision", None)
    if k is None:
        k = 2.0
    if not 0 < k <= 10:
        # k = 2 for about 95 % is usual; beyond 10 the value is a typing slip, not a choice
        raise ctx.error(f"coverage_factor must be above 0 and at most 10, got {k:g}",
                        "decision.coverage_factor", "decision", None, "coverage_factor")
    return Decision(rule=rule, coverage_factor=k)


def _parse_hall(ctx: _Ctx, d: dict, table: str, index: int | None,
                inherit: HallFactor) -> HallFactor:
    """The Hall-factor keys of ``[measurement]`` or of one ``[[wafer]]`` over ``inherit``."""
    value, stderr = inherit.value, inherit.stderr
    value_key, stderr_key = inherit.value_key, inherit.stderr_key
    v = _number(ctx, d, "hall_factor", table, index)
    if v is not None:
        lo, hi = HALL_FACTOR_RANGE
        if not lo <= v <= hi:
            raise ctx.error(f"hall_factor must be between {lo:g} and {hi:g} (near 1 in "
                            f"practice), got {v:g}",
                            _path(table, index, "hall_factor"), table, index, "hall_factor")
        value, value_key = v, _path(table, index, "hall_factor")
    u = _number(ctx, d, "hall_factor_uncertainty", table, index)
    if u is not None:
        if not u >= 0:
            raise ctx.error(f"hall_factor_uncertainty (a standard uncertainty) must be >= 0, "
                            f"got {u:g}", _path(table, index, "hall_factor_uncertainty"),
                            table, index, "hall_factor_uncertainty")
        stderr, stderr_key = u, _path(table, index, "hall_factor_uncertainty")
    return HallFactor(value, stderr, value_key, stderr_key)


def _parse_measurement(ctx: _Ctx, top: dict) -> HallFactor:
    if "measurement" not in top:
        return HallFactor()
    d = top["measurement"]
    if not isinstance(d, dict):
        raise ctx.error("measurement must be a table [measurement]", "measurement",
                        "measurement")
    _check_keys(ctx, d, _MEASUREMENT_KEYS, "measurement", None)
    return _parse_hall(ctx, d, "measurement", None, HallFactor())


def _parse_claim(ctx: _Ctx, d: dict, i: int) -> Claim:
    t = "claim"
    _check_keys(ctx, d, _CLAIM_KEYS, t, i)
    key = _path(t, i)
    quantity = _string(ctx, d, "quantity", t, i, required=True)
    if quantity not in QUANTITIES:
        raise ctx.error(f"quantity must be one of {', '.join(QUANTITIES)}, got {quantity!r}",
                        _path(t, i, "quantity"), t, i, "quantity")
    note = _string(ctx, d, "note", t, i, required=False)
    temperature = _number(ctx, d, "temperature_K", t, i)
    if temperature is None:
        temperature = 300.0
    if not temperature > 0:
        raise ctx.error(f"temperature_K must be > 0, got {temperature:g}",
                        _path(t, i, "temperature_K"), t, i, "temperature_K")
    dopant_raw = _string(ctx, d, "dopant", t, i, required=False)

    if quantity == "type":
        for k in ("min", "max", "nominal", "tolerance", "unit"):
            if k in d:
                raise ctx.error(f"a type claim takes value = \"n\" or \"p\", not {k}",
                                _path(t, i, k), t, i, k)
        value = _string(ctx, d, "value", t, i, required=True)
        if value not in ("n", "p"):
            raise ctx.error(f"value of a type claim must be \"n\" or \"p\", got {value!r}",
                            _path(t, i, "value"), t, i, "value")
        dopant = dopant_raw.lower() if dopant_raw else None
        if dopant is not None and dopant.lower() in ("b", "boron", "p", "phosphorus"):
            dopant = silicon.normalize_dopant(dopant)
        return Claim(key, quantity, None, None, dopant, temperature, carrier=value, note=note)

    if "value" in d:
        raise ctx.error(f"value is for type claims; a {quantity} claim takes min/max or "
                        "nominal/tolerance", _path(t, i, "value"), t, i, "value")
    unit = _string(ctx, d, "unit", t, i, required=True)
    try:
        u = parse_unit(unit, _DIMENSION[quantity])
    except ValueError as exc:
        raise ctx.error(str(exc), _path(t, i, "unit"), t, i, "unit") from None
    canonical = CANONICAL[_DIMENSION[quantity]]
    what = "resistivity" if quantity == "resistivity" else "net doping (|N_D - N_A|)"

    raw = {k: _number(ctx, d, k, t, i) for k in ("min", "max", "nominal")}
    for k, v in raw.items():
        if v is not None and not v > 0:
            raise ctx.error(f"{k} = {v:g}: a {what} must be > 0", _path(t, i, k), t, i, k)
    tolerance_percent = None
    has_limits = raw["min"] is not None or raw["max"] is not None
    has_nominal = raw["nominal"] is not None or "tolerance" in d
    if has_limits and has_nominal:
        k = "nominal" if "nominal" in d else "tolerance"
        raise ctx.error("give either min and/or max, or nominal and tolerance, not both",
                        _path(t, i, k), t, i, k)
    if has_limits:
        lo = None if raw["min"] is None else float(u.to_canonical(raw["min"]))
        hi = None if raw["max"] is None else float(u.to_canonical(raw["max"]))
        if lo is not None and hi is not None and not lo < hi:
            raise ctx.error(f"max ({raw['max']:g}) must be greater than min ({raw['min']:g})",
                            _path(t, i, "max"), t, i, "max")
        window = SpecWindow(lo, hi, None, canonical)
    elif has_nominal:
        if raw["nominal"] is None:
            raise ctx.error("tolerance given without nominal", _path(t, i, "nominal"), t, i,
                            "tolerance")
        if "tolerance" not in d:
            raise ctx.error("nominal given without tolerance", _path(t, i, "tolerance"), t, i,
                            "nominal")
        tol = d["tolerance"]
        nominal = float(u.to_canonical(raw["nominal"]))
        col = _path(t, i, "tolerance")
        if isinstance(tol, str):
            m = re.fullmatch(r"\s*([0-9.eE+\-]+)\s*%\s*", tol)
            try:
                pct = float(m.group(1)) if m else math.nan
            except ValueError:
                pct = math.nan
            if not math.isfinite(pct):
                raise ctx.error(f"tolerance {tol!r} is neither a number nor a percentage like "
                                "\"10%\"", col, t, i, "tolerance")
            if not pct > 0:
                raise ctx.error(f"tolerance must be > 0, got {tol!r}", col, t, i, "tolerance")
            if not pct < 100:
                raise ctx.error(f"tolerance {tol!r} puts the lower limit at or below zero",
                                col, t, i, "tolerance")
            tolerance_percent = pct
            window = SpecWindow.from_nominal(nominal, pct, percent=True, unit=canonical)
        else:
            tv = _number(ctx, d, "tolerance", t, i)
            if not tv > 0:
                raise ctx.error(f"tolerance must be > 0, got {tv:g}", col, t, i, "tolerance")
            half = float(u.scale_uncertainty(tv))
            if not half < nominal:
                raise ctx.error(f"tolerance {tv:g} {unit} puts the lower limit at or below zero",
                                col, t, i, "tolerance")
            window = SpecWindow.from_nominal(nominal, half, unit=canonical)
    else:
        raise ctx.error(f"a {quantity} claim needs min and/or max, or nominal and tolerance",
                        key, t, i)

    dopant = None
    if dopant_raw is not None:
        if quantity == "resistivity":
            try:
                dopant = silicon.normalize_dopant(dopant_raw)
            except InputError as exc:
                raise ctx.error(exc.message + "; omit dopant to compare a measured resistivity",
                                _path(t, i, "dopant"), t, i, "dopant") from None
            lo_v, hi_v = silicon.RESISTIVITY_RANGE[dopant]
            wlo = window.lower if window.lower is not None else 0.0
            whi = window.upper if window.upper is not None else math.inf
            if whi < lo_v or wlo > hi_v:
                raise ctx.error(
                    f"specification {window.describe()} lies wholly outside the ASTM F723 "
                    f"{dopant} range {lo_v:g} to {hi_v:g} ohm cm: it cannot be checked through "
                    "the conversion; omit dopant to compare a measured resistivity",
                    key, t, i, "min" if "min" in d else "max")
        else:
            dopant = dopant_raw.lower()
            if dopant in ("b", "boron", "p", "phosphorus", "phosphorous"):
                dopant = silicon.normalize_dopant(dopant)
    return Claim(key, quantity, window, unit, dopant, temperature,
                 tolerance_percent=tolerance_percent, note=note)


def _parse_wafer(ctx: _Ctx, d: dict, i: int, base: Path, lot_hall: HallFactor) -> Wafer:
    t = "wafer"
    _check_keys(ctx, d, _WAFER_KEYS, t, i)
    if "id" in d and isinstance(d["id"], int) and not isinstance(d["id"], bool):
        raise ctx.error(f"id must be a string (write id = \"{d['id']}\")", _path(t, i, "id"),
                        t, i, "id")
    wid = _string(ctx, d, "id", t, i, required=True)
    material = _string(ctx, d, "material", t, i, required=False)
    material_file_s = _string(ctx, d, "material_file", t, i, required=False)
    if (material is None) == (material_file_s is None):
        raise ctx.error("give exactly one of material or material_file", _path(t, i), t, i,
                        "material" if material else None)
    material_file = None
    if material_file_s is not None:
        material_file = (base / material_file_s).resolve()
        if not material_file.is_file():
            raise ctx.error(f"material file not found: {material_file}",
                            _path(t, i, "material_file"), t, i, "material_file")
        try:
            material = read_material_file(material_file).name
        except InputError as exc:
            raise ctx.error(f"bad material file: {exc}", _path(t, i, "material_file"), t, i,
                            "material_file") from None
    else:
        try:
            material = get_material(material).name
        except InputError as exc:
            raise ctx.error(exc.message, _path(t, i, "material"), t, i, "material") from None
    run_s = _string(ctx, d, "run", t, i, required=True)
    run = (base / run_s).resolve()
    if not run.is_file():
        raise ctx.error(f"run file not found: {run}", _path(t, i, "run"), t, i, "run")
    note = _string(ctx, d, "note", t, i, required=False)
    hall = _parse_hall(ctx, d, t, i, lot_hall)
    if hall.stderr > 0 and hall.value is None:
        # an uncertainty means nothing without the value it belongs to
        key = hall.stderr_key or _path(t, i, "hall_factor_uncertainty")
        table, index = ("measurement", None) if key.startswith("measurement") else (t, i)
        raise ctx.error(
            f"{key.rsplit('.', 1)[0]} gives hall_factor_uncertainty, but wafer {wid} has no "
            "hall_factor (in [measurement] or its [[wafer]] entry) for it to belong to: state "
            "the r_H the uncertainty is for", key, table, index, "hall_factor_uncertainty")
    return Wafer(_path(t, i), wid, material, material_file, run, note, hall)


def _parse_date(ctx: _Ctx, top: dict) -> _dt.date:
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


def _cross_checks(ctx: _Ctx, claims: list[Claim], wafers: list[Wafer]) -> None:
    types = [c for c in claims if c.quantity == "type"]
    if len({c.carrier for c in types}) > 1:
        c = types[-1]
        raise ctx.error(f"type claims contradict each other ({types[0].carrier} and "
                        f"{c.carrier})", f"{c.key}.value", "claim", _index(c.key), "value")
    claimed_type = types[0].carrier if types else None
    for c in claims:
        if c.dopant in silicon.CARRIER_OF_DOPANT:
            implied = silicon.CARRIER_OF_DOPANT[c.dopant]
            if claimed_type is not None and implied != claimed_type:
                raise ctx.error(
                    f"dopant {c.dopant} makes silicon {implied}-type, but the lot claims "
                    f"type {claimed_type}", f"{c.key}.dopant", "claim", _index(c.key), "dopant")
        if c.quantity == "resistivity" and c.dopant in silicon.DOPANTS:
            for w in wafers:
                if not is_silicon(w.material):
                    mkey = "material" if w.material_file is None else "material_file"
                    raise ctx.error(
                        f"{c.key} converts net doping to resistivity with ASTM F723, which is "
                        f"for silicon only, but wafer {w.wafer_id} is {w.material}; omit "
                        "dopant to compare a measured resistivity, or claim net_doping",
                        f"{w.key}.{mkey}", "wafer", _index(w.key), mkey)
    seen: dict[str, Wafer] = {}
    for w in wafers:
        if w.wafer_id in seen:
            raise ctx.error(f"duplicate wafer id {w.wafer_id!r} (also {seen[w.wafer_id].key})",
                            f"{w.key}.id", "wafer", _index(w.key), "id")
        seen[w.wafer_id] = w


def _index(key: str) -> int:
    return int(key[key.index("[") + 1 : key.index("]")])


def parse_lot(text: str, path: str | Path) -> LotFile:
    """Parse the text of a lot file.

    Parameters
    ----------
    text
        The TOML text.
    path
        The lot file's path; ``run`` and ``material_file`` paths are resolved relative to its
        directory, and it is named in errors.

    Returns
    -------
    LotFile
        The lot, in canonical units.

    Raises
    ------
    InputError
        For a TOML syntax error, an unknown or missing key, a wrong type, a missing file or an
        impossible claim; ``file``, ``line`` (when it can be found) and the key path as
        ``column`` say where.
    """
    path = Path(path).resolve()
    ctx = _Ctx(path, text)
    try:
        top = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        msg = str(exc)
        m = re.search(r"line (\d+)", msg)
        raise InputError(f"not valid TOML: {msg}", file=str(path),
                         line=int(m.group(1)) if m else None) from None
    _check_keys(ctx, top, _TOP_KEYS, "", None)
    supplier = _string(ctx, top, "supplier", "", None, required=True)
    lot = _string(ctx, top, "lot", "", None, required=True)
    date = _parse_date(ctx, top)
    certificate = _string(ctx, top, "certificate", "", None, required=False)
    note = _string(ctx, top, "note", "", None, required=False)
    decision = _parse_decision(ctx, _table(ctx, top, "decision"))
    measurement = _parse_measurement(ctx, top)
    claims = [_parse_claim(ctx, d, i) for i, d in
              enumerate(_array_of_tables(ctx, top, "claim"), start=1)]
    wafers = [_parse_wafer(ctx, d, i, path.parent, measurement) for i, d in
              enumerate(_array_of_tables(ctx, top, "wafer"), start=1)]
    _cross_checks(ctx, claims, wafers)
    return LotFile(path, supplier, lot, date, decision, tuple(claims), tuple(wafers),
                   certificate, note, measurement)


def load_lot(path: str | Path) -> LotFile:
    """Read and parse a lot file.

    Parameters
    ----------
    path
        Path of the TOML lot file.

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
    return parse_lot(text, p)


def _sha256_file(p: Path) -> str:
    h = hashlib.sha256()
    with open(p, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def lot_input_sha256(lot: LotFile) -> str:
    """SHA-256 identifying a lot's whole input: the lot file and every file it refers to.

    The digest covers, in order, the lot file and each wafer's run and material file, each
    as its path relative to the lot file's directory and the SHA-256 of its bytes; so editing
    any run changes it, and moving the whole lot directory does not.

    Parameters
    ----------
    lot
        A parsed lot file.

    Returns
    -------
    str
        Hex digest.
    """
    base = lot.path.parent
    files: list[Path] = [lot.path]
    for w in lot.wafers:
        files.append(w.run)
        if w.material_file is not None:
            files.append(w.material_file)
    h = hashlib.sha256()
    for f in files:
        try:
            name = f.relative_to(base).as_posix()
        except ValueError:
            name = f.as_posix()
        h.update(name.encode("utf-8") + b"\0" + _sha256_file(f).encode("ascii") + b"\n")
    return h.hexdigest()
