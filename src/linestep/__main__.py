"""`python -m linestep` runs the command line."""

import sys

from linestep.cli import main

sys.exit(main())
