"""The recommendation: best compromise of all responses, the recommended settings with
their predictions, the recipe to mix them, and the check of confirmation baths.
"""

from __future__ import annotations

import itertools
from types import SimpleNamespace

import numpy as np
import pandas as pd
from scipy import stats

from trialkit.analysis.censored_times import fastest_settings, uses_censored_model
from trialkit.analysis.lean_settings import lean_settings
from trialkit.analysis.observed_best import best_observed
from trialkit.analysis.trial_data import TWO_LEVEL_KINDS, TrialAnalysis, first_line
from trialkit.exceptions import TrialkitError
from trialkit.numbers import readable, readable_unit, settings_text, spoken, spoken_capitalised

#: Random starts of the desirability search besides its 8 best grid points (each start
#: costs about a second on the shared machine; the grid already brackets the optimum).
DESIRABILITY_TRIES = 4


def desirability(data: TrialAnalysis) -> None:
    """The best compromise of every response the trial wants something of (surface
    designs only)."""
    if len(data.fits) < 2 or data.sweeps or data.trial.design.kind in TWO_LEVEL_KINDS:
        return  # a compromise needs fitted surfaces, not a screening model
    try:
        from trialkit.analysis.desirability import aim_from_spec, optimize_desirability
    except ImportError:
        data.note("recipe", "the desirability module is not installed in this build")
        return
    aims = []
    for name in data.fits:
        spec = data.specs[name]
        if not spec.is_wanted:
            continue
        vals = data.baths[name].dropna().astype(float)
        try:
            aims.append(aim_from_spec(spec, name, observed=vals))
        except TrialkitError as exc:
            data.note("recipe", f"{name}: no desirability aim ({first_line(exc)})")
    if len(aims) < 2:
        return
    cats = [f for f in data.trial.factors if not f.is_continuous]
    combos = [dict(zip([f.name for f in cats], c, strict=True))
              for c in itertools.product(*[f.levels for f in cats])] or [None]
    best, last = None, None
    for fixed in combos:
        try:
            res = optimize_desirability(data.fits, aims, fixed=fixed, seed=data.trial.seed,
                                        n_tries=DESIRABILITY_TRIES)
        except TrialkitError as exc:
            last = exc
            continue
        if best is None or res.overall > best.overall:
            best = res
    if best is None:
        data.note("recipe", f"no best compromise of all responses ({first_line(last)})")
    data.desirability = best


def _candidates(trial, points: int) -> pd.DataFrame:
    """Settings to choose among: ``points`` levels of each continuous factor across its
    range (3: low, middle, high) crossed with every level of each categorical factor."""
    axes = [list(np.linspace(f.low, f.high, points)) if f.is_continuous else list(f.levels)
            for f in trial.factors]
    rows = [dict(zip([f.name for f in trial.factors], combo, strict=True))
            for combo in itertools.product(*axes)]
    return pd.DataFrame(rows)


def _plain_settings(row) -> dict:
    return {k: (float(v) if isinstance(v, (int, float, np.floating)) else str(v))
            for k, v in dict(row).items()}


def limit_shortfall(spec, value: float) -> float:
    """How far ``value`` lies on the wrong side of the response's stated unacceptable
    value (0 when it keeps the limit or no limit is stated)."""
    limit = spec.unacceptable
    if limit is None or not np.isfinite(value):
        return 0.0
    if spec.aim == "on-target":
        lo, hi = limit
        return float(max(lo - value, value - hi, 0.0))
    if spec.aim == "higher":
        return float(max(limit - value, 0.0))
    if spec.aim == "lower":
        return float(max(value - limit, 0.0))
    return 0.0


def _limit_text(spec) -> str:
    limit = spec.unacceptable
    unit = f" {readable_unit(spec.unit)}" if spec.unit else ""
    if isinstance(limit, tuple):
        return f"({readable(limit[0])} to {readable(limit[1])}{unit})"
    return f"{readable(limit)}{unit}"


def _fmt(value: float, unit: str) -> str:
    unit = readable_unit(unit)
    return f"{readable(value, 3)}{(' ' + unit) if unit else ''}"


def _settings_text(data: TrialAnalysis, settings: dict) -> str:
    return settings_text(settings, {f.name: f.unit for f in data.trial.factors})


def _limited(data: TrialAnalysis) -> list[str]:
    return [n for n in data.fits
            if data.specs[n].is_wanted and data.specs[n].unacceptable is not None]


def _breaks(data: TrialAnalysis, names: list[str], grid: pd.DataFrame) -> np.ndarray:
    """Per candidate row, the largest shortfall (in units of each limit's own size)."""
    worst = np.zeros(len(grid))
    for name in names:
        spec = data.specs[name]
        pred = data.fits[name].predict(grid, clip=False).predicted.to_numpy()
        short = np.array([limit_shortfall(spec, v) for v in pred])
        worst = np.maximum(worst, short)
    return worst


def _primary_choice(data: TrialAnalysis, primary: str) -> tuple[dict, str]:
    """The settings the trial's main question points to, before any limit is applied."""
    spec = data.specs[primary]
    if data.desirability is not None:
        names = [spoken(a.response) for a in data.desirability.aims]
        listed = ", ".join(names[:-1]) + f" and {names[-1]}" if len(names) > 1 else names[0]
        return dict(data.desirability.settings), (
            f"best compromise of {listed} (Derringer–Suich desirability "
            f"D = {data.desirability.overall:.2f}, 1 = every aim fully met)")
    if primary in data.surfaces:
        return dict(data.surfaces[primary].optimum["settings"]), (
            f"best point of the fitted surface of {spoken(primary)} inside the design region "
            f"(the surface is a {data.surfaces[primary].kind})")
    if primary in data.sweeps:
        sw = data.sweeps[primary]
        return {sw.factor.name: float(sw.lean_level)}, (
            "the practical lean level of the sweep: the lowest "
            f"{spoken(sw.factor.name, sw.factor.unit)} whose "
            f"predicted {spoken(primary)} is within {readable(sw.tolerance, 3)} "
            f"{readable_unit(data.unit(primary))} of the "
            f"best (best at {readable(sw.best, 3)} {readable_unit(sw.factor.unit)})")
    grid = _candidates(data.trial, 3)
    pred = data.fits[primary].predict(grid, clip=False).predicted.to_numpy()
    k = int(np.argmin(pred) if spec.aim == "lower" else np.argmax(pred))
    settings = _plain_settings(grid.iloc[k])
    what = ("best of the low, middle and high settings" if any(
        f.is_continuous for f in data.trial.factors) else "best combination of levels")
    source = (f"{what} for {spoken(primary)} by the fitted model (a screening model: confirm "
              "before relying on it)" if data.trial.design.kind in TWO_LEVEL_KINDS and any(
                  f.is_continuous for f in data.trial.factors)
              else f"{what} for {spoken(primary)} by the fitted model")
    quiet = _undetected_factors(data.fits[primary], settings)
    if quiet:
        source += "; " + _equivalence_text(data, primary, settings, quiet)
    return settings, source


def _keep_limits(data: TrialAnalysis, primary: str, settings: dict, source: str,
                 limited: list[str], reasons: list[str], fixed: dict | None = None
                 ) -> tuple[dict, str]:
    """Move ``settings`` to the best candidate that keeps every stated limit, saying why;
    factors in ``fixed`` keep their setting (those set to their cheapest)."""
    here = pd.DataFrame([settings])
    values = {n: float(data.fits[n].predict(here, clip=False).predicted.iloc[0])
              for n in limited}
    broken = [(n, limit_shortfall(data.specs[n], values[n])) for n in limited]
    broken = [(n, s) for n, s in broken if s > 0]
    if not broken:
        return settings, source
    said = "; ".join(f"{spoken(n)} is predicted {_fmt(values[n], data.unit(n))}, "
                     f"{_fmt(s, data.unit(n))} beyond its unacceptable value "
                     f"{_limit_text(data.specs[n])}" for n, s in broken)
    points = 3 if data.trial.design.kind in TWO_LEVEL_KINDS else 21
    grid = _candidates(data.trial, points if len(data.trial.factors) <= 3 else 3)
    for name, value in (fixed or {}).items():
        grid = grid[grid[name] == value].reset_index(drop=True)
    ok = _breaks(data, limited, grid) == 0
    if not ok.any():
        reasons.append(f"No setting in the trial's region keeps every stated limit: at the "
                       f"{source.split(' (')[0]} {said}. The recommendation below breaks "
                       "that limit; widen the region or revisit the limit.")
        return settings, source
    spec = data.specs[primary]
    pred = data.fits[primary].predict(grid[ok], clip=False).predicted.to_numpy()
    k = int(np.argmin(pred) if spec.aim == "lower" else np.argmax(pred))
    new = _plain_settings(grid[ok].iloc[k])
    reasons.append(f"Passed over {_settings_text(data, settings)} ({source.split(' (')[0]}): "
                   f"there {said}. Recommended instead: the best {spoken(primary)} among the "
                   "settings that keep every stated limit.")
    return new, (f"best {spoken(primary)} among the settings that keep every stated limit "
                 f"(of {len(grid)} candidate settings, {int(ok.sum())} keep them)")


def clearly_better_setting(fit, others: pd.DataFrame, here: pd.DataFrame,
                           aim: str) -> int | None:
    """The row of ``others`` whose fitted mean is clearly better than at ``here``, or None.

    Each difference from ``here`` is taken on the model's scale and divided by its
    standard error and compared with Student's t at ``fit.alpha`` two-sided,
    Bonferroni-corrected over the rows of ``others`` (so under a flat truth the flag is
    raised at most ``fit.alpha`` of the time); of the rows clearly better, the one with
    the best fitted mean is returned.

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> from trialkit.analysis.model import fit_model
    >>> from trialkit.trial.factors import Factor
    >>> x = np.repeat([1.0, 5.0, 9.0], 4)
    >>> y = 2 * x + np.tile([0.3, -0.3, 0.1, -0.1], 3)
    >>> fit = fit_model(pd.DataFrame({"c": x, "r": y}), "r",
    ...                 [Factor.continuous("c", 1, 9)], "main")
    >>> clearly_better_setting(fit, pd.DataFrame({"c": [1.0, 5.0, 9.0]}),
    ...                        pd.DataFrame({"c": [1.0]}), "higher")
    2
    """
    if fit.df_resid <= 0 or others.empty:
        return None
    X = fit.design_rows(pd.concat([others, here], ignore_index=True))
    d = X[:-1] - X[-1]
    gain = (d @ fit.ls.beta) * (1.0 if aim == "higher" else -1.0)
    se = np.sqrt(np.einsum("ij,jk,ik->i", d, fit.ls.xtx_inv, d) * fit.sigma2)
    t = np.where(se > 0, gain / np.where(se > 0, se, 1.0), 0.0)
    bound = float(stats.t.ppf(1 - fit.alpha / (2 * len(others)), fit.df_resid))
    clear = t > bound
    if not clear.any():
        return None
    return int(np.argmax(np.where(clear, gain, -np.inf)))  # the best of the clearly better


def _flag_unlimited(data: TrialAnalysis, settings: dict, rows: list[dict],
                    reasons: list[str]) -> None:
    """Flag responses without a stated limit that are predicted clearly worse here than at
    another of the trial's own settings.

    Model against model: for each treated bath's settings (those that keep the stated
    limits) the fitted difference from here, on the model's scale, is tested against its
    standard error with a Bonferroni t bound over the settings compared; a response is
    flagged when one of them is clearly better.  The best single bath observed would not
    do: the largest of twenty noisy bath means lies above the mean at its settings, so it
    would call almost any recipe worse.  Responses without a linear model (censored
    times) are not flagged.
    """
    if data.baths is None:
        return
    treated = data.baths[~data.baths["point"].isin(["control", "reference"])]
    traded = {a.response for a in getattr(data.desirability, "aims", ())}
    limited = _limited(data)
    for name in limited:  # the settings to compare with keep the stated limits
        if name in treated:
            spec = data.specs[name]
            keeps = treated[name].map(lambda v, s=spec: limit_shortfall(s, float(v)) == 0)
            treated = treated[keeps.fillna(False).astype(bool)]
    factors = [f.name for f in data.trial.factors]
    if any(n not in treated for n in factors) or set(settings) != set(factors):
        return
    others = treated[factors].drop_duplicates().reset_index(drop=True)
    if others.empty:
        return
    here = pd.DataFrame([settings])[factors]
    for row in rows:
        spec = data.specs[row["response"]]
        fit = data.fits.get(row["response"])
        if not spec.is_wanted or spec.aim == "on-target" or spec.unacceptable is not None \
                or row["response"] in traded or fit is None or fit.df_resid <= 0:
            continue  # a compromise already weighs it, or there is no test to make
        k = clearly_better_setting(fit, others, here, spec.aim)
        if k is not None:
            unit = data.unit(row["response"])
            best = float(fit.predict(others.iloc[[k]]).predicted.iloc[0])
            where = _settings_text(data, _plain_settings(others.iloc[k]))
            among = ("settings that keep the stated limits" if limited else "settings")
            reasons.append(
                f"{spoken_capitalised(row['response'])} is predicted "
                f"{_fmt(row['predicted'], unit)} here "
                f"(95 % CI {_fmt(row['ci_low'], unit)} to {_fmt(row['ci_high'], unit)}), "
                f"clearly worse than at another of the trial's {among} "
                f"({_fmt(best, unit)} at {where}); give "
                f"{row['response']} a limit (unacceptable = ...) in the trial file if that "
                "matters, and the recommendation will keep it.")


def recommend(data: TrialAnalysis) -> None:
    """The recommended settings, the predictions there and the recipe to mix them.

    The settings come from the trial's main response (highest priority) or the best
    compromise of all; they are then moved, if need be, to the best settings that keep
    every stated limit (``unacceptable`` values), saying which limit and by how much.
    Every response with an aim is predicted there; those without a limit that are
    clearly worse than the trial's best bath are flagged.
    """
    wanted = [n for n in dict.fromkeys([*data.fits, *data.censored_fits])
              if data.specs[n].is_wanted]
    if not wanted:
        data.note("recipe", "every response is record-only (no aim higher, lower or "
                            "on-target), so "
                            "there is nothing to recommend")
        return
    # the response the trial cares most about: highest priority, first among equals
    primary = max(wanted, key=lambda n: (data.specs[n].priority, -wanted.index(n)))
    reasons: list[str] = []
    try:
        if uses_censored_model(data, primary) and data.specs[primary].aim == "lower":
            points = 3 if data.trial.design.kind in TWO_LEVEL_KINDS or \
                len(data.trial.factors) > 3 else 21
            settings, source = fastest_settings(data, primary,
                                                _candidates(data.trial, points))
        elif primary in data.fits:
            settings, source = _primary_choice(data, primary)
        else:
            raise TrialkitError(f"{primary}: no model to choose settings by")
    except TrialkitError as exc:
        data.note("recipe", f"no recommendation: {first_line(exc)}")
        return
    limited = _limited(data)
    pr = data.fits[primary].pred_r_squared if primary in data.fits else np.nan
    weak = bool(np.isfinite(pr) and pr < WEAK_PRED_R2) and not uses_censored_model(
        data, primary)
    seen = _observed_choice(data, primary, limited, pr) if weak else None
    if seen is not None:  # a weak model does not choose on its own: the best bath run
        settings, source = seen
        leaned: dict = {}
        reasons.append(f"The model for {spoken(primary)} is weak (it predicts left-out "
                       f"baths with R² = {pr:.2f}, below {readable(WEAK_PRED_R2)}), so the "
                       f"recommendation is {source}, not a model's best point.")
    else:
        settings, leaned = lean_settings(data, settings, reasons)
        settings, source = _keep_limits(data, primary, settings, source, limited, reasons,
                                        fixed=leaned)
    rows = [_prediction_row(data, name, settings) for name in
            dict.fromkeys([*data.fits, *data.censored_fits])]
    met = all(limit_shortfall(data.specs[r["response"]], r["predicted"]) == 0
              for r in rows if r["response"] in limited)
    _flag_unlimited(data, settings, rows, reasons)
    data.recommendation = {"settings": settings, "source": source,
                           "predictions": pd.DataFrame(rows), "limits_met": met,
                           "reasons": reasons, "primary": primary,
                           "set_to_cheapest": leaned}
    _recipe(data)


WEAK_PRED_R2 = 0.5


def _observed_choice(data: TrialAnalysis, primary: str, limited: list[str],
                     pr: float) -> tuple[dict, str] | None:
    """The best treatment the trial ran for ``primary`` among those whose observed means
    keep every stated limit (:func:`trialkit.analysis.observed_best.best_observed`)."""
    names = [f.name for f in data.trial.factors]
    if data.baths is None or any(n not in data.baths for n in names):
        return None

    def keeps(row) -> bool:
        return all(limit_shortfall(data.specs[n], float(row[n])) == 0
                   for n in limited if n in row and row[n] == row[n])

    found = best_observed(data.baths, names, primary, data.specs[primary].aim, keeps)
    if found is None:
        return None
    settings, mean, n = found
    factors = {f.name: f for f in data.trial.factors}
    settings = {k: (float(v) if factors[k].is_continuous else str(v))
                for k, v in settings.items()}
    return settings, (f"the best treatment the trial ran for {spoken(primary)} (mean "
                      f"{_fmt(mean, data.unit(primary))} over {n} bath"
                      f"{'s' if n != 1 else ''})")


def _prediction_row(data: TrialAnalysis, name: str, settings: dict) -> dict:
    """One response predicted at ``settings``: by its censored time model when slow baths
    were censored (the linear model saw only the finished ones), else by its fit."""
    head = {"response": name, "unit": data.unit(name), "aim": data.specs[name].aim}
    cf = data.censored_fits.get(name)
    if uses_censored_model(data, name):
        p1, p3 = (cf.predict(settings, n_new=n).iloc[0] for n in (1, 3))
        return {**head, "predicted": float(p1["median"]), "ci_low": float(p1.ci_low),
                "ci_high": float(p1.ci_high), "pi_low": float(p1.pi_low),
                "pi_high": float(p1.pi_high), "pi3_low": float(p3.pi_low),
                "pi3_high": float(p3.pi_high), "clipped": False,
                "scale": "log (median of a log-normal time model, slow baths censored)"}
    p1, p3 = (_predict(data, name, settings, n) for n in (1, 3))
    return {**head, "predicted": float(p1.predicted), "ci_low": float(p1.ci_low),
            "ci_high": float(p1.ci_high), "pi_low": float(p1.pi_low),
            "pi_high": float(p1.pi_high), "pi3_low": float(p3.pi_low),
            "pi3_high": float(p3.pi_high), "clipped": bool(p1.clipped or p3.clipped),
            "scale": data.fits[name].scale}


def _predict(data: TrialAnalysis, name: str, settings: dict, n_new: int):
    """The prediction at ``settings``; in a split-plot trial with intervals that count the
    tank-to-tank variance (:mod:`trialkit.analysis.split_plot_prediction`)."""
    fit = data.fits[name]
    split = data.split_plots.get(name)
    if split is None or "whole_plot" not in fit.natural:
        return fit.predict(settings, n_new=n_new).iloc[0]
    from trialkit.analysis.split_plot_prediction import split_plot_predict

    return split_plot_predict(fit, settings, whole_plot_column="whole_plot",
                              components=split.variance_components,
                              whole_plot_df=split.whole_plot_error_df,
                              n_new=n_new).iloc[0]


def _equivalence_text(data: TrialAnalysis, primary: str, settings: dict,
                      quiet: list[str]) -> str:
    """"Either setting will do" only where the change's interval lies inside the practical
    margin (the response's ``margin``, else the [analysis] tolerance, else
    relative_tolerance x |prediction|)."""
    from scipy import stats

    from trialkit.analysis.config import AnalysisConfig

    fit = data.fits[primary]
    if not fit.transform.is_raw:
        return (", ".join(spoken(n) for n in quiet) + f": no detectable effect; the model "
                f"of {spoken(primary)} is on the {fit.transform.kind} scale, so the change is "
                "not bounded in the response's unit and the trial cannot say that either "
                "setting will do")
    cfg = (data.trial.sections or {}).get("analysis")
    cfg = cfg if isinstance(cfg, AnalysisConfig) else AnalysisConfig()
    pred = float(fit.predict(settings, clip=False).predicted.iloc[0])
    stated = data.specs[primary].margin
    margin = float(stated) if stated is not None else float(cfg.tolerance) \
        if cfg.tolerance is not None else cfg.relative_tolerance * abs(pred)
    t = float(stats.t.ppf(1 - fit.alpha / 2, fit.df_resid)) if fit.df_resid > 0 else np.nan
    same, open_ = [], []
    factors = {f.name: f for f in data.trial.factors}
    for name in quiet:
        f = factors[name]
        ends = [f.low, f.high] if f.is_continuous else list(f.levels[:2])
        rows = pd.DataFrame([{**settings, name: v} for v in ends])
        X = fit.design_rows(rows)
        d = X[1] - X[0]
        diff = float(d @ fit.ls.beta)
        half = t * float(np.sqrt(d @ fit.ls.xtx_inv @ d * fit.sigma2))
        lo, hi = diff - half, diff + half
        (same if np.isfinite(half) and -margin <= lo and hi <= margin else open_).append(
            f"{spoken(name)} ({readable(lo, 3)} to {readable(hi, 3)})")
    parts = []
    if same:
        parts.append(", ".join(same) + f": the change over the range lies within the "
                     f"practical margin of ±{readable(margin, 3)}, so either setting will do there")
    if open_:
        parts.append(", ".join(open_) + f": no detectable effect, but the interval of the "
                     f"change reaches beyond the practical margin of ±{readable(margin, 3)}, so "
                     "the "
                     "trial cannot say that either setting will do")
    return "; ".join(parts)


def _undetected_factors(fit, settings: dict) -> list[str]:
    """Factors of ``settings`` with no term significant in ``fit`` (type 2 ANOVA)."""
    table = fit.anova(2).summary
    significant = {str(t) for t, p in zip(table.term, table.p, strict=True)
                   if p == p and p < fit.alpha}
    terms = {f.name: [t.name for t in fit.spec.terms if f.name in t.factors]
             for f in fit.spec.used_factors}
    return [name for name in settings
            if terms.get(name) and not any(t in significant for t in terms[name])]


def _recipe(data: TrialAnalysis) -> None:
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
        data.note("recipe", f"the recipe could not be worked out: {first_line(exc)}")


def check_confirmation(data: TrialAnalysis, confirmation) -> None:
    """Compare confirmation baths with the prediction intervals of each fitted model.

    ``confirmation``: a :class:`trialkit.responses.compute.Responses` of the confirmation baths
    or their coupon readings (one row per coupon: bath, coupon_kind, factor columns and
    the entry fields), all baths at one setting.
    """
    if confirmation is None:
        return
    try:
        from trialkit.analysis.confirm import confirm
        from trialkit.responses.compute import compute_responses
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
                                               baths=[str(b) for b in values.index],
                                               n_responses=len(data.fits))
        except TrialkitError as exc:
            data.note("confirm", f"{name}: confirmation not checked ({first_line(exc)})")
