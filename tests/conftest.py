"""Shared test set-up: make ``tests/casekit.py`` importable and offer the tiny case."""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

_TESTS = str(Path(__file__).resolve().parent)
if _TESTS not in sys.path:
    sys.path.insert(0, _TESTS)

from casekit import make_case_dir  # noqa: E402


@pytest.fixture
def tiny_case_dir(tmp_path):
    """The tiny valid case written as a folder (see tests/casekit.py)."""
    return make_case_dir(tmp_path)
