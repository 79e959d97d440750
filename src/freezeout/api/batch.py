"""Several runs fitted with the same options, compared in one table and one figure."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

from freezeout.api.fits import fit_file
from freezeout.errors import FitError, InputError

if TYPE_CHECKING:
    from freezeout.fitting.result import FitResult


@dataclass(frozen=True)
class BatchFit:
    """The fits of several runs.

    Attributes
    ----------
    results
        One fit per run that could be fitted, in the order given.
    paths
        Their runs.
    failures
        (run, message, exit code) of each run that could not be read (2) or fitted (1), in
        the order given: the other runs are fitted all the same.
    """

    results: tuple[FitResult, ...]
    paths: tuple[Path, ...] = ()
    failures: tuple[tuple[Path, str, int], ...] = ()

    def comparison(self) -> list[dict]:
        """One row per run (see :func:`freezeout.reporting.comparison.comparison_rows`)."""
        from freezeout.reporting.comparison import comparison_rows

        return comparison_rows(self.results)

    def to_dict(self) -> dict:
        """What ``freezeout fit A.csv B.csv ... --json`` prints: every fit and the table."""
        from freezeout.numbers import finite_or_none

        rows = [{k: finite_or_none(v) if isinstance(v, float) else v for k, v in row.items()}
                for row in self.comparison()]
        return {"runs": [r.to_dict() for r in self.results], "comparison": rows,
                "failed": [{"input": str(p), "error": msg, "exit_code": code}
                           for p, msg, code in self.failures]}


def fit_files(paths: Sequence[str | Path], **options) -> BatchFit:
    """Fit every run with the same options (those of :func:`freezeout.api.fits.fit_file`).

    An ``"auto"`` level count is chosen for each run on its own (its own BIC comparison). A
    run that cannot be read or fitted is listed in ``failures`` with its message (which
    names it), and the others are fitted.

    Raises
    ------
    InputError
        No run given, or a run named twice (before any fit).
    """
    paths = [Path(p) for p in paths]
    if not paths:
        raise InputError("give at least one run to fit")
    seen = set()
    for p in paths:
        key = p.resolve() if p.exists() else p
        if key in seen:
            raise InputError("this run is named twice", file=str(p))
        seen.add(key)
    results, fitted, failures = [], [], []
    for p in paths:
        try:
            results.append(fit_file(p, **options))
            fitted.append(p)
        except (InputError, FitError) as exc:
            failures.append((p, str(exc), 2 if isinstance(exc, InputError) else 1))
    return BatchFit(tuple(results), tuple(fitted), tuple(failures))


def write_comparison(batch: BatchFit, folder: str | Path) -> dict[str, Path]:
    """Write comparison.csv and overlay.png into ``folder``."""
    from freezeout.reporting.comparison import write_comparison as _write

    return _write(batch.results, folder)


def default_comparison_folder() -> Path:
    """Where ``fit A.csv B.csv ...`` writes its comparison by default."""
    return Path("reports") / "comparison"
