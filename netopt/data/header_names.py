"""Names as a reader sees them: a header, sheet, file or setting name that matches a known one but for
case, spacing, underscores or invisible characters is a near-miss, not an unknown name.

A near-miss would otherwise be ignored with a warning and its values silently replaced by defaults
(a header ``Capacity`` for ``capacity`` made every capacity unlimited), so readers report it as an error.
"""

from __future__ import annotations

import re
import unicodedata

_SPACING = re.compile(r"[\s_\-]+")


def _invisible(ch: str) -> bool:
    """A character that shows as nothing or as a plain space: format characters (zero-width space U+200B,
    byte-order mark U+FEFF, word joiner U+2060, ...) and non-breaking or other non-ASCII spaces."""
    return unicodedata.category(ch) == "Cf" or (ch.isspace() and ch not in " \t")


def name_key(name: str) -> str:
    """A header, sheet or setting name reduced to what a reader sees: invisible characters dropped, case
    folded, spaces, underscores and hyphens dropped (``' Unit Cost'`` and ``unit_cost`` → ``unitcost``)."""
    visible = "".join(" " if ch.isspace() else ch for ch in name if ch.isspace() or not _invisible(ch))
    return _SPACING.sub("", visible.casefold())


def resembled(name: str, known) -> str | None:
    """The known name that ``name`` matches but for case, spacing, underscores or invisible characters."""
    key = name_key(name)
    if not key:
        return None
    return next((k for k in known if k != name and name_key(k) == key), None)


def resemblance_message(name: str, known: str, what: str) -> str:
    """Why a near-match of a known name is an error, and what to rename it to."""
    hidden = [f"U+{ord(ch):04X}" for ch in name if _invisible(ch)]
    how = f"invisible characters ({', '.join(dict.fromkeys(hidden))})" if hidden else "case, spacing or underscores"
    return (
        f"'{name}' is not the {what} '{known}': it differs only in {how}, and as written it would be ignored "
        f"(its values unread, every row taking the default); rename it '{known}'"
    )
