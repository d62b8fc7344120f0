"""Benchmarks: dampline against hand-written scipy baselines, timed in the same run."""
