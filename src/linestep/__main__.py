"""`python -m linestep` runs the command line."""

import sys

from linestep.cli import main

if __name__ == "__main__":
    sys.exit(main())
