"""``python -m viscometry``: the command line (see :mod:`viscometry.cli`)."""

import sys

from viscometry.cli import main

if __name__ == "__main__":
    sys.exit(main())
