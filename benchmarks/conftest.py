"""Benchmarks are not tests: `make bench` runs the engine's (pytest-benchmark); the others
are scripts with a `Run:` line in their docstrings."""
