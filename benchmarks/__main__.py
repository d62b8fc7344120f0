"""Run every benchmark: ``python -m benchmarks`` from the repository root."""

from . import bench_exact_frf

if __name__ == "__main__":
    bench_exact_frf.main()
