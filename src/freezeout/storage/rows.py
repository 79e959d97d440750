"""What each column of a history record holds: built from typed records, or from stored JSON.

A fit row comes from a :class:`~freezeout.fitting.result.FitResult`, a lot row and its claim
rows from a :class:`~freezeout.records.qualification.LotQualification`; the result JSON column
holds their ``to_dict()`` as canonical JSON. :func:`claim_rows_from_document` rebuilds the
claim rows from a stored lot JSON (the schema step that added them backfills with it) and
gives the same rows as :func:`claim_rows` for the same lot.
"""

from __future__ import annotations

import datetime as _dt
import json
from collections.abc import Mapping
from typing import Any

from freezeout.errors import InputError
from freezeout.fitting.result import FitResult
from freezeout.numbers import finite_or_none, sha256_bytes
from freezeout.records.qualification import LotQualification
from freezeout.records.verdicts import ClaimVerdict, LotVerdict


def canonical_json(obj: Any) -> str:
    """JSON with sorted keys and no spaces: equal data give equal text (and hash)."""
    return json.dumps(obj, sort_keys=True, separators=(",", ":"), default=str)


def options_hash(options: Mapping[str, Any]) -> str:
    """SHA-256 (hex) of the canonical JSON of an options mapping."""
    return sha256_bytes(canonical_json(dict(options)).encode("utf-8"))


def provenance_columns(input_name: str, input_sha256: str, options: Mapping[str, Any],
                       tool_version: str, result: Mapping) -> dict:
    """The columns every record has: when, what input, which options and tool, the JSON.

    Parameters
    ----------
    input_name
        The input file's name as stored.
    input_sha256
        SHA-256 (hex, 64 digits) of the input.
    options
        The options that, with the input, determine the result.
    tool_version
        freezeout's version.
    result
        The result JSON document.

    Returns
    -------
    dict
        ``created_at`` (now, UTC), ``input_name``, ``input_sha256`` (lower case),
        ``options_json``, ``options_hash``, ``tool_version``, ``result_json``.

    Raises
    ------
    InputError
        If ``input_sha256`` is not a 64-digit hex digest.
    """
    if not (isinstance(input_sha256, str) and len(input_sha256) == 64):
        raise InputError(f"input_sha256 must be a 64-digit hex digest, got {input_sha256!r}")
    opts = canonical_json(dict(options))
    return {
        "created_at": _dt.datetime.now(_dt.UTC),
        "input_name": str(input_name),
        "input_sha256": input_sha256.lower(),
        "options_json": opts,
        "options_hash": sha256_bytes(opts.encode("utf-8")),
        "tool_version": str(tool_version),
        "result_json": canonical_json(dict(result)),
    }


def fit_row(result: FitResult) -> dict:
    """The ``fit_records`` row of a fit (its provenance names the input, options and tool).

    Raises
    ------
    InputError
        If the result's provenance lacks the input name, SHA-256, options or tool version.
    """
    prov = result.provenance or {}
    try:
        row = provenance_columns(prov["input"], prov["sha256"], prov["options"],
                                 prov["tool_version"], result.to_dict())
    except KeyError as exc:
        raise InputError(f"a fit result without {exc.args[0]!r} in its provenance cannot be "
                         "stored") from None
    material = result.material  # a Material; a plain mapping in older results
    net = result.net_doping
    row.update(
        material=material.get("name") if isinstance(material, Mapping) else material.name,
        carrier=result.carrier,
        net_doping=finite_or_none(net.value),
        net_doping_stderr=finite_or_none(net.stderr),
    )
    return row


def lot_input_name(qualification: LotQualification) -> str:
    """The lot's stored input name: ``<folder>/<file>`` of the lot file."""
    path = qualification.lot.path
    return f"{path.parent.name}/{path.name}"


def lot_row(qualification: LotQualification) -> dict:
    """The ``lot_records`` row of a qualification; its JSON column is ``to_dict()``.

    Raises
    ------
    InputError
        If the verdict's date is not an ISO date.
    """
    prov = qualification.provenance
    v = qualification.verdict
    row = provenance_columns(lot_input_name(qualification), prov.lot_input_sha256,
                             prov.options, prov.tool_version, qualification.to_dict())
    try:
        lot_date = _dt.date.fromisoformat(str(v.date))
    except ValueError as exc:
        raise InputError(f"not a lot result: {exc}") from None
    row.update(supplier=str(v.supplier), lot=str(v.lot), lot_date=lot_date,
               verdict=str(v.verdict), decision_rule=v.rule)
    return row


def _claim_row(c: ClaimVerdict, wafer_id: str, index: int, lot_record_id: int) -> dict:
    w = c.window
    return {
        "lot_record_id": lot_record_id,
        "wafer_id": str(wafer_id),
        "claim_index": index,
        "claim_key": c.claim_key,
        "quantity": str(c.quantity),
        "unit": w.unit if w is not None else None,
        "temperature_K": finite_or_none(c.temperature_K),
        "measured": finite_or_none(c.measured),
        "measured_text": c.measured if isinstance(c.measured, str) else None,
        "stderr": finite_or_none(c.stderr),
        "coverage_factor": finite_or_none(c.coverage_factor),
        "spec_min": None if w is None else finite_or_none(w.lower),
        "spec_max": None if w is None else finite_or_none(w.upper),
        "nominal": None if w is None else finite_or_none(w.nominal),
        "claimed": None if w is None else finite_or_none(w.reference()),
        "claimed_text": c.claimed if w is None and isinstance(c.claimed, str) else None,
        "verdict": str(c.verdict),
        "margin": finite_or_none(c.margin),
    }


def claim_rows(verdict: LotVerdict, lot_record_id: int) -> list[dict]:
    """The ``claim_records`` rows of a lot verdict: one per wafer and claim, in order."""
    return [_claim_row(c, w.wafer_id, i, lot_record_id)
            for w in verdict.wafers for i, c in enumerate(w.claims)]


def claim_rows_from_document(result: Mapping, lot_record_id: int) -> list[dict]:
    """The ``claim_records`` rows from a stored lot JSON (``LotVerdict.to_dict()`` form)."""
    rows = []
    for w in result.get("wafers") or []:
        for i, c in enumerate(w.get("claims") or []):
            m = c.get("measured") or {}
            spec = c.get("spec") or {}
            value = m.get("value")
            rows.append({
                "lot_record_id": lot_record_id,
                "wafer_id": str(w.get("id")),
                "claim_index": i,
                "claim_key": c.get("claim"),
                "quantity": str(c.get("quantity")),
                "unit": c.get("unit"),
                "temperature_K": finite_or_none(c.get("temperature_K")),
                "measured": finite_or_none(value),
                "measured_text": value if isinstance(value, str) else None,
                "stderr": finite_or_none(m.get("stderr")),
                "coverage_factor": finite_or_none(c.get("coverage_factor")),
                "spec_min": finite_or_none(spec.get("min")),
                "spec_max": finite_or_none(spec.get("max")),
                "nominal": finite_or_none(spec.get("nominal")),
                "claimed": finite_or_none(c.get("claimed_reference")),
                "claimed_text": spec.get("value") if isinstance(spec.get("value"), str) else None,
                "verdict": str(c.get("verdict")),
                "margin": finite_or_none(c.get("margin_U")),
            })
    return rows
