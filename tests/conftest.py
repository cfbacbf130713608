"""Shared test helpers: run the real command line as a subprocess."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]


def run_cli(
    *args: str, cwd: Path | None = None, timeout: float = 300
) -> subprocess.CompletedProcess:
    """Run ``python -m trialkit ARGS`` from the source tree and capture its output."""
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    env.setdefault("MPLBACKEND", "Agg")
    return subprocess.run([sys.executable, "-m", "trialkit", *args], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=timeout)


@pytest.fixture
def cli():
    """The :func:`run_cli` helper as a fixture."""
    return run_cli
