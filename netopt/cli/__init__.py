"""Command line: ``netopt <verb> ...`` (the parser, the verbs and :func:`main` are in :mod:`netopt.cli.app`).

Loading the command line imports pandas, Pyomo and HiGHS (a second or two): Ctrl-C meanwhile ends with
"interrupted" and exit code 130, as Ctrl-C during a verb does, never a traceback.
"""

from __future__ import annotations

import sys

try:
    from netopt.cli.app import RESULT_VERBS, VERBS, build_parser, main
except KeyboardInterrupt:
    print("interrupted", file=sys.stderr)
    raise SystemExit(130) from None  # EXIT_INTERRUPTED of netopt.cli.common, whose import was interrupted

__all__ = ["RESULT_VERBS", "VERBS", "build_parser", "main"]
