"""Gather what a report needs from a trial folder: trial, plan, record log, responses,
fitted models, surfaces, sweeps, desirability, the recommended recipe.

Every step may be missing (nothing recorded yet, an upstream piece not available, a model
that cannot be fitted); each failure is kept as a plain sentence in ``notes`` so the
report can say what is not available and why, and the rest goes on.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pandas as pd

from trialkit.exceptions import TrialkitError

TWO_LEVEL_KINDS = ("full-factorial", "fractional-factorial", "plackett-burman")
SURFACE_KINDS = ("central-composite", "box-behnken")
#: Random starts of the desirability search besides its 8 best grid points (each start
#: costs about a second on the shared machine; the grid already brackets the optimum).
DESIRABILITY_STARTS = 4


@dataclass
class TrialData:
    """Everything gathered for one report (plain objects of the other stages)."""

    folder: Path
    trial: object
    plan: object
    log: object | None = None
    history: pd.DataFrame | None = None
    current: pd.DataFrame | None = None
    responses: object | None = None
    baths: pd.DataFrame | None = None
    timecourse: pd.DataFrame | None = None
    kinetics: dict = field(default_factory=dict)
    fits: dict = field(default_factory=dict)
    models: dict = field(default_factory=dict)
    results: dict = field(default_factory=dict)  # response -> AnalysisResult
    effects: dict = field(default_factory=dict)
    surfaces: dict = field(default_factory=dict)
    sweeps: dict = field(default_factory=dict)
    desirability: object | None = None
    detectable: dict = field(default_factory=dict)
    recommendation: dict | None = None
    recipe: object | None = None
    confirmations: dict = field(default_factory=dict)  # response -> ConfirmationResult
    notes: dict = field(default_factory=dict)  # topic -> list of sentences

    def note(self, topic: str, text: str) -> None:
        self.notes.setdefault(topic, []).append(text)

    @property
    def specs(self) -> dict:
        return {r.name: r for r in self.trial.responses}

    def unit(self, response: str) -> str:
        spec = self.specs.get(response)
        return spec.unit if spec is not None else ""


def _message(exc: Exception) -> str:
    return str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__


# -- trial, plan, record log, responses -------------------------------------------------
def load_inputs(folder: str | Path, *, responses=None, baths: pd.DataFrame | None = None,
                timecourse: pd.DataFrame | None = None) -> TrialData:
    """Trial, plan, record log and responses of a trial folder."""
    from trialkit.plan import make_plan
    from trialkit.trialfile import find_trial_file, load_trial

    path = find_trial_file(folder)
    trial = load_trial(path)
    plan = make_plan(trial)
    data = TrialData(path.parent, trial, plan)
    _check_saved_plan(data)
    _load_log(data)
    if responses is None and baths is None and data.log is not None:
        try:
            import warnings

            from trialkit.exceptions import TrialkitWarning
            from trialkit.responses import load_responses

            with warnings.catch_warnings():  # the problems are listed in the report
                warnings.simplefilter("ignore", TrialkitWarning)
                responses = load_responses(data.folder)
        except ImportError:
            data.note("responses", "the responses module is not installed in this build")
        except TrialkitError as exc:
            data.note("responses", f"responses could not be computed: {_message(exc)}")
    data.responses = responses
    data.baths = _bath_table(data, responses, baths)
    _timecourse(data, timecourse)
    return data


def _check_saved_plan(data: TrialData) -> None:
    import json

    pj = data.folder / "plan.json"
    if not pj.exists():
        return
    try:
        saved = json.loads(pj.read_text(encoding="utf-8")).get("fingerprint")
    except (OSError, ValueError):
        return
    if saved and saved != data.plan.fingerprint:
        data.note("plan", f"the saved plan.json has fingerprint {saved}, but the trial file "
                          f"now gives {data.plan.fingerprint}: the trial file changed after "
                          "the plan was written")


def _load_log(data: TrialData) -> None:
    try:
        from trialkit import store
    except ImportError:
        data.note("readings", "the record-log module is not installed in this build")
        return
    path = data.folder / store.LOG_FILE
    if not path.exists():
        data.note("readings", "no readings recorded yet (the folder has no record log; "
                              "fill in a sheet and read it in with 'trialkit ingest')")
        return
    try:
        data.log = store.RecordLog.for_folder(data.folder)
        data.history = data.log.history()
        data.current = data.log.current_values(plan=data.plan)
    except TrialkitError as exc:
        data.note("readings", f"the record log could not be read: {_message(exc)}")


def _bath_table(data: TrialData, responses, baths: pd.DataFrame | None) -> pd.DataFrame | None:
    if baths is not None:
        return baths.copy()
    if responses is None:
        if "responses" not in data.notes and data.log is not None:
            data.note("responses", "no responses computed from the readings")
        return None
    table = data.plan.baths.copy()
    table["bath"] = table["bath"].astype(str)
    for spec in data.trial.responses:
        measure = spec.measure or spec.name
        try:
            values = responses.bath_values(measure)
        except TrialkitError as exc:
            data.note("responses", f"{spec.name}: {_message(exc)}")
            continue
        table[spec.name] = table["bath"].map(values.to_dict())
    return table


def _timecourse(data: TrialData, timecourse: pd.DataFrame | None) -> None:
    fits = dict(getattr(data.responses, "kinetics", {}) or {})
    if timecourse is None and data.log is not None:
        try:
            from trialkit.responses import timecourse_from_log

            tc = timecourse_from_log(data.log.current_timecourse(), data.plan.table)
            timecourse = tc if len(tc) else None
        except (ImportError, TrialkitError):
            timecourse = None
    if timecourse is not None and len(timecourse):
        timecourse = timecourse.dropna(subset=["elapsed_h", "coverage_pct"])
        if not fits:
            try:
                from trialkit.kinetics import fit_baths

                _, fits, failed = fit_baths(timecourse)
                for bath, msg in failed:
                    data.note("kinetics", f"bath {bath}: {msg}")
            except (ImportError, TrialkitError) as exc:
                data.note("kinetics", f"removal curves could not be fitted: {_message(exc)}")
    data.timecourse = timecourse
    data.kinetics = fits


# -- analysis -----------------------------------------------------------------------
def config_of(trial):
    """The trial's parsed ``[analysis]`` section (defaults when absent)."""
    try:
        from trialkit.analysis.config import AnalysisConfig
    except ImportError:  # pragma: no cover - the analysis package ships it
        return None
    sec = (trial.sections or {}).get("analysis")
    return sec if isinstance(sec, AnalysisConfig) else AnalysisConfig()


def _goal(spec) -> str:
    return spec.goal if spec.goal in ("maximize", "minimize") else "maximize"


def analyse(data: TrialData, *, n_boot: int | None = None) -> TrialData:
    """Analyse every response that has values with :func:`trialkit.analysis.pipeline.
    analyze_table` (the same analysis as ``trialkit analyze``), the trial's ``[analysis]``
    settings applied; Lenth's effects for two-level designs, desirability, recommendation.

    ``n_boot`` overrides the section's ``bootstrap`` (the report default is 0: none).
    """
    from trialkit.analysis.pipeline import analyze_table

    if data.baths is None:
        return data
    trial = data.trial
    cfg = config_of(trial)
    kind = trial.design.kind
    boot = 0 if n_boot is None else int(n_boot)
    sweep = cfg.sweep if cfg.sweep else None
    if kind == "sweep" and sweep is None:
        cont = [f.name for f in trial.factors if f.is_continuous]
        sweep = cont[0] if cont else None
    for spec in trial.responses:
        if spec.name not in data.baths or data.baths[spec.name].notna().sum() == 0:
            data.note("analysis", f"{spec.name}: no bath has a value yet")
            continue
        model = cfg.response_models.get(spec.name) or cfg.model
        try:
            res = analyze_table(data.baths, spec.name, trial.factors, model=model,
                                anova_type=cfg.anova_type, alpha=cfg.alpha, sweep=sweep,
                                goal=_goal(spec) if _wanted(spec) else "maximize",
                                reduce=cfg.reduce, threshold=cfg.threshold, n_boot=boot,
                                seed=trial.seed, tolerance=cfg.tolerance,
                                relative_tolerance=cfg.relative_tolerance)
        except TrialkitError as exc:
            data.note("analysis", f"{spec.name}: no model could be fitted ({_message(exc)})")
            continue
        data.fits[spec.name] = res.fit
        data.models[spec.name] = res.fit.spec.to_text()
        data.results[spec.name] = res
        if res.sweep is not None:
            data.sweeps[spec.name] = res.sweep
        if res.surface is not None and _wanted(spec):
            data.surfaces[spec.name] = res.surface
        if res.effects is not None:
            data.effects[spec.name] = res.effects
        elif kind in TWO_LEVEL_KINDS:
            _effects(data, spec)
        if res.sweep is None:
            _detectable(data, spec)
    _desirability(data)
    _recommend(data)
    return data


def _effects(data: TrialData, spec) -> None:
    from trialkit.analysis.effects import two_level_effects

    try:
        data.effects[spec.name] = two_level_effects(data.baths, spec.name, data.trial.factors)
    except TrialkitError as exc:
        data.note("analysis", f"{spec.name}: effects by Lenth's method not available "
                              f"({_message(exc)})")


def _wanted(spec) -> bool:
    return spec.goal in ("maximize", "minimize", "target")


def _detectable(data: TrialData, spec) -> None:
    fit = data.fits[spec.name]
    if not (fit.df_resid > 0 and math.isfinite(fit.sigma2) and fit.sigma2 > 0):
        return
    try:
        from trialkit.evaluate import evaluate_plan
        from trialkit.report.findings import detectable_effects

        terms = " + ".join(t.name for t in fit.spec.terms if t.name != "block")
        ev = evaluate_plan(data.plan, model=terms, sd=float(np.sqrt(fit.sigma2)))
        data.detectable[spec.name] = detectable_effects(ev)
    except (ImportError, TrialkitError, ValueError, np.linalg.LinAlgError) as exc:
        data.note("analysis", f"{spec.name}: smallest detectable effects not available "
                              f"({_message(exc)})")


def _desirability(data: TrialData) -> None:
    if len(data.fits) < 2 or data.sweeps or data.trial.design.kind in TWO_LEVEL_KINDS:
        return  # a compromise needs fitted surfaces, not a screening model
    try:
        from trialkit.analysis.desirability import Goal, optimize_desirability
    except ImportError:
        data.note("recipe", "the desirability module is not installed in this build")
        return
    goals = []
    for name in data.fits:
        spec = data.specs[name]
        if not _wanted(spec):
            continue
        vals = data.baths[name].dropna().astype(float)
        lo = spec.lower if spec.lower is not None else float(vals.min())
        hi = spec.upper if spec.upper is not None else float(vals.max())
        try:
            goals.append(Goal(name, spec.goal, lower=lo, upper=hi, target=spec.target,
                              weight=spec.weight, importance=spec.importance))
        except TrialkitError as exc:
            data.note("recipe", f"{name}: no desirability goal ({_message(exc)})")
    if len(goals) < 2:
        return
    cats = [f for f in data.trial.factors if not f.is_continuous]
    combos = [dict(zip([f.name for f in cats], c, strict=True))
              for c in itertools.product(*[f.levels for f in cats])] or [None]
    best, last = None, None
    for fixed in combos:
        try:
            res = optimize_desirability(data.fits, goals, fixed=fixed, seed=data.trial.seed,
                                        n_starts=DESIRABILITY_STARTS)
        except TrialkitError as exc:
            last = exc
            continue
        if best is None or res.overall > best.overall:
            best = res
    if best is None:
        data.note("recipe", f"no best compromise of all responses ({_message(last)})")
    data.desirability = best


def _corners(trial) -> pd.DataFrame:
    axes = [[f.low, f.center, f.high] if f.is_continuous else list(f.levels)
            for f in trial.factors]
    rows = [dict(zip([f.name for f in trial.factors], combo, strict=True))
            for combo in itertools.product(*axes)]
    return pd.DataFrame(rows)


def _recommend(data: TrialData) -> None:
    wanted = [n for n in data.fits if _wanted(data.specs[n])]
    if not wanted:
        data.note("recipe", "no response has a goal (maximize, minimize or target), so "
                            "there is nothing to recommend")
        return
    primary = wanted[0]
    spec = data.specs[primary]
    if data.desirability is not None:
        settings = dict(data.desirability.settings)
        source = ("best compromise of all responses (Derringer–Suich desirability "
                  f"D = {data.desirability.overall:.2f})")
    elif primary in data.surfaces:
        settings = dict(data.surfaces[primary].optimum["settings"])
        source = (f"best point of the fitted surface of {primary} inside the design region "
                  f"(the surface is a {data.surfaces[primary].kind})")
    elif primary in data.sweeps:
        sw = data.sweeps[primary]
        settings = {sw.factor.name: float(sw.sweet_spot)}
        source = (f"the practical sweet spot of the sweep: the lowest {sw.factor.name} whose "
                  f"predicted {primary} is within {sw.tolerance:.3g} {spec.unit} of the best "
                  f"(best at {sw.best:.3g} {sw.factor.unit})")
    else:
        grid = _corners(data.trial)
        pred = data.fits[primary].predict(grid).predicted.to_numpy()
        k = int(np.argmin(pred) if spec.goal == "minimize" else np.argmax(pred))
        settings = grid.iloc[k].to_dict()
        settings = {kk: (float(v) if isinstance(v, (int, float, np.floating)) else str(v))
                    for kk, v in settings.items()}
        source = (f"best of the low, middle and high settings for {primary} by the fitted "
                  "model (a screening model: confirm before relying on it)")
    rows = []
    for name, fit in data.fits.items():
        p1 = fit.predict(settings, n_new=1).iloc[0]
        p3 = fit.predict(settings, n_new=3).iloc[0]
        rows.append({"response": name, "unit": data.unit(name), "goal": data.specs[name].goal,
                     "predicted": float(p1.predicted), "ci_low": float(p1.ci_low),
                     "ci_high": float(p1.ci_high), "pi_low": float(p1.pi_low),
                     "pi_high": float(p1.pi_high), "pi3_low": float(p3.pi_low),
                     "pi3_high": float(p3.pi_high)})
    data.recommendation = {"settings": settings, "source": source,
                           "predictions": pd.DataFrame(rows)}
    _recipe(data)


def _recipe(data: TrialData) -> None:
    section = (data.trial.sections or {}).get("bath")
    try:
        from trialkit.chemistry.bathspec import BathSection
        from trialkit.chemistry.mixing_sheet import recipes_for_plan
    except ImportError:
        data.note("recipe", "the chemistry module is not installed in this build")
        return
    if not isinstance(section, BathSection):
        data.note("recipe", "the trial file has no [bath] section, so the recommended "
                            "settings cannot be turned into a recipe to mix")
        return
    row = {"bath": "recommended", "point": "recommended", **data.recommendation["settings"]}
    one = SimpleNamespace(trial=data.trial, baths=pd.DataFrame([row]),
                          fingerprint=data.plan.fingerprint)
    try:
        data.recipe = recipes_for_plan(one).recipes[0]
    except TrialkitError as exc:
        data.note("recipe", f"the recipe could not be worked out: {_message(exc)}")


def check_confirmation(data: TrialData, confirmation) -> None:
    """Compare confirmation baths with the prediction intervals of each fitted model.

    ``confirmation``: a :class:`trialkit.responses.Responses` of the confirmation baths
    or their coupon readings (one row per coupon: bath, coupon_kind, factor columns and
    the entry fields), all baths at one setting.
    """
    if confirmation is None:
        return
    try:
        from trialkit.analysis.confirm import confirm
        from trialkit.responses import compute_responses
    except ImportError:
        data.note("confirm", "the confirmation module is not installed in this build")
        return
    import warnings

    from trialkit.exceptions import TrialkitWarning

    resp = confirmation
    if isinstance(confirmation, pd.DataFrame):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", TrialkitWarning)
            resp = compute_responses(confirmation, coupon_spec=data.trial.coupons)
    table = resp.baths
    names = [f.name for f in data.trial.factors]
    if table.empty or any(n not in table for n in names):
        data.note("confirm", "the confirmation readings do not give the factor settings")
        return
    first = table.iloc[0]
    settings = {f.name: (float(first[f.name]) if f.is_continuous else str(first[f.name]))
                for f in data.trial.factors}
    for name, fit in data.fits.items():
        spec = data.specs[name]
        try:
            values = resp.bath_values(spec.measure or spec.name)
        except TrialkitError:
            continue
        values = values.dropna()
        if values.empty:
            continue
        try:
            data.confirmations[name] = confirm(fit, settings, values.tolist(),
                                               baths=[str(b) for b in values.index])
        except TrialkitError as exc:
            data.note("confirm", f"{name}: confirmation not checked ({_message(exc)})")
