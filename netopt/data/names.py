"""Scenario names and the folder each result label is written under: the one mapping and its checks.

A scenario run writes each solve's results to ``scenarios/<folder>/`` and a scenario's frontier to
``frontier_<folder>.csv``, where ``<folder>`` is :func:`folder_name` of the row's label (the scenario
name, or the name with a suffix such as `` [hold]``).  Two labels whose folder names are equal, or
equal but for case (macOS and Windows folders are case-insensitive), would overwrite each other's
results, so the scenario parser refuses them (:func:`folder_clashes`) before anything is solved.
"""

from __future__ import annotations

import unicodedata

MAX_SCENARIO_NAME_CHARS = 100
"""Longest scenario name (characters): it becomes a folder name and a comparison row label."""

MAX_FOLDER_NAME_BYTES = 200
"""Longest folder name (UTF-8 bytes) of a result label; file systems allow 255 for a whole file name."""

WINDOWS_DEVICE_NAMES = frozenset(
    ["CON", "PRN", "AUX", "NUL"]
    + [f"{dev}{n}" for dev in ("COM", "LPT") for n in [*"123456789", "\u00b9", "\u00b2", "\u00b3"]]
)
"""Folder names Windows reserves for devices (any case); :func:`folder_name` appends ``_`` to them."""


def folder_name(label: str) -> str:
    """The folder name of result label ``label``.

    Letters, digits, ``-`` and ``_`` are kept (Unicode NFC-normalised), every other character becomes
    ``_``, and leading or trailing ``_`` are dropped; a Windows device name (``CON``, ``NUL``, ``COM1``,
    …) gets a trailing ``_``.  Empty when the label has no letter, digit or ``-``: the parser refuses
    such a name.
    """
    text = unicodedata.normalize("NFC", label)
    out = "".join(ch if ch.isalnum() or ch in "-_" else "_" for ch in text).strip("_")
    return f"{out}_" if out.upper() in WINDOWS_DEVICE_NAMES else out


def folder_key(label: str) -> str:
    """What identifies ``label``'s folder on a case-insensitive file system (macOS, Windows)."""
    return unicodedata.normalize("NFC", folder_name(label).casefold())


def shown(value: object, limit: int = 60) -> str:
    """``value`` for a message: text quoted with control characters escaped and cut to ``limit``
    characters; a whole number too long to print by its digit count."""
    if isinstance(value, str):
        r = repr(value[:limit])
        return r[:-1] + "…'" if len(value) > limit else r
    if isinstance(value, int) and not isinstance(value, bool) and value.bit_length() > 64:
        return f"a whole number of about {int(value.bit_length() * 0.30103) + 1} digits"
    r = repr(value)
    return r if len(r) <= limit else r[:limit] + "…"


def _invisible(ch: str) -> bool:
    """A control, format (zero-width, bidi override), surrogate, private or unassigned character, or a
    line or paragraph separator."""
    return unicodedata.category(ch)[0] == "C" or unicodedata.category(ch) in ("Zl", "Zp")


def name_problem(value: object, what: str = "name") -> str | None:
    """Why ``value`` cannot be a scenario name (None: it can).  ``what`` names the field."""
    if not isinstance(value, str):
        return f"{what} must be text in quotes, not {shown(value)}"
    name = value.strip()
    if not name:
        return f"{what} is empty"
    bad = next((ch for ch in name if _invisible(ch)), None)
    if bad is not None:
        return f"{what} {shown(name)} holds the invisible or control character U+{ord(bad):04X}"
    if len(name) > MAX_SCENARIO_NAME_CHARS:
        return f"{what} {shown(name)} has {len(name)} characters, more than the {MAX_SCENARIO_NAME_CHARS} allowed"
    if "," in name:
        return f"{what} {shown(name)} holds a comma, which separates the names given to run --only"
    if not folder_name(name):
        return f"{what} {shown(name)} has no letter or digit, so it gives no folder name for its results"
    return None


def label_problem(label: str) -> str | None:
    """Why result label ``label`` cannot be written as a folder (None: it can)."""
    folder = folder_name(label)
    if not folder:
        return f"result label {shown(label)} gives no folder name"
    size = len(folder.encode("utf-8"))
    if size > MAX_FOLDER_NAME_BYTES:
        return (
            f"result label {shown(label)} gives a folder name of {size} bytes, more than the "
            f"{MAX_FOLDER_NAME_BYTES} allowed (shorten the name)"
        )
    return None


def folder_clashes(labels: list[tuple[str, str, str]]) -> list[str]:
    """One message per pair of scenarios whose results would be written to the same place.

    ``labels``: (label, scenario it belongs to, where: ``scenarios/`` for a result folder,
    ``frontier_`` for a frontier file).  Each message names both scenarios, both labels and the folder.
    """
    first: dict[str, tuple[str, str]] = {}
    pairs: set[frozenset[str]] = set()
    out: list[str] = []
    for label, owner, where in labels:
        if not folder_key(label):
            continue
        other, other_owner = first.setdefault(where + folder_key(label), (label, owner))
        pair = frozenset((owner, other_owner))
        if (other, other_owner) == (label, owner) or pair in pairs:
            continue
        pairs.add(pair)
        same = (
            "the same label" if other == label else "the same folder name (letters, digits, - and _ kept, case ignored)"
        )
        out.append(
            f"scenarios {shown(other_owner)} and {shown(owner)}: results {shown(other)} and {shown(label)} have "
            f"{same}, so both would be written to '{where}{folder_name(label)}' and one lost; rename one"
        )
    return out
