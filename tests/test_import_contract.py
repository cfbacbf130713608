"""The import rules of ``pyproject.toml`` ([tool.importlinter]) hold, and a wrong import
breaks them (import-linter, run as a user runs it: ``lint-imports``)."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
LINT = shutil.which("lint-imports") or str(Path(sys.executable).with_name("lint-imports"))


def _lint(root: Path) -> subprocess.CompletedProcess:
    env = dict(os.environ, PYTHONPATH=str(root))
    return subprocess.run([LINT, str(root / "pyproject.toml"), "--no-cache"],
                          cwd=root, env=env, capture_output=True, text=True, timeout=300)


def test_the_package_keeps_its_import_contracts():
    res = _lint(ROOT)
    assert res.returncode == 0, res.stdout[-3000:] + res.stderr[-2000:]
    assert "4 kept, 0 broken" in res.stdout


@pytest.mark.parametrize("module, bad_import, contract", [
    # the figures draw result objects; they import nothing from the report
    ("figures/plots.py", "from trialkit.report import document", "Each stage imports"),
    # the record log knows no sheets
    ("records/log.py", "from trialkit.records.sheets import layout", "knows no sheets"),
    # the report renders; it does not compute
    ("report/quality.py", "from trialkit.analysis import pipeline", "computes none"),
    # no circles between the modules of one folder
    ("trial/factors.py", "from trialkit.trial import spec", "No circles"),
])
def test_a_wrong_import_breaks_a_contract(tmp_path, module, bad_import, contract):
    shutil.copytree(ROOT / "trialkit", tmp_path / "trialkit",
                    ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copy(ROOT / "pyproject.toml", tmp_path / "pyproject.toml")
    path = tmp_path / "trialkit" / module
    path.write_text(path.read_text(encoding="utf-8") + f"\n{bad_import}  # noqa\n",
                    encoding="utf-8")
    res = _lint(tmp_path)
    assert res.returncode != 0
    broken = res.stdout[res.stdout.index("Broken contracts"):]
    assert contract in broken   # (a wrong import may break another rule as well)
