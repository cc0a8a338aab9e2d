"""Benchmarks that print figures for this machine (not tests).

``python -m mdsim.bench`` times the engine (:mod:`mdsim.bench.engine`, with
the Monte Carlo rows of :mod:`mdsim.bench.montecarlo`);
``python -m mdsim.bench_job`` times one whole study (:mod:`mdsim.bench.job`);
``python -m mdsim.bench.threebody`` the Axilrod-Teller partner lists, all
pairs against linked cells.
"""
__all__ = []
