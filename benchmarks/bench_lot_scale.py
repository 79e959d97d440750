"""Lot qualification and supplier history at scale: 100- and 1,000-wafer lots, 10,000 records.

The lots are the bundled synthetic sample lot ``sample_data/lot_kestrel_2026-11`` (fictional
supplier "Kestrel Ridge Wafers", fictional "Harrowgate Cryo Lab") replicated into a temporary
folder: its four temperature runs, wafer after wafer, each copy's densities scaled by a
factor within +-3 % so every run file (and its SHA-256) is distinct. The history database is
filled through the storage API in one batch (``Store.save_lots``) with 10,000 lot records of
that supplier (one wafer each, three claims), made from the 100-wafer lot's verdicts.

Timed (wall clock, this machine), each once after a warm-up in this process:

- ``qualify_lot`` of the 100-wafer and the 1,000-wafer lot, report and history included,
  with the default workers (and, with ``--compare``, 1 and 2 workers);
- ``history`` over the 10,000 records, the trend PNG included;
- the batch write of the 10,000 records.

The PNG sizes of the lot charts and of the trend figure are printed too.

Run: python benchmarks/bench_lot_scale.py [--compare] [--sizes 100 1000] [--keep DIR]
"""

from __future__ import annotations

import argparse
import dataclasses
import datetime as dt
import os
import shutil
import struct
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "sample_data" / "lot_kestrel_2026-11"
TEMPERATURE_RUNS = ("w01_temperature_run.csv", "w02_temperature_run.csv",
                    "w04_temperature_run.csv", "w05_temperature_run.csv")


def _header(text: str) -> str:
    """The sample lot file's top-level keys and claims, without its wafers."""
    return text.split("[[wafer]]", 1)[0]


def _scaled_run(text: str, factor: float) -> str:
    """A run with its density and density-error columns multiplied by ``factor``."""
    out = []
    for line in text.splitlines():
        cells = line.split(",")
        if line.startswith("#") or len(cells) != 3:
            out.append(line)
            continue
        try:
            t, n, e = (float(c) for c in cells)
        except ValueError:  # the column-name row
            out.append(line)
            continue
        out.append(f"{t!r},{n * factor!r},{e * factor!r}")
    return "\n".join(out) + "\n"


def make_lot(folder: Path, n_wafers: int, lot_id: str = "KRW-BENCH-01") -> Path:
    """A lot of ``n_wafers`` temperature runs in ``folder`` (made); its lot file's path."""
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "runs").mkdir(exist_ok=True)
    sources = [(SAMPLE / "runs" / name).read_text() for name in TEMPERATURE_RUNS]
    head = _header((SAMPLE / "lot.toml").read_text())
    head = head.replace('lot = "KRW-2611-07"', f'lot = "{lot_id}"')
    parts = [head]
    for i in range(n_wafers):
        factor = 1.0 + 0.03 * ((i * 0.618033988749895) % 1.0 * 2.0 - 1.0)
        name = f"w{i + 1:04d}.csv"
        (folder / "runs" / name).write_text(_scaled_run(sources[i % len(sources)], factor))
        parts.append(f'[[wafer]]\nid = "W{i + 1:04d}"\nmaterial = "Si"\nrun = "runs/{name}"\n')
    path = folder / "lot.toml"
    path.write_text("\n".join(parts))
    return path


def png_size(path: Path) -> tuple[int, int]:
    """(width, height) in pixels of a PNG file, read from its IHDR chunk."""
    with open(path, "rb") as fh:
        head = fh.read(24)
    return struct.unpack(">II", head[16:24])


def history_records(qualification, n_records: int):
    """``n_records`` one-wafer qualifications of one supplier, dated a day apart.

    Each is the benchmark lot's qualification cut to one of its wafers, with its own lot id,
    date and input SHA-256, so each is a new record.
    """
    import hashlib

    q = qualification
    wafers = q.verdict.wafers
    start = dt.date(2000, 1, 1)
    out = []
    for i in range(n_records):
        w = wafers[i % len(wafers)]
        day = start + dt.timedelta(days=i)
        lot_id = f"KRW-H{i:05d}"
        verdict = dataclasses.replace(q.verdict, lot=lot_id, date=day.isoformat(),
                                      wafers=(w,), verdict=w.verdict)
        sha = hashlib.sha256(lot_id.encode()).hexdigest()
        prov = dataclasses.replace(q.provenance, lot_input_sha256=sha)
        lot = dataclasses.replace(q.lot, lot=lot_id)
        out.append(dataclasses.replace(q, lot=lot, verdict=verdict,
                                       inputs={w.wafer_id: q.inputs[w.wafer_id]},
                                       provenance=prov))
    return out


def _timed(label: str, fn):
    t0 = time.perf_counter()
    value = fn()
    dt_s = time.perf_counter() - t0
    print(f"{label:<58s} {dt_s:7.2f} s")
    return value, dt_s


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[100, 1000])
    ap.add_argument("--records", type=int, default=10_000)
    ap.add_argument("--compare", action="store_true",
                    help="also time 1 and 2 workers explicitly")
    ap.add_argument("--keep", type=Path, help="write into this folder and keep it")
    args = ap.parse_args()

    from freezeout import api
    from freezeout.api.qualification import default_workers
    from freezeout.storage import open_store

    tmp = args.keep or Path(tempfile.mkdtemp(prefix="freezeout-bench-"))
    tmp.mkdir(parents=True, exist_ok=True)
    print(f"CPUs: {os.cpu_count()}, folder: {tmp}")
    try:
        warm = make_lot(tmp / "warm", 4, "KRW-WARM")
        _timed("warm-up: qualify_lot, 4 wafers (imports)",
               lambda: api.qualify_lot(warm, out=tmp / "warm_report", record=False))
        first = None
        for n in args.sizes:
            lot = make_lot(tmp / f"lot{n}", n, f"KRW-BENCH-{n}")
            runs = [("default", None)]
            if args.compare:
                runs += [("1 worker", 1), ("2 workers", 2)]
            for label, workers in runs:
                tag = label.replace(" ", "_")
                db = f"sqlite:///{tmp / f'history_{n}_{tag}.sqlite'}"
                shown = default_workers(n) if workers is None else workers
                out, _ = _timed(f"qualify_lot {n} wafers, {label} ({shown})",
                                lambda lot=lot, db=db, w=workers, n=n, label=label:
                                api.qualify_lot(lot, out=tmp / f"report_{n}_{label}", db=db,
                                                workers=w))
                if first is None:
                    first = out.qualification
            for name, path in sorted(out.written.items()):
                if name.endswith(".png"):
                    w, h = png_size(path)
                    print(f"  {name}: {w} x {h} px")
        if first is None:
            return
        url = f"sqlite:///{tmp / 'history_10k.sqlite'}"
        records = history_records(first, args.records)
        with open_store(url) as store:
            _timed(f"save_lots: {len(records)} records, one transaction",
                   lambda: store.save_lots(records))
        res, _ = _timed(f"history over {len(records)} records (trend PNG drawn)",
                        lambda: api.history(db=url, out=tmp / "history_out"))
        print(f"  records listed: {len(res.records)}")
        for s, path in res.figures.items():
            if path is not None:
                w, h = png_size(path)
                print(f"  {path.name} ({s}): {w} x {h} px, "
                      f"{len(res.trends[s])} trend points")
    finally:
        if args.keep is None:
            shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":
    main()
