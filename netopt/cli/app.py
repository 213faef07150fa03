"""Command line: ``netopt <verb> ...`` (imported through :mod:`netopt.cli`).

Each verb is two functions: ``add_<verb>(subparsers)`` declares its arguments and
sets ``func=cmd_<verb>``; ``cmd_<verb>(args) -> int`` does the work and returns the
exit code.  To add a verb, write both and append the ``add_`` function to
:data:`VERBS`.  :func:`main` turns a :class:`~netopt.data.case.CaseError` into a report
on stderr and exit code 2 (never a traceback), and so a results folder it may not or cannot write
(checked before any solve: read-only, no permission) and a write that fails (full disk); Ctrl-C is
"interrupted", exit code 130.

Exit codes: 0 ok, 2 invalid input or a results folder that cannot be written, 3 infeasible, 4 solver failure,
130 interrupted.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable
from importlib.metadata import version as package_version

from netopt.cli.case_verbs import add_check, add_export, add_template
from netopt.cli.common import EXIT_INTERRUPTED, EXIT_INVALID, EXIT_SOLVER
from netopt.cli.landed_verbs import add_baseline
from netopt.cli.plan_verbs import add_classify, add_sites
from netopt.cli.robust_verbs import add_robust
from netopt.cli.verbs import add_frontier, add_run, add_solve, add_stress
from netopt.data.case import CaseError
from netopt.engine.highs_check import ModelRejected
from netopt.present.files import OutputFailed, OutputRefused, check_output_folder

# --------------------------------------------------------------------------- main

RESULT_VERBS = (
    "solve",
    "baseline",
    "run",
    "stress",
    "frontier",
    "classify",
    "sites",
    "robust",
)  # verbs whose --out is a results folder
VERBS: list[Callable] = [
    add_template,
    add_check,
    add_export,
    add_solve,
    add_baseline,
    add_run,
    add_stress,
    add_frontier,
    add_classify,
    add_sites,
    add_robust,
]
"""Functions that each add one verb's subparser (in the order shown by --help)."""


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with every verb of :data:`VERBS`."""

    parser = argparse.ArgumentParser(
        prog="netopt",
        description="Supply-chain network and sourcing design: which DCs to open, which suppliers and plants "
        "serve which customers, and by which transport mode, at the least total landed cost "
        "(supply, production, DC fixed and handling, freight, inventory, carbon) within capacity, "
        "sourcing and service rules.",
        epilog="Exit codes: 0 ok, 2 invalid input or a results folder that cannot be written, 3 infeasible, "
        "4 solver failure, 130 interrupted.",
    )
    parser.add_argument("--version", action="version", version=f"netopt {package_version('netopt')}")
    sub = parser.add_subparsers(dest="verb", metavar="VERB")
    for add in VERBS:
        add(sub)
    return parser


def main(argv: list[str] | None = None) -> None:
    """Run one verb and exit with its code (SystemExit)."""
    try:
        parser = build_parser()
        args = parser.parse_args(argv)
        if getattr(args, "func", None) is None:
            parser.print_help(sys.stderr)
            raise SystemExit(EXIT_INVALID)
        if getattr(args, "out", None) and args.verb in RESULT_VERBS:  # refuse before any work is done
            check_output_folder(args.out, getattr(args, "case", None))
        code = args.func(args)
    except (OutputRefused, OutputFailed) as e:
        print(f"error: {e}", file=sys.stderr)
        code = EXIT_INVALID
    except CaseError as e:
        print(e.report(), file=sys.stderr)
        code = EXIT_INVALID
    except ModelRejected as e:  # a model HiGHS cannot take (numbers beyond its range) in a study's own model
        print(f"error: {e}", file=sys.stderr)
        code = EXIT_SOLVER
    except OSError as e:  # reading the case or writing a journal: missing, no permission, disk full, …
        print(f"error: {e.strerror or e}" + (f": {e.filename}" if e.filename else ""), file=sys.stderr)
        code = EXIT_INVALID
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        code = EXIT_INTERRUPTED
    raise SystemExit(code)


if __name__ == "__main__":
    main()
