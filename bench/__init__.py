"""Benchmarks at portfolio scale: a synthetic data generator and a harness (``python -m bench``)."""
