"""Shared test builders and helpers (tests/ is on sys.path through pyproject's
`pythonpath`, so this package imports as `support`).

Nothing here computes an expected value with steelyard: the oracles (exact
fractions, tomllib) are independent of the program under test.
"""
