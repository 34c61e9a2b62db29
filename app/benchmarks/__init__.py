"""Benchmarks and the load generator, each run as `python -m rankscope.benchmarks.NAME`: core, read,
refit, stream, load. Measure and print only: nothing in app/ imports them, and they assert nothing.
"""
