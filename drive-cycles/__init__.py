"""Bundled drive-cycle speed tables (data only).

The tables, ``index.yaml`` and one provenance note per cycle live in this
folder; :mod:`tractive.profiles` reads them with :mod:`importlib.resources`.
"""
