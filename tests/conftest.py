"""Shared fixtures of the test suite."""

from __future__ import annotations

import os

import matplotlib
import pytest

matplotlib.use("Agg")


@pytest.fixture(autouse=True)
def _isolated_history(tmp_path, monkeypatch):
    """Keep every test's history database in its own temporary folder."""
    monkeypatch.setenv("FREEZEOUT_DB", f"sqlite:///{tmp_path / 'history.sqlite'}")
    yield


@pytest.fixture
def repo_root():
    return os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
