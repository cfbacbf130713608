"""The recommendation: best compromise of all responses, the recommended settings with
their predictions, the recipe to mix them, and the check of confirmation baths.
"""

from __future__ import annotations

import itertools
from types import SimpleNamespace

import numpy as np
import pandas as pd

from trialkit.analysis.trial_data import TWO_LEVEL_KINDS, TrialAnalysis, first_line
from trialkit.exceptions import TrialkitError

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


def _corners(trial) -> pd.DataFrame:
    axes = [[f.low, f.center, f.high] if f.is_continuous else list(f.levels)
            for f in trial.factors]
    rows = [dict(zip([f.name for f in trial.factors], combo, strict=True))
            for combo in itertools.product(*axes)]
    return pd.DataFrame(rows)


def recommend(data: TrialAnalysis) -> None:
    """The recommended settings, the predictions there and the recipe to mix them."""
    wanted = [n for n in data.fits if data.specs[n].is_wanted]
    if not wanted:
        data.note("recipe", "every response is record-only (no aim higher, lower or "
                            "on-target), so "
                            "there is nothing to recommend")
        return
    # the response the trial cares most about: highest priority, first among equals
    primary = max(wanted, key=lambda n: (data.specs[n].priority, -wanted.index(n)))
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
        settings = {sw.factor.name: float(sw.lean_level)}
        source = (f"the practical lean level of the sweep: the lowest {sw.factor.name} whose "
                  f"predicted {primary} is within {sw.tolerance:.3g} {spec.unit} of the best "
                  f"(best at {sw.best:.3g} {sw.factor.unit})")
    else:
        grid = _corners(data.trial)
        pred = data.fits[primary].predict(grid, clip=False).predicted.to_numpy()
        k = int(np.argmin(pred) if spec.aim == "lower" else np.argmax(pred))
        settings = grid.iloc[k].to_dict()
        settings = {kk: (float(v) if isinstance(v, (int, float, np.floating)) else str(v))
                    for kk, v in settings.items()}
        source = (f"best of the low, middle and high settings for {primary} by the fitted "
                  "model (a screening model: confirm before relying on it)")
        quiet = _undetected_factors(data.fits[primary], settings)
        if quiet:
            source += "; " + _equivalence_text(data, primary, settings, quiet)
    pr = data.fits[primary].pred_r_squared
    if np.isfinite(pr) and pr < WEAK_PRED_R2:
        source += (f"; the model for {primary} is weak (predicted R² = {pr:.2f}, below "
                   f"{WEAK_PRED_R2:g}): it should not decide on its own; confirm first")
    rows = []
    for name, fit in data.fits.items():
        p1 = fit.predict(settings, n_new=1).iloc[0]
        p3 = fit.predict(settings, n_new=3).iloc[0]
        rows.append({"response": name, "unit": data.unit(name), "aim": data.specs[name].aim,
                     "predicted": float(p1.predicted), "ci_low": float(p1.ci_low),
                     "ci_high": float(p1.ci_high), "pi_low": float(p1.pi_low),
                     "pi_high": float(p1.pi_high), "pi3_low": float(p3.pi_low),
                     "pi3_high": float(p3.pi_high),
                     "clipped": bool(p1.clipped or p3.clipped), "scale": fit.scale})
    data.recommendation = {"settings": settings, "source": source,
                           "predictions": pd.DataFrame(rows)}
    _recipe(data)


WEAK_PRED_R2 = 0.5


def _equivalence_text(data: TrialAnalysis, primary: str, settings: dict,
                      quiet: list[str]) -> str:
    """"Either setting will do" only where the change's interval lies inside the practical
    margin (the [analysis] tolerance, else relative_tolerance x |prediction|)."""
    from scipy import stats

    from trialkit.analysis.config import AnalysisConfig

    fit = data.fits[primary]
    cfg = (data.trial.sections or {}).get("analysis")
    cfg = cfg if isinstance(cfg, AnalysisConfig) else AnalysisConfig()
    pred = float(fit.predict(settings, clip=False).predicted.iloc[0])
    margin = float(cfg.tolerance) if cfg.tolerance is not None else \
        cfg.relative_tolerance * abs(pred)
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
            f"{name} ({lo:.3g} to {hi:.3g})")
    parts = []
    if same:
        parts.append(", ".join(same) + f": the change over the range lies within the "
                     f"practical margin of ±{margin:.3g}, so either setting will do there")
    if open_:
        parts.append(", ".join(open_) + f": no detectable effect, but the interval of the "
                     f"change reaches beyond the practical margin of ±{margin:.3g}, so the "
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
