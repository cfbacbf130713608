"""The whole loop on the bundled example trials: :func:`run_demo` -> :class:`DemoResult`.

For each example trial (invented scenarios with invented readings, in ``example_trials/``
of the source tree) the demo copies the trial folder into ``<out>/<trial-name>/`` and
then runs every stage a person would: plan and write the plan; mix the baths (mixing
sheet); export the recording sheets (XLSX and CSV); fill a copy of the exported workbook
from the example's invented readings (:func:`trialkit.demo.fill.fill_sheet`); read it into a
fresh record log through the checked ingest; compute the responses; analyse them; write
``report.html`` (and the report's figures as PNG files).

A stage whose upstream piece is missing, or that cannot run on a trial, is recorded as
``"skipped: <reason>"``; nothing is invented in its place.  The library never prints:
pass ``progress`` to hear about each stage.

Examples
--------
>>> STAGES[0], STAGES[-1]
('copy', 'report')
"""

from __future__ import annotations

import datetime as dt
import json
import shutil
import warnings
from collections.abc import Callable, Sequence
from dataclasses import replace
from pathlib import Path
from typing import Any

import pandas as pd

from trialkit.demo.findings import demo_findings
from trialkit.demo.result import DemoResult, DemoStage, DemoTrial, plain_data
from trialkit.exceptions import TrialkitError
from trialkit.numbers import settings_text
from trialkit.records.sheet_names import SHEET_STEM, SHEETS_FOLDER, sheet_paths

#: Stages in the order they run.
STAGES = ("copy", "plan", "recipes", "sheets", "fill", "ingest", "responses", "analysis",
          "report")
#: What is copied from a bundled trial folder (the plan is made afresh).
COPIED = ("trial.toml", "README.md", "readings")
FIGURES_FOLDER = "figures"

ProgressCallback = Callable[[str, str, str], None]


class DemoError(TrialkitError):
    """The demo cannot start (bundled trials missing, unknown trial name, bad folder)."""


def example_trials_folder() -> Path:
    """The folder of bundled example trials (``example_trials/`` beside the package).

    Raises
    ------
    DemoError
        The folder is missing (trialkit was installed without its source tree).
    """
    import trialkit

    folder = Path(trialkit.__file__).resolve().parents[1] / "example_trials"
    if not folder.is_dir() or not any(folder.glob("*/trial.toml")):
        raise DemoError(
            f"the bundled example trials were not found (looked for {folder}/<name>/"
            "trial.toml). The demo needs the source tree: clone the repository and install "
            "it editable (pip install -e .) from its root, then run 'trialkit demo' again.")
    return folder


def bundled_trials() -> list[str]:
    """Names of the bundled example trials, sorted."""
    return sorted(p.parent.name for p in example_trials_folder().glob("*/trial.toml"))


def _message(exc: BaseException) -> str:
    text = str(exc).strip()
    return text.splitlines()[0] if text else type(exc).__name__


def default_out_dir(base: str | Path = ".") -> Path:
    """A new folder name ``trialkit-demo-YYYYmmdd-HHMMSS`` under ``base``."""
    stamp = dt.datetime.now().strftime("%Y%m%d-%H%M%S")
    out = Path(base) / f"trialkit-demo-{stamp}"
    k = 1
    while out.exists():
        k += 1
        out = Path(base) / f"trialkit-demo-{stamp}-{k}"
    return out


def _resolve_trials(trials: Sequence[str | Path] | None) -> list[Path]:
    if trials is None:
        root = example_trials_folder()
        return [root / n for n in bundled_trials()]
    out = []
    for t in trials:
        p = Path(t)
        if (p / "trial.toml").is_file():
            out.append(p)
            continue
        root = example_trials_folder()
        if (root / str(t) / "trial.toml").is_file():
            out.append(root / str(t))
            continue
        raise DemoError(f"no example trial {str(t)!r}: give a bundled name "
                        f"({', '.join(bundled_trials())}) or a folder holding trial.toml")
    return out


# -- the stages -------------------------------------------------------------------------
class _Runner:
    """Runs the stages of one trial, recording each; holds what stages hand on."""

    def __init__(self, src: Path, out: Path, progress: ProgressCallback | None,
                 until: str):
        self.src, self.progress, self.until = src, progress, until
        self.t = DemoTrial(src.name, out / src.name)
        self.plan = None
        self.config = None
        self.responses = None
        self.analysis = None
        self.blocked: str | None = None

    def record(self, name: str, status: str, detail: str = "") -> None:
        self.t.stages.append(DemoStage(name, status, detail))
        if self.progress is not None:
            self.progress(self.t.name, name, status + (f" - {detail}" if detail else ""))

    def run(self) -> DemoTrial:
        for name in STAGES:
            if self.blocked is not None:
                self.record(name, f"skipped: {self.blocked}")
            else:
                try:
                    detail = getattr(self, "_" + name)()
                except _Skip as s:
                    self.record(name, f"skipped: {s}")
                    if s.blocks:
                        self.blocked = f"the {name} stage did not run"
                except (TrialkitError, ImportError, OSError, ValueError) as exc:
                    self.record(name, "failed", _message(exc))
                    self.blocked = f"the {name} stage failed"
                else:
                    self.record(name, "done", detail or "")
            if name == self.until:
                break
        return self.t

    # each stage returns a short detail sentence or raises _Skip
    def _copy(self) -> str:
        dest = self.t.folder
        if dest.exists() and any(dest.iterdir()):
            raise DemoError(f"{dest} already exists and is not empty; give a new --out "
                            "folder (the demo writes a fresh record log)")
        dest.mkdir(parents=True, exist_ok=True)
        copied = []
        for name in COPIED:
            p = self.src / name
            if p.is_dir():
                shutil.copytree(p, dest / name)
            elif p.is_file():
                shutil.copy2(p, dest / name)
            else:
                continue
            copied.append(name)
        return "copied " + ", ".join(copied)

    def _plan(self) -> str:
        from trialkit.planning.plan import make_plan
        from trialkit.trial.file import load_trial

        trial = load_trial(self.t.folder / "trial.toml")
        self.t.title = trial.title
        self.plan = make_plan(trial)
        self.plan.write(self.t.folder)
        self.t.paths["plan"] = self.t.folder / "plan.csv"
        n = self.t.numbers
        n["fingerprint"] = self.plan.fingerprint
        n["seed"] = self.plan.seed
        n["design"] = trial.design.kind
        n["baths"] = int(len(self.plan.baths))
        n["coupons"] = int(len(self.plan.table))
        bundled = self.src / "plan.json"
        if bundled.exists():
            saved = json.loads(bundled.read_text(encoding="utf-8")).get("fingerprint")
            n["matches_bundled_plan"] = saved == self.plan.fingerprint
        return (f"{n['baths']} baths, {n['coupons']} coupons, fingerprint "
                f"{self.plan.fingerprint}")

    def _recipes(self) -> str:
        try:
            from trialkit.chemistry.mixing_sheet import recipes_for_plan
        except ImportError:
            raise _Skip("the chemistry module is not in this build", blocks=False) from None
        try:
            sheet = recipes_for_plan(self.plan)
        except TrialkitError as exc:
            raise _Skip(_message(exc), blocks=False) from None
        csv = sheet.write_csv(self.t.folder / "mixing_sheet.csv")
        page = sheet.write_html(self.t.folder / "mixing_sheet.html")
        self.t.paths["mixing_sheet"] = page
        self.t.paths["mixing_sheet_csv"] = csv
        recipes = getattr(sheet, "recipes", ())
        self.t.numbers["recipes"] = len(recipes)
        return f"{len(recipes)} recipes; wrote {page.name}"

    def _sheets(self) -> str:
        from trialkit.records.sheets import export_csv, export_xlsx, sheet_config

        config = sheet_config(self.plan.trial)
        note = ""
        tc = self.t.folder / "readings" / "timecourse.csv"
        if not config.has_timecourse and tc.exists():
            hours = sorted({float(h) for h in pd.read_csv(tc)["elapsed_h"].dropna()})
            config = replace(config, inspections_h=tuple(hours))
            note = (" (the trial file plans no inspections; the inspection sheet uses the "
                    f"times of the example's readings, {', '.join(f'{h:g}' for h in hours)} h)")
        self.config = config
        xlsx_path = sheet_paths(self.t.folder, "xlsx")[0]
        xlsx_path.parent.mkdir(exist_ok=True)
        xlsx = export_xlsx(self.plan, xlsx_path, config=config)
        csvs = [export_csv(self.plan, path, layout=layout, config=config)
                for path, layout in zip(sheet_paths(self.t.folder, "csv",
                                                    inspections=config.has_timecourse),
                                        ("coupons", "inspections"), strict=False)]
        self.t.paths["sheet_xlsx"] = xlsx
        self.t.paths["sheet_csv"] = csvs
        return f"wrote {xlsx.name} and {', '.join(p.name for p in csvs)}{note}"

    def _fill(self) -> str:
        from trialkit.demo.fill import fill_sheet

        readings = self.t.folder / "readings" / "coupons.csv"
        if not readings.exists():
            raise _Skip("the example has no readings/coupons.csv to fill the sheet from")
        tc = self.t.folder / "readings" / "timecourse.csv"
        out = self.t.folder / SHEETS_FOLDER / f"{SHEET_STEM}_filled.xlsx"
        res = fill_sheet(self.t.paths["sheet_xlsx"], readings, out,
                         timecourse=tc if tc.exists() and self.config.has_timecourse
                         else None)
        self.t.paths["filled_sheet"] = res.path
        self.t.numbers["values_filled"] = res.values
        return (f"{res.values} invented values in {res.rows_filled} rows"
                + (f"; {len(res.missing)} rows left empty: the readings have none for "
                   "them (witness coupons are weighed, not inspected)"
                   if res.missing else ""))

    def _ingest(self) -> str:
        from trialkit.records.log import RecordLog
        from trialkit.records.sheets import ingest_sheet

        log = RecordLog.for_folder(self.t.folder)
        rep = ingest_sheet(self.t.paths["filled_sheet"], self.plan, log=log,
                           config=self.config)
        if not rep.ok:
            raise DemoError(f"the filled sheet was refused: {rep.message}; "
                            + "; ".join(str(p) for p in list(rep.problems)[:3]))
        self.t.paths["record_log"] = log.path if hasattr(log, "path") else \
            self.t.folder / "record-log.sqlite"
        self.t.numbers["values_stored"] = int(len(rep.accepted))
        return rep.message

    def _responses(self) -> str:
        from trialkit.responses.compute import load_responses

        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            self.responses = load_responses(self.t.folder)
        baths = self.responses.baths
        path = self.t.folder / "responses_by_bath.csv"
        baths.to_csv(path, index=False, lineterminator="\n")
        self.t.paths["responses"] = path
        n = len(self.responses.problems)
        self.t.numbers["response_problems"] = n
        extra = f"; {len(caught)} warnings" if caught else ""
        return f"{len(baths)} baths, {n} problems in the readings{extra}"

    def _analysis(self) -> str:
        from trialkit.analysis.trial_analysis import analyze

        # computed once, from the responses computed once: the report renders this object
        self.analysis = analyze(self.t.folder, responses=self.responses)
        findings = demo_findings(self.analysis)
        self.t.numbers["findings"] = findings
        path = self.t.folder / "analysis.json"
        path.write_text(json.dumps(plain_data(findings), indent=1, sort_keys=True) + "\n",
                        encoding="utf-8")
        self.t.paths["analysis"] = path
        bits = []
        for name, f in findings.items():
            if "error" in f:
                continue
            if "active" in f:
                bits.append(f"{name}: {', '.join(f['active']) or 'nothing'} significant")
            elif "best" in f:
                bits.append(f"{name}: best at "
                            f"{settings_text({f['factor']: f['best']}, self._units())}")
            elif "optimum" in f:
                bits.append(f"{name}: best at {settings_text(f['optimum'], self._units())}")
        return "; ".join(bits[:3]) or "no response could be analysed"

    def _units(self) -> dict:
        """Each factor's unit, for the sentences the demo prints."""
        return {f.name: f.unit for f in self.plan.trial.factors}

    def _report(self) -> str:
        try:
            from trialkit.report.build import build_report
        except ImportError:
            raise _Skip("the report module is not in this build", blocks=False) from None
        report = build_report(self.analysis)
        out = report.write(self.t.folder / "report.html")
        self.t.paths["report"] = out
        rec = report.data.get("recommendation")
        self.t.numbers["recommended"] = None if rec is None else dict(rec["settings"])
        self.t.numbers["recommended_text"] = (None if rec is None
                                              else settings_text(rec["settings"], self._units()))
        figs = _write_figures(report, self.t.folder / FIGURES_FOLDER)
        self.t.paths["figures"] = figs
        missing = [s.title for s in report.sections if not s.available]
        return (f"wrote {out.name} with {len(figs)} figures"
                + (f"; not available: {', '.join(missing)}" if missing else ""))


class _Skip(Exception):
    def __init__(self, reason: str, *, blocks: bool = True):
        super().__init__(reason)
        self.blocks = blocks


def _write_figures(report: Any, folder: Path) -> list[Path]:
    import base64
    import re

    out = []
    k = 0
    for section in report.sections:
        for block in section.blocks:
            if getattr(block, "kind", "") != "figure" or not block.png_base64:
                continue
            k += 1
            folder.mkdir(exist_ok=True)
            slug = re.sub(r"[^a-z0-9]+", "-", str(block.text).lower()).strip("-")[:48]
            path = folder / f"{k:02d}-{slug or 'figure'}.png"
            path.write_bytes(base64.b64decode(block.png_base64))
            out.append(path)
    return out


def run_demo(out_dir: str | Path | None = None, *, trials: Sequence[str | Path] | None = None,
             progress: ProgressCallback | None = None, until: str = "report") -> DemoResult:
    """Run the whole loop on the bundled example trials (invented data).

    Parameters
    ----------
    out_dir : path, optional
        Folder to write into (created; default :func:`default_out_dir` in the current
        folder).  Each trial goes into ``<out_dir>/<trial-name>/``, which must not exist
        yet or be empty.
    trials : sequence of str or path, optional
        Names of bundled trials or folders holding a ``trial.toml``; default all bundled.
    progress : callable, optional
        Called as ``progress(trial_name, stage, status)`` after each stage.
    until : str
        Last stage to run (one of :data:`STAGES`; default the whole loop).

    Returns
    -------
    DemoResult

    Raises
    ------
    DemoError
        The bundled trials are missing, a trial name is unknown, or ``until`` is not a
        stage.
    """
    if until not in STAGES:
        raise DemoError(f"until must be one of {', '.join(STAGES)}; got {until!r}")
    sources = _resolve_trials(trials)
    out = Path(out_dir) if out_dir is not None else default_out_dir()
    out.mkdir(parents=True, exist_ok=True)
    out = out.resolve()  # absolute paths in the result, wherever it is read from
    done = [_Runner(src, out, progress, until).run() for src in sources]
    return DemoResult(out, done)
