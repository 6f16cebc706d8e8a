"""Counting the calls of a module's function in a test (a cache hit must not parse, ...)."""

from __future__ import annotations


def count_calls(monkeypatch, module, name: str) -> list[int]:
    """Replace `module.name` with a wrapper that counts its calls; returns the one-element counter."""
    count = [0]
    real = getattr(module, name)

    def counting(*a, **kw):
        count[0] += 1
        return real(*a, **kw)

    monkeypatch.setattr(module, name, counting)
    return count
