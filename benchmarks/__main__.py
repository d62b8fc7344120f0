"""Run the benchmark suite from the repository root:
``python -m benchmarks [--quick] [--skip-mpmath] [--only NAME[,NAME]] [--json OUT] [--readme]``
(see :mod:`benchmarks.suite`; the sweep case runs when ``bench_sweep.py`` is present)."""

import sys

from .suite import main

if __name__ == "__main__":
    sys.exit(main())
