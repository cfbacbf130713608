"""The analysis of a whole trial folder: trial, plan, record log, responses, fitted models,
surfaces, sweeps, desirability, the recommended recipe, in one :class:`TrialAnalysis`.

Every step may be missing (nothing recorded yet, an upstream piece not available, a model
that cannot be fitted); each failure is kept as a plain sentence in ``notes`` so the
report can say what is not available and why, and the rest goes on.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd

from trialkit.analysis.censored_times import censored_times, is_censorable
from trialkit.analysis.trial_data import TWO_LEVEL_KINDS, TrialAnalysis, first_line
from trialkit.exceptions import TrialkitError


def analyze(folder: str | Path, *, responses=None, baths: pd.DataFrame | None = None,
            timecourse: pd.DataFrame | None = None, confirmation=None,
            n_boot: int | None = None) -> TrialAnalysis:
    """Analyse the trial in ``folder`` once: the object the report, the demo, the notebooks
    and the command line all read.

    Parameters
    ----------
    folder : path
        Trial folder (holding ``trial.toml``) or the trial file itself.
    responses : trialkit.responses.compute.Responses, optional
        Computed responses; by default computed from the folder's record log.
    baths : DataFrame, optional
        Instead of ``responses``: one row per bath with the plan's columns and one column
        per trial response (by its name).
    timecourse : DataFrame, optional
        Coverage readings over time (``bath, elapsed_h, coverage_pct``).
    confirmation : Responses or DataFrame, optional
        Confirmation baths (their responses, or their coupon readings) run at one
        setting; checked against the prediction intervals.
    n_boot : int, optional
        Bootstrap resamples for the best point's interval (default 0: none).

    Examples
    --------
    >>> import trialkit
    >>> result = trialkit.analyze("example_trials/chelator-sweep")  # doctest: +SKIP
    >>> result.to_dict()["recommendation"]["settings"]  # doctest: +SKIP
    """
    from trialkit.analysis.recommend import check_confirmation

    data = analyse(load_inputs(folder, responses=responses, baths=baths,
                               timecourse=timecourse), n_boot=n_boot)
    check_confirmation(data, confirmation)
    return data


# -- trial, plan, record log, responses -------------------------------------------------
def load_inputs(folder: str | Path, *, responses=None, baths: pd.DataFrame | None = None,
                timecourse: pd.DataFrame | None = None) -> TrialAnalysis:
    """Trial, plan, record log and responses of a trial folder."""
    from trialkit.planning.plan import make_plan
    from trialkit.trial.file import find_trial_file, load_trial

    path = find_trial_file(folder)
    trial = load_trial(path)
    plan = make_plan(trial)
    data = TrialAnalysis(path.parent, trial, plan)
    _check_saved_plan(data)
    _load_log(data)
    if responses is None and baths is None and data.log is not None:
        try:
            import warnings

            from trialkit.exceptions import TrialkitWarning
            from trialkit.responses.compute import load_responses

            with warnings.catch_warnings():  # the problems are listed in the report
                warnings.simplefilter("ignore", TrialkitWarning)
                responses = load_responses(data.folder)
        except ImportError:
            data.note("responses", "the responses module is not installed in this build")
        except TrialkitError as exc:
            data.note("responses", f"responses could not be computed: {first_line(exc)}")
    data.responses = responses
    data.baths = _bath_table(data, responses, baths)
    _bench(data)
    _timecourse(data, timecourse)
    return data


def _check_saved_plan(data: TrialAnalysis) -> None:
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


def _load_log(data: TrialAnalysis) -> None:
    try:
        from trialkit.records import log as store
    except ImportError:
        data.note("readings", "the record-log module is not installed in this build")
        return
    path = data.folder / store.LOG_FILE
    if not path.exists():
        data.note("readings", "no readings recorded yet (the folder has no record log; "
                              "fill in a sheet and read it in with 'trialkit ingest')")
        return
    try:
        from trialkit.records.chain import verify_log

        data.log_check = verify_log(path)
        data.log = store.RecordLog.for_folder(data.folder)
        data.history = data.log.history()
        data.current = data.log.current_values(plan=data.plan)
    except TrialkitError as exc:
        data.note("readings", f"the record log could not be read: {first_line(exc)}")
        return
    _photos(data)


def _photos(data: TrialAnalysis) -> None:
    """Coverages measured from photos, and their agreement with the hand estimates."""
    try:
        from trialkit.analysis.agreement import coverage_agreement
        from trialkit.photos.record import photo_readings
        from trialkit.responses.coverage_source import coverage_source
    except ImportError:  # pragma: no cover - the photos package ships with trialkit
        return
    data.coverage_source = coverage_source(data.trial)
    data.photos = photo_readings(data.history, data.folder)
    if len(data.photos):
        data.agreement = coverage_agreement(data.current, data.log.current_timecourse())


def _bath_table(data: TrialAnalysis, responses, baths: pd.DataFrame | None) -> pd.DataFrame | None:
    if baths is not None:
        return baths.copy()
    if responses is None:
        if "responses" not in data.notes and data.log is not None:
            data.note("responses", "no responses computed from the readings")
        return None
    table = data.plan.baths.copy()
    table["bath"] = table["bath"].astype(str)
    costs = _costs(data)
    for spec in data.trial.responses:
        measure = spec.measure or spec.name
        if costs is not None and measure in costs:
            table[spec.name] = table["bath"].map(costs.set_index("bath")[measure].to_dict())
            from trialkit.responses.bath_cost import cost_unit

            data.derived_units[spec.name] = cost_unit(measure, costs["currency"])
            continue
        try:
            values = responses.bath_values(measure)
        except TrialkitError as exc:
            data.note("responses", f"{spec.name}: {first_line(exc)}")
            continue
        table[spec.name] = table["bath"].map(values.to_dict())
    return table


def _bench(data: TrialAnalysis) -> None:
    """Recorded bath pH and temperature against the plan."""
    from trialkit.analysis.bench_conditions import bench_deviations

    if data.current is not None and "bath" in data.current:
        data.bench = bench_deviations(data.trial, data.plan.baths, data.current,
                                      config_of(data.trial))


def _costs(data: TrialAnalysis) -> pd.DataFrame | None:
    """Each bath's cost from its recipe, when a response asks for a cost measure."""
    from trialkit.responses.bath_cost import COST_MEASURES, bath_costs

    if not any((s.measure or s.name) in COST_MEASURES for s in data.trial.responses):
        return None
    try:
        return bath_costs(data.plan)
    except TrialkitError as exc:
        data.note("responses", f"cost: {first_line(exc)}")
        return None


def _timecourse(data: TrialAnalysis, timecourse: pd.DataFrame | None) -> None:
    fits = dict(getattr(data.responses, "kinetics", {}) or {})
    if timecourse is None and data.log is not None:
        try:
            from trialkit.responses.compute import timecourse_from_log
            from trialkit.responses.coverage_source import coverage_source, use_coverage_long

            long = use_coverage_long(data.log.current_timecourse(),
                                     coverage_source(data.trial))
            tc = timecourse_from_log(long, data.plan.table)
            timecourse = tc if len(tc) else None
        except (ImportError, TrialkitError):
            timecourse = None
    if timecourse is not None and len(timecourse):
        timecourse = timecourse.dropna(subset=["elapsed_h", "coverage_pct"])
        if not fits:
            try:
                from trialkit.responses.bath_kinetics import fit_baths

                _, fits, failed = fit_baths(timecourse)
                for bath, msg in failed:
                    data.note("kinetics", f"bath {bath}: {msg}")
            except (ImportError, TrialkitError) as exc:
                data.note("kinetics", f"removal curves could not be fitted: {first_line(exc)}")
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


def response_limits(spec) -> tuple:
    """Physical range of a trial response: its ``range`` key, else from its measure, else
    its unit."""
    if getattr(spec, "range", None) is not None:
        return tuple(spec.range)
    try:
        from trialkit.responses.definitions import physical_range
    except ImportError:  # pragma: no cover - the responses package ships it
        return (None, None)
    return physical_range(spec.measure or spec.name, getattr(spec, "unit", None))


def _aim(spec) -> str:
    return spec.aim if spec.aim in ("higher", "lower") else "higher"


def analyse(data: TrialAnalysis, *, n_boot: int | None = None) -> TrialAnalysis:
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
        limits = response_limits(spec)
        try:
            res = analyze_table(data.baths, spec.name, trial.factors, model=model,
                                anova_type=cfg.anova_type, alpha=cfg.alpha, sweep=sweep,
                                aim=_aim(spec) if spec.is_wanted else "higher",
                                reduce=cfg.reduce, threshold=cfg.threshold, n_boot=boot,
                                seed=trial.seed, tolerance=cfg.tolerance,
                                relative_tolerance=cfg.relative_tolerance, limits=limits,
                                scale=spec.scale)
        except TrialkitError as exc:
            data.note("analysis", f"{spec.name}: no model could be fitted ({first_line(exc)})")
            if is_censorable(spec):
                censored_times(data, spec)
            continue
        data.fits[spec.name] = res.fit
        data.models[spec.name] = res.fit.spec.to_text()
        data.results[spec.name] = res
        if res.sweep is not None:
            data.sweeps[spec.name] = res.sweep
        if res.surface is not None and spec.is_wanted:
            data.surfaces[spec.name] = res.surface
        if res.effects is not None:
            data.effects[spec.name] = res.effects
        elif kind in TWO_LEVEL_KINDS:
            _effects(data, spec)
        if res.sweep is None:
            _detectable(data, spec)
        if is_censorable(spec):
            censored_times(data, spec, res.fit)
        _split_plot(data, spec)
    _comparisons(data)
    from trialkit.analysis.recommend import desirability, recommend

    desirability(data)
    recommend(data)
    return data


def _comparisons(data: TrialAnalysis) -> None:
    """Tukey comparisons of the levels of every categorical factor, and Dunnett
    comparisons of every treatment with the untreated and reference baths."""
    from trialkit.analysis.comparisons import level_comparisons, versus_controls

    cats = [f for f in data.trial.factors if not f.is_continuous]
    for name, fit in data.fits.items():
        if not data.specs[name].is_wanted:
            continue
        for f in cats:
            try:
                data.comparisons += level_comparisons(fit, f, name, alpha=fit.alpha)
            except TrialkitError as exc:
                data.note("analysis", f"{name}: levels of {f.name} not compared "
                                      f"({first_line(exc)})")
        try:
            data.versus_controls += versus_controls(data.baths, name, data.trial.factors,
                                                    alpha=fit.alpha)
        except (TrialkitError, ValueError) as exc:
            data.note("analysis", f"{name}: treatments not compared with the controls "
                                  f"({first_line(exc)})")


def _split_plot(data: TrialAnalysis, spec) -> None:
    """A split-plot trial's tests and effects on the right strata (issue 19): hard-to-change
    factors against the tank-to-tank error, the others against the bath-to-bath error."""
    from trialkit.analysis.split_plot_trial import analyse_split_plot
    from trialkit.planning.whole_plots import whole_plot_settings

    settings = whole_plot_settings(data.trial)
    if settings is None or "whole_plot" not in data.baths:
        return
    hard = list(settings.hard_to_change)
    easy = [f.name for f in data.trial.factors if f.name not in hard]
    block = "block" if "block" in data.baths and data.baths["block"].nunique() > 1 else None
    try:
        data.split_plots[spec.name] = analyse_split_plot(
            data.baths, spec.name, hard, easy, whole_plot="whole_plot", block=block,
            alpha=config_of(data.trial).alpha,
            levels={f.name: f.levels for f in data.trial.factors if not f.is_continuous})
        _raw_scale_note(data, spec, "the split-plot tests and effects")
    except (TrialkitError, ValueError, np.linalg.LinAlgError) as exc:
        data.note("analysis", f"{spec.name}: no split-plot analysis ({first_line(exc)})")


def _raw_scale_note(data: TrialAnalysis, spec, what: str) -> None:
    """Say so when a part of the analysis is on the raw scale although the response asks
    for another."""
    if getattr(spec, "scale", "raw") != "raw":
        data.note("analysis", f"{spec.name}: {what} are on the raw scale, in "
                              f"{spec.unit or 'its unit'}; the {spec.scale} scale of its "
                              "[[response]] applies to the fitted model and its predictions")


def _effects(data: TrialAnalysis, spec) -> None:
    from trialkit.analysis.effects import two_level_effects

    try:
        data.effects[spec.name] = two_level_effects(data.baths, spec.name, data.trial.factors)
        _raw_scale_note(data, spec, "the effects by Lenth's method")
    except TrialkitError as exc:
        data.note("analysis", f"{spec.name}: effects by Lenth's method not available "
                              f"({first_line(exc)})")


def _detectable(data: TrialAnalysis, spec) -> None:
    fit = data.fits[spec.name]
    if not (fit.df_resid > 0 and math.isfinite(fit.sigma2) and fit.sigma2 > 0):
        return
    try:
        from trialkit.planning.evaluation import evaluate_plan

        terms = " + ".join(t.name for t in fit.spec.terms if t.name != "block")
        ev = evaluate_plan(data.plan, model=terms, sd=float(np.sqrt(fit.sigma2)))
        data.detectable[spec.name] = ev.detectable_effects()
    except (ImportError, TrialkitError, ValueError, np.linalg.LinAlgError) as exc:
        data.note("analysis", f"{spec.name}: smallest detectable effects not available "
                              f"({first_line(exc)})")
