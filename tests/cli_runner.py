"""Running the ``freezeout`` entry point in-process, as the console script does."""

from __future__ import annotations

import sys

import pytest

from freezeout.cli.app import main


def cli(monkeypatch, capsys, *args):
    """Run ``freezeout ARGS``; return (exit code, stdout, stderr)."""
    monkeypatch.setattr(sys, "argv", ["freezeout", *map(str, args)])
    with pytest.raises(SystemExit) as info:
        main()
    out = capsys.readouterr()
    return info.value.code, out.out, out.err
