"""The whole loop on the bundled example trials: :func:`run_demo` -> :class:`DemoResult`.

For each example trial (invented scenarios with invented readings, in ``example_trials/``
of the source tree) the demo copies the trial folder into ``<out>/<trial-name>/`` and
then runs every stage a person would: plan and write the plan; mix the baths (mixing
sheet); export the recording sheets (XLSX and CSV); fill a copy of the exported workbook
from the example's invented readings (:func:`trialkit.fill.fill_sheet`); read it into a
fresh record log through the checked ingest; compute the responses; analyse them; write
``report.html`` (and the report's figures as PNG files).

A stage whose upstream piece is missing, or that cannot run on a trial, is recorded as
``"skipped: <reason>"``; nothing is invented in its place.  The library never prints:
pass ``progress`` to hear about each stage.

Examples
--------
>>> DemoStage("plan", "done", "24 baths").to_dict()
{'name': 'plan', 'status': 'done', 'detail': '24 baths'}
"""

from __future__ import annotations

import datetime as dt
import html
import json
import math
import shutil
import warnings
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import pandas as pd

from trialkit.exceptions import TrialkitError

#: Stages in the order they run.
STAGES = ("copy", "plan", "recipes", "sheets", "fill", "ingest", "responses", "analysis",
          "report")
#: What is copied from a bundled trial folder (the plan is made afresh).
COPIED = ("trial.toml", "README.md", "readings")
SHEETS_FOLDER = "sheets"
FIGURES_FOLDER = "figures"
TWO_LEVEL_KINDS = ("full-factorial", "fractional-factorial", "plackett-burman")
#: Alpha of the demo's significance statements.
ALPHA = 0.05

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
                "numbers": _plain(self.numbers)}


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
                         "recommended": _settings_text(t.numbers.get("recommended")),
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


def _settings_text(settings: Any) -> str:
    if not settings:
        return ""
    return ", ".join(f"{k} {v:.3g}" if isinstance(v, (int, float)) else f"{k} {v}"
                     for k, v in settings.items())


def _plain(obj: Any) -> Any:
    """JSON-ready copy: NaN -> None, numpy scalars -> Python."""
    if isinstance(obj, dict):
        return {str(k): _plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_plain(v) for v in obj]
    if hasattr(obj, "item") and not isinstance(obj, (str, bytes)):
        obj = obj.item()
    if isinstance(obj, float) and not math.isfinite(obj):
        return None
    if isinstance(obj, Path):
        return str(obj)
    return obj


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
        from trialkit.plan import make_plan
        from trialkit.trialfile import load_trial

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
        from trialkit.sheets import export_csv, export_xlsx, sheet_config

        config = sheet_config(self.plan.trial)
        note = ""
        tc = self.t.folder / "readings" / "timecourse.csv"
        if not config.has_timecourse and tc.exists():
            hours = sorted({float(h) for h in pd.read_csv(tc)["elapsed_h"].dropna()})
            config = replace(config, inspections_h=tuple(hours))
            note = (" (the trial file plans no inspections; the inspection sheet uses the "
                    f"times of the example's readings, {', '.join(f'{h:g}' for h in hours)} h)")
        self.config = config
        folder = self.t.folder / SHEETS_FOLDER
        folder.mkdir(exist_ok=True)
        xlsx = export_xlsx(self.plan, folder / "recording_sheet.xlsx", config=config)
        csvs = [export_csv(self.plan, folder / "recording_sheet_coupons.csv",
                           layout="coupons", config=config)]
        if config.has_timecourse:
            csvs.append(export_csv(self.plan, folder / "recording_sheet_inspections.csv",
                                   layout="inspections", config=config))
        self.t.paths["sheet_xlsx"] = xlsx
        self.t.paths["sheet_csv"] = csvs
        return f"wrote {xlsx.name} and {', '.join(p.name for p in csvs)}{note}"

    def _fill(self) -> str:
        from trialkit.fill import fill_sheet

        readings = self.t.folder / "readings" / "coupons.csv"
        if not readings.exists():
            raise _Skip("the example has no readings/coupons.csv to fill the sheet from")
        tc = self.t.folder / "readings" / "timecourse.csv"
        out = self.t.folder / SHEETS_FOLDER / "recording_sheet_filled.xlsx"
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
        from trialkit.sheets import ingest_sheet
        from trialkit.store import RecordLog

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
        from trialkit.responses import load_responses

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
        findings = analyse_demo_trial(self.plan, self.responses)
        self.t.numbers["findings"] = findings
        path = self.t.folder / "analysis.json"
        path.write_text(json.dumps(_plain(findings), indent=1, sort_keys=True) + "\n",
                        encoding="utf-8")
        self.t.paths["analysis"] = path
        bits = []
        for name, f in findings.items():
            if "error" in f:
                continue
            if "active" in f:
                bits.append(f"{name}: {', '.join(f['active']) or 'nothing'} significant")
            elif "best" in f:
                bits.append(f"{name}: best at {f['best']:.3g}")
            elif "optimum" in f:
                bits.append(f"{name}: best at {_settings_text(f['optimum'])}")
        return "; ".join(bits[:3]) or "no response could be analysed"

    def _report(self) -> str:
        try:
            from trialkit.report.build import build_report
        except ImportError:
            raise _Skip("the report module is not in this build", blocks=False) from None
        report = build_report(self.t.folder)
        out = report.write(self.t.folder / "report.html")
        self.t.paths["report"] = out
        rec = report.data.get("recommendation")
        self.t.numbers["recommended"] = None if rec is None else dict(rec["settings"])
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


# -- analysis of one demo trial ---------------------------------------------------------
def _bath_table(plan: Any, responses: Any) -> pd.DataFrame:
    table = plan.baths.copy()
    table["bath"] = table["bath"].astype(str)
    for spec in plan.trial.responses:
        try:
            values = responses.bath_values(spec.measure or spec.name)
        except TrialkitError:
            continue
        table[spec.name] = table["bath"].map(values.to_dict())
    return table[~table["point"].isin(["control", "reference"])].reset_index(drop=True)


def analyse_demo_trial(plan: Any, responses: Any, *, alpha: float = ALPHA,
                       n_boot: int = 400) -> dict:
    """Key findings per response of a demo trial (plain data).

    Sweeps: the best level and its Fieller interval; two-level designs: the factors whose
    main effect is significant at ``alpha`` (main-effects model); surfaces: the best point
    of the quadratic surface and its bootstrap interval.  A response that cannot be
    analysed gets ``{"error": sentence}``.
    """
    from trialkit.analysis.model import fit_model
    from trialkit.analysis.pipeline import analyze_table

    trial = plan.trial
    table = _bath_table(plan, responses)
    kind = trial.design.kind
    cont = [f for f in trial.factors if f.is_continuous]
    out: dict = {}
    for spec in trial.responses:
        if spec.goal not in ("maximize", "minimize") or spec.name not in table:
            continue
        if table[spec.name].notna().sum() < 3:
            out[spec.name] = {"error": "fewer than three baths have a value"}
            continue
        try:
            if kind == "sweep":
                res = analyze_table(table, spec.name, trial.factors, sweep=cont[0].name,
                                    goal=spec.goal, alpha=alpha, n_boot=0,
                                    seed=int(trial.seed or 0))
                sw = res.sweep
                out[spec.name] = {"factor": sw.factor.name, "best": float(sw.best),
                                  "interval": [float(sw.fieller_low), float(sw.fieller_high)],
                                  "sweet_spot": float(sw.sweet_spot)}
            elif kind in TWO_LEVEL_KINDS:
                fit = fit_model(table, spec.name, trial.factors, "main", alpha=alpha)
                p = fit.anova(2).summary.set_index("term")["p"]
                p = p[[f.name for f in trial.factors if f.name in p.index]]
                out[spec.name] = {"p_values": {k: float(v) for k, v in p.items()},
                                  "active": [k for k, v in p.items() if v < alpha]}
            else:
                res = analyze_table(table, spec.name, trial.factors, model="quadratic",
                                    goal=spec.goal, alpha=alpha, n_boot=n_boot,
                                    seed=int(trial.seed or 0))
                if res.surface is None:
                    out[spec.name] = {"error": "no second-order surface could be fitted"}
                    continue
                s = res.surface
                boot = s.bootstrap
                out[spec.name] = {
                    "optimum": {k: float(v) for k, v in s.optimum["settings"].items()},
                    "kind": s.kind,
                    "interval": ({} if boot is None else
                                 {r.factor: [float(r.low), float(r.high)]
                                  for r in boot.itertuples()})}
        except TrialkitError as exc:
            out[spec.name] = {"error": _message(exc)}
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
