"""`python -m propulsion` runs the command line."""

from propulsion.cli import main

main()
