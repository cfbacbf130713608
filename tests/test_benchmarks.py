"""The benchmark scripts still load (they are not run by the suite, so a stale import after
a move would otherwise go unnoticed): each one's top level runs without its ``main``, and
its docstring names the baseline its ratios are against."""

from __future__ import annotations

import runpy
from pathlib import Path

import pytest

BENCH = Path(__file__).resolve().parents[1] / "benchmarks"


@pytest.mark.parametrize("script", sorted(p.name for p in BENCH.glob("bench_*.py")))
def test_benchmark_script_loads(script):
    namespace = runpy.run_path(str(BENCH / script), run_name="benchmark_smoke_test")
    assert callable(namespace["main"])
    assert "baseline" in (namespace.get("__doc__") or "").lower()
