"""pyDOE3 entry points, imported on first call.

pyDOE3 imports scipy.stats, which costs seconds on a cold start; commands that only read a
plan (sheets, ingest, history) should not pay for it before they need a design matrix.
"""

from __future__ import annotations

import importlib
from collections.abc import Callable
from typing import Any


def _lazy(name: str) -> Callable[..., Any]:
    def call(*args: Any, **kwargs: Any) -> Any:
        return getattr(importlib.import_module("pyDOE3"), name)(*args, **kwargs)

    call.__name__ = name
    call.__doc__ = f"pyDOE3.{name}, imported on first call."
    return call


fullfact = _lazy("fullfact")
fracfact = _lazy("fracfact")
pbdesign = _lazy("pbdesign")
bbdesign = _lazy("bbdesign")
lhs = _lazy("lhs")
