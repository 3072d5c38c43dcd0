"""Command line: ``python -m skfunc demo`` (see ``python -m skfunc demo --help``)."""

import sys

from ._demo import main

if __name__ == "__main__":
    sys.exit(main())
