"""``python -m mdsim.bench_job``: kept as a short name for :mod:`mdsim.bench.job`."""
import sys

from mdsim.bench.job import main

if __name__ == "__main__":
    sys.exit(main())
