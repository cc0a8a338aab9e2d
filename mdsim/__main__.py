"""``python -m mdsim``: the same command line as the ``mdsim`` script."""
import sys

from mdsim.cli import main

if __name__ == "__main__":
    sys.exit(main())
