"""``python -m netopt.cli``: the command line."""

from netopt.cli import main

main()
