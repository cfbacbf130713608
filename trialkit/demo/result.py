"""Result objects of the demo: :class:`DemoResult`, :class:`DemoTrial`, :class:`DemoStage`.

Plain data inside (paths, dicts of numbers, DataFrames), a readable ``repr``, an HTML
repr for Jupyter and ``to_dict()`` for JSON.

Examples
--------
>>> DemoStage("plan", "done", "24 baths").to_dict()
{'name': 'plan', 'status': 'done', 'detail': '24 baths'}
>>> DemoStage("recipes", "skipped: no [bath] section").done
False
"""

from __future__ import annotations

import html
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd


@dataclass(frozen=True)
class DemoStage:
    """One stage of one trial: ``status`` is ``"done"``, ``"skipped: ..."`` or ``"failed"``."""

    name: str
    status: str
    detail: str = ""

    @property
    def done(self) -> bool:
        return self.status == "done"

    def to_dict(self) -> dict:
        return {"name": self.name, "status": self.status, "detail": self.detail}


@dataclass
class DemoTrial:
    """What the demo did with one example trial.

    Attributes
    ----------
    name : str
        Folder name of the example (``chelator-sweep`` ...).
    folder : Path
        Its copy under the demo's output folder.
    title : str
    stages : list of DemoStage
    paths : dict
        Files written, by role (``plan``, ``mixing_sheet``, ``sheet_xlsx``, ``sheet_csv``,
        ``filled_sheet``, ``record_log``, ``responses``, ``analysis``, ``report``,
        ``figures``).
    numbers : dict
        Key numbers: plan fingerprint, baths, coupons, values stored, findings per
        response, the recommended settings.
    """

    name: str
    folder: Path
    title: str = ""
    stages: list[DemoStage] = field(default_factory=list)
    paths: dict = field(default_factory=dict)
    numbers: dict = field(default_factory=dict)

    def stage(self, name: str) -> DemoStage:
        """The stage called ``name`` (KeyError if it did not run)."""
        for s in self.stages:
            if s.name == name:
                return s
        raise KeyError(f"no stage {name!r}; ran: {[s.name for s in self.stages]}")

    @property
    def report(self) -> Path | None:
        p = self.paths.get("report")
        return Path(p) if p else None

    def to_dict(self) -> dict:
        return {"name": self.name, "folder": str(self.folder), "title": self.title,
                "stages": [s.to_dict() for s in self.stages],
                "paths": {k: (list(map(str, v)) if isinstance(v, list) else str(v))
                          for k, v in self.paths.items()},
                "numbers": plain_data(self.numbers)}


@dataclass
class DemoResult:
    """The outcome of :func:`run_demo`: one :class:`DemoTrial` per example trial."""

    out_dir: Path
    trials: list[DemoTrial]

    def trial(self, name: str) -> DemoTrial:
        for t in self.trials:
            if t.name == name:
                return t
        raise KeyError(f"no trial {name!r}; the demo ran {[t.name for t in self.trials]}")

    @property
    def reports(self) -> list[Path]:
        """Paths of the reports written."""
        return [t.report for t in self.trials if t.report is not None]

    @property
    def summary(self) -> pd.DataFrame:
        """One row per trial: trial, baths, values_stored, stages_done, skipped, report."""
        rows = []
        for t in self.trials:
            rows.append({"trial": t.name, "baths": t.numbers.get("baths"),
                         "values_stored": t.numbers.get("values_stored"),
                         "stages_done": sum(s.done for s in t.stages),
                         "skipped": "; ".join(f"{s.name} ({s.status})" for s in t.stages
                                              if not s.done),
                         "recommended": t.numbers.get("recommended_text") or "",
                         "report": str(t.report) if t.report else ""})
        return pd.DataFrame(rows)

    def to_dict(self) -> dict:
        return {"out_dir": str(self.out_dir), "trials": [t.to_dict() for t in self.trials]}

    def __repr__(self) -> str:
        lines = [f"DemoResult({self.out_dir}: {len(self.trials)} trials, invented data)"]
        for t in self.trials:
            done = sum(s.done for s in t.stages)
            lines.append(f"  {t.name}: {done}/{len(t.stages)} stages done"
                         + (f", report {t.report}" if t.report else ", no report"))
            lines += [f"    {s.name}: {s.status}" for s in t.stages if not s.done]
        return "\n".join(lines)

    def _repr_html_(self) -> str:
        head = (f"<p><b>trialkit demo</b> in <code>{html.escape(str(self.out_dir))}</code> "
                "(invented example trials and readings)</p>")
        return head + self.summary.to_html(index=False, escape=True)


def plain_data(obj: Any) -> Any:
    """JSON-ready copy: NaN -> None, numpy scalars -> Python."""
    if isinstance(obj, dict):
        return {str(k): plain_data(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [plain_data(v) for v in obj]
    if hasattr(obj, "item") and not isinstance(obj, (str, bytes)):
        obj = obj.item()
    if isinstance(obj, float) and not math.isfinite(obj):
        return None
    if isinstance(obj, Path):
        return str(obj)
    return obj
