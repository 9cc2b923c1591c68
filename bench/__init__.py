"""Benchmarks (not timed tests): python -m bench."""
