"""The package surface: every public name resolves; importing stays light."""

from __future__ import annotations

import subprocess
import sys

import trialkit


def test_every_public_name_resolves():
    for name in trialkit.__all__:
        assert getattr(trialkit, name) is not None, name


def test_import_does_not_pull_heavy_libraries():
    code = ("import sys, trialkit, trialkit.cli; "
            "print(','.join(m for m in ('pandas', 'statsmodels', 'matplotlib', 'phreeqc') "
            "if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out == ""
