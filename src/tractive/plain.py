"""JSON-ready data: the one place that turns results into plain Python.

numpy scalars and arrays become floats, ints, bools and lists; NaN and ±inf
become None (JSON has no such numbers); dict keys become strings.
"""

from __future__ import annotations

import json
import math
import sys

# numpy is not imported here, so that ``tractive --help`` starts without it: an
# object can only be a numpy one once numpy is loaded (see _numpy).


def _numpy():
    """The numpy module when it is loaded, else None."""
    return sys.modules.get("numpy")


def plain(obj):
    """A JSON-ready copy of ``obj`` (numpy → Python, NaN/±inf → None, tuples → lists)."""
    np = _numpy()
    if np is None:
        return _plain_python(obj)
    if isinstance(obj, dict):
        return {str(k): plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [plain(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return plain(obj.tolist())
    if isinstance(obj, (bool, np.bool_)):
        return bool(obj)
    if isinstance(obj, (np.floating, float)):
        v = float(obj)
        return v if math.isfinite(v) else None
    if isinstance(obj, np.integer):
        return int(obj)
    return obj


def _plain_python(obj):
    """:func:`plain` for data without numpy objects (numpy not loaded)."""
    if isinstance(obj, dict):
        return {str(k): _plain_python(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_plain_python(v) for v in obj]
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    return obj


def plain_number(x):
    """float for a scalar, list of floats for an array, None for None (NaN kept).

    For ``to_dict`` of physics results whose arrays carry a vehicle axis;
    :func:`plain` then turns the NaN into None when the document is written.
    """
    if x is None:
        return None
    import numpy as np

    x = np.asarray(x, float)
    return float(x) if x.ndim == 0 else x.tolist()


def json_text(data, indent: int | None = 2) -> str:
    """One JSON document of ``data`` (made plain first), UTF-8 text kept as is."""
    return json.dumps(plain(data), indent=indent, allow_nan=False, ensure_ascii=False)
