"""Imports deferred to first use, so that light commands and ``--help`` do not load
heavy libraries (scipy, pandas, matplotlib) they never call."""

from __future__ import annotations

import importlib


class LazyModule:
    """Stands for the module ``name``; imports it on the first attribute access."""

    def __init__(self, name: str):
        self._name = name

    def __getattr__(self, attr):
        return getattr(importlib.import_module(self._name), attr)

    def __repr__(self) -> str:
        return f"<module {self._name!r}, imported on first use>"


def lazy_function(module: str, name: str):
    """A function that imports ``module`` when first called and calls its ``name``."""

    def call(*args, **kwargs):
        return getattr(importlib.import_module(module), name)(*args, **kwargs)

    call.__name__ = call.__qualname__ = name
    call.__doc__ = f"{module}.{name}, imported when first called."
    return call
