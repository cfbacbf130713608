"""Mutations of valid trial files, for the property-based hardening tests.

A trial file is read with :mod:`tomllib`, one spot of the document is spoiled (a key
dropped, a value replaced by one of the wrong type, a non-finite or huge number, odd
unicode, deep nesting) and the document is written back as TOML by :func:`to_toml` (inline
tables only, which TOML allows for every table).  The mutations are invented for testing.
"""

from __future__ import annotations

import math
from typing import Any

#: Replacement values: wrong types, non-finite and huge numbers, odd text, nesting.
ODD_VALUES: list[Any] = [
    math.nan, math.inf, -math.inf, 1e308, -1e308, 1e18, 10**18, -(10**18), 0, -1, 0.0, -0.0,
    1e-300, 1000000, 10**9, True, False, "", " ", "\x00", "\u202e", "e\u0301", "日本",
    "a" * 5000, "nan", "1e9", "=1+1", [], [1, 2], ["x", 1], [[1]], {}, {"a": 1},
    {"a": {"b": {"c": [1, {"d": 2}]}}}, [[[[[[[[[[1]]]]]]]]]], [{"a": 1}], 3.5, 2,
]


def to_toml(doc: dict) -> str:
    """``doc`` as TOML text: each top-level key as ``key = <inline value>``."""
    return "".join(f"{_key(k)} = {_value(v)}\n" for k, v in doc.items())


def _key(k: str) -> str:
    return _string(str(k))


def _string(text: str) -> str:
    """A TOML basic string: quotes, backslashes and control characters escaped."""
    out = []
    for c in text:
        if c in '"\\':
            out.append("\\" + c)
        elif ord(c) < 0x20 or ord(c) == 0x7F:
            out.append(f"\\u{ord(c):04x}")
        else:
            out.append(c)
    return '"' + "".join(out) + '"'


def _value(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return _string(v)
    if isinstance(v, list):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{_key(k)} = {_value(x)}" for k, x in v.items()) + "}"
    return _string(str(v))


def paths(doc: Any, prefix: tuple = ()) -> list[tuple]:
    """Every key path (tuple of keys and list indices) in ``doc``, parents first."""
    out: list[tuple] = []
    if isinstance(doc, dict):
        for k, v in doc.items():
            out.append((*prefix, k))
            out.extend(paths(v, (*prefix, k)))
    elif isinstance(doc, list):
        for i, v in enumerate(doc):
            out.append((*prefix, i))
            out.extend(paths(v, (*prefix, i)))
    return out


def mutate(doc: dict, path: tuple, action: str, value: Any = None) -> dict:
    """A deep copy of ``doc`` with the item at ``path`` dropped or replaced by ``value``."""
    import copy

    new = copy.deepcopy(doc)
    parent = new
    for step in path[:-1]:
        parent = parent[step]
    last = path[-1]
    if action == "drop":
        del parent[last]
    elif action == "nest":
        parent[last] = {"x": parent[last]}
    else:
        parent[last] = copy.deepcopy(value)
    return new
