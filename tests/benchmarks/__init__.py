"""Benchmarks against the reference libraries (not tests: nothing here is collected by pytest).

Run all of them with ``python -m tests.benchmarks`` from the checkout (``make bench``);
see ``__main__.py`` for how a benchmark module is registered.
"""
