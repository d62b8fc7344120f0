"""Run every benchmark: ``python -m benchmarks`` from the repository root."""

from . import bench_beam_modes, bench_exact_frf, bench_modal

if __name__ == "__main__":
    bench_exact_frf.main()
    print()
    bench_beam_modes.main()
    print()
    bench_modal.main()
