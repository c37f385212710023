"""`python -m propulsion` runs the command line."""

from propulsion.cli import entry

if __name__ == "__main__":  # worker processes import this module too; they must not run it
    entry()
