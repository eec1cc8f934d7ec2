"""tractive: what a vehicle modification costs or saves.

The library computes road load, wheel energy over drive cycles and user speed
profiles, fuel or battery use, range and performance, and compares a baseline
vehicle with its modifications. The ``tractive`` command is a thin layer over
these functions.
"""

__version__ = "0.1.0"
