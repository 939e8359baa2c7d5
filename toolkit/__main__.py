"""``python -m toolkit``: the command line lives in :mod:`toolkit.cli`."""
import sys

from toolkit.cli import main

if __name__ == "__main__":
    sys.exit(main())
