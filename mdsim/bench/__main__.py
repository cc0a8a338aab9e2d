"""``python -m mdsim.bench``: the engine benchmark."""
import sys

from mdsim.bench.engine import main

if __name__ == "__main__":
    sys.exit(main())
