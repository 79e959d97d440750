"""Generate two earlier synthetic lots of the same fictional supplier, for the history trend.

SYNTHETIC DATA, fictional scenario: "Kestrel Ridge Wafers" (fictional) shipped lots
KRW-2609-02 and KRW-2610-05 before KRW-2611-07 (scripts/make_sample_lot.py), each checked
at the fictional Harrowgate Cryo Lab with three single room-temperature results. Their net
doping drifts upward from lot to lot (about 0.93, then 1.06 times the nominal 9e14 cm^-3),
ahead of the November lot where one wafer is out of specification: what
`freezeout history --supplier "Kestrel Ridge Wafers"` is meant to show.

Run: python scripts/make_sample_history.py (reproducible: seeded numpy Generator).
"""

from __future__ import annotations

import numpy as np
from make_sample_lot import LOT_TOML, OUT, single_point

from freezeout.io.atomic import atomic_write_text

SEED = 20260901
# lot folder, lot id, date, true net doping of each wafer [cm^-3]
LOTS = (
    ("lot_kestrel_2026-09", "KRW-2609-02", "2026-09-08", {"W01": 8.3e14, "W02": 8.5e14,
                                                         "W03": 8.4e14}),
    ("lot_kestrel_2026-10", "KRW-2610-05", "2026-10-06", {"W01": 9.4e14, "W02": 9.7e14,
                                                         "W03": 9.5e14}),
)


def lot_toml(lot: str, date: str, wafers) -> str:
    """The November lot file's header and claims, with this lot's id, date and wafers."""
    head = LOT_TOML[: LOT_TOML.index("[[wafer]]")]
    head = head.replace('lot = "KRW-2611-07"', f'lot = "{lot}"')
    head = head.replace("date = 2026-11-03", f"date = {date}")
    body = "".join(f'[[wafer]]\nid = "{w}"\nmaterial = "Si"\n'
                   f'run = "runs/{w.lower()}_room_temperature.csv"\n\n' for w in wafers)
    return head + body.rstrip("\n") + "\n"


def main() -> None:
    rng = np.random.default_rng(SEED)
    for folder, lot, date, wafers in LOTS:
        out = OUT.parent / folder
        for wafer, net in wafers.items():
            single_point(wafer, net, rng, out=out, lot=lot)
        atomic_write_text(out / "lot.toml", lot_toml(lot, date, wafers))
        print(f"wrote {out}")


if __name__ == "__main__":
    main()
