"""Benchmarks are not tests: run them with `make bench` (pytest-benchmark)."""
