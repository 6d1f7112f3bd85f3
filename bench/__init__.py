"""Benchmarks (run with `python -m bench`); not part of the test suite."""
