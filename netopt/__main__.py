"""``python -m netopt``: the command line (see :mod:`netopt.cli`)."""

from netopt.cli import main

main()
