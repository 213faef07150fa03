"""The README's "Limits and safety" table states every limit of netopt/data/limits.py, at its value.

Checked against the module itself (the one place the limits live); nothing outside the project.
"""

from __future__ import annotations

import re
from pathlib import Path

import netopt.data.limits as limits

README = Path(__file__).resolve().parents[1] / "README.md"
UNITS = {"MB": 1e6, "s": 1.0, "": 1.0}


def _stated() -> dict[str, float]:
    rows = re.findall(r"^\| `([A-Z_]+)` \| ([^|]+) \|", README.read_text(encoding="utf-8"), flags=re.M)
    out = {}
    for name, text in rows:
        number, _, unit = text.strip().partition(" ")
        out[name] = float(number.replace(",", "")) * UNITS[unit]
    return out


def test_every_limit_is_in_the_readme_at_its_value():
    declared = {k: float(v) for k, v in vars(limits).items() if k.isupper() and isinstance(v, (int, float))}
    stated = _stated()
    assert set(stated) == set(declared), set(stated) ^ set(declared)
    for name, value in declared.items():
        assert stated[name] == value, (name, stated[name], value)
