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


def pytest_collection_modifyitems(config, items):
    """Tests marked ``fuzz_long`` run only when asked for by ``-m fuzz_long`` (``make fuzz``)."""
    if "fuzz_long" in (config.getoption("markexpr") or ""):
        return
    skip = pytest.mark.skip(reason="long fuzz: run with `make fuzz` (pytest -m fuzz_long)")
    for item in items:
        if "fuzz_long" in item.keywords:
            item.add_marker(skip)
