"""Benchmarks run on demand only: ``pytest tests/benchmarks -m benchmark -s``."""
