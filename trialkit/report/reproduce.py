"""How to reproduce a report: package versions, seed, plan fingerprint, source files with
their SHA-256.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import platform
from importlib import metadata
from pathlib import Path

import pandas as pd

from trialkit.analysis.trial_data import TrialAnalysis
from trialkit.report.document import Block

PACKAGES = ("numpy", "scipy", "pandas", "statsmodels", "matplotlib", "seaborn", "jinja2",
            "pyDOE3", "phreeqc", "pint", "molmass", "openpyxl")


def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with path.open("rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 16), b""):
            h.update(chunk)
    return h.hexdigest()


def _version(name: str) -> str:
    try:
        return metadata.version(name)
    except metadata.PackageNotFoundError:
        return "not installed"


def reproduce_blocks(data: TrialAnalysis) -> list[Block]:
    """Versions, seed, fingerprint and every source file with its SHA-256."""
    import trialkit

    tk = _version("trialkit")
    if tk == "not installed":
        tk = f"source tree at {Path(trialkit.__file__).resolve().parent.parent}"
    pairs = [("trialkit", tk), ("Python", platform.python_version())]
    pairs += [(p, _version(p)) for p in PACKAGES]
    files = []
    for path in sorted(data.folder.rglob("*")):
        if path.is_file() and path.suffix.lower() in (".toml", ".csv", ".xlsx", ".json",
                                                      ".sqlite", ".py"):
            files.append({"file": str(path.relative_to(data.folder)),
                          "bytes": path.stat().st_size, "sha256": _sha256(path)})
    check = data.log_check
    log = [] if check is None else [(
        "Record log", f"intact: {check.ingests} ingest(s), {check.readings} value(s); "
                      f"head of its hash chain {check.head}" if check.ok
        else f"BROKEN: {check.broken[0]} (run 'trialkit verify' for every fault)")]
    blocks = [Block.pairs([("Seed", data.trial.seed),
                           ("Plan fingerprint", data.plan.fingerprint),
                           *log,
                           ("Written", dt.datetime.now(dt.UTC).strftime("%Y-%m-%d"))]),
              Block.pairs(pairs, "Versions"),
              Block.frame(pd.DataFrame(files), "Source files and their SHA-256")]
    models = [f"{n}: {m}" for n, m in data.models.items()]
    if models:
        blocks.append(Block.bullets(models, "Models fitted"))
    return blocks
