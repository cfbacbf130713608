"""Times to clean in a trial, with the slow baths kept: right-censoring at the last inspection.

A bath that has not reached 50 % or 90 % removal by its last inspection has no time to
clean, only a lower bound on it.  Dropping such baths picks the fastest-looking setting
from the baths that happened to finish (and, when every bath at one setting is slow,
leaves that setting out of the model altogether).  Here every treated bath counts: its
time if it got there, its last inspection, flagged as censored, if it did not; the time is
fitted with the log-normal accelerated-failure-time model of
:mod:`trialkit.analysis.censored` over the same terms as the linear model (blocks left
out), or over the main effects when no linear model could be fitted.  The counts of
censored baths at each level of each factor go to the JSON and the report.
"""

from __future__ import annotations

import pandas as pd

from trialkit.analysis.trial_data import TrialAnalysis, first_line
from trialkit.exceptions import TrialkitError
from trialkit.numbers import spoken

#: Time measures that can be censored -> the removal level (%) they time.
CENSORED_LEVELS = {"time_to_50_h": 50.0, "time_to_90_h": 90.0}


def is_censorable(spec) -> bool:
    """True for a response that times a removal level (``time_to_50_h``, ``time_to_90_h``)."""
    return (spec.measure or spec.name) in CENSORED_LEVELS


def time_table(data: TrialAnalysis, spec, factors: list[str]) -> pd.DataFrame:
    """One row per treated bath with a time course: its factor settings, ``bath``,
    ``time`` (h: to the level, or the last inspection) and ``censored``."""
    tag = int(CENSORED_LEVELS[spec.measure or spec.name])
    rows = []
    for rec in data.baths.to_dict("records"):
        k = data.kinetics.get(str(rec.get("bath")))
        if k is None or rec.get("point") in ("control", "reference") \
                or any(pd.isna(rec.get(n)) for n in factors):
            continue
        reached = bool(getattr(k, f"reached_{tag}"))
        rows.append({**{n: rec[n] for n in factors}, "bath": str(rec["bath"]),
                     "time": getattr(k, f"time_to_{tag}_h") if reached else k.last_h,
                     "censored": not reached})
    return pd.DataFrame(rows, columns=[*factors, "bath", "time", "censored"])


def censored_by_level(table: pd.DataFrame, factors: list[str]) -> list[dict]:
    """Baths and censored baths at each level of each factor.

    >>> t = pd.DataFrame({"temperature": [20, 20, 40, 40], "censored": [True, True,
    ...                                                                 False, False]})
    >>> censored_by_level(t, ["temperature"])[0]
    {'factor': 'temperature', 'level': 20, 'n_baths': 2, 'n_censored': 2}
    """
    out = []
    for name in factors:
        for level, group in table.groupby(name, sort=True):
            level = level.item() if hasattr(level, "item") else level
            out.append({"factor": name, "level": level, "n_baths": len(group),
                        "n_censored": int(group["censored"].sum())})
    return out


def fully_censored_levels(table: pd.DataFrame, factors: list[str]) -> list[dict]:
    """Levels at which every bath was censored, of factors where some other level had
    baths that got there: ``factor``, ``level``, ``n_baths``, ``last_h`` (the latest
    inspection there).

    >>> t = pd.DataFrame({"temperature": [20, 20, 40, 40], "time": [8.0, 8, 3, 5],
    ...                   "censored": [True, True, False, False]})
    >>> fully_censored_levels(t, ["temperature"])
    [{'factor': 'temperature', 'level': 20, 'n_baths': 2, 'last_h': 8.0}]
    """
    out = []
    for name in factors:
        groups = {lv: g for lv, g in table.groupby(name, sort=True)}
        if not any((~g["censored"]).any() for g in groups.values()):
            continue
        for level, g in groups.items():
            if g["censored"].all():
                out.append({"factor": name,
                            "level": level.item() if hasattr(level, "item") else level,
                            "n_baths": len(g), "last_h": float(g["time"].max())})
    return out


def separation_tests(by_level: list[dict], separated: list[dict]) -> dict[str, float]:
    """For each factor with a level where no bath got there: Fisher's exact test (scipy)
    of reached-or-not at those levels against its other levels -> p-value.

    >>> separation_tests([{"factor": "t", "level": 20, "n_baths": 6, "n_censored": 6},
    ...                   {"factor": "t", "level": 40, "n_baths": 6, "n_censored": 0}],
    ...                  [{"factor": "t", "level": 20}])
    {'t': 0.0021645021645021645}
    """
    from scipy import stats

    out = {}
    for name in dict.fromkeys(s["factor"] for s in separated):
        stuck = {s["level"] for s in separated if s["factor"] == name}
        mine = [r for r in by_level if r["factor"] == name]
        n_stuck = sum(r["n_baths"] for r in mine if r["level"] in stuck)
        rest = [r for r in mine if r["level"] not in stuck]
        table = [[n_stuck, 0], [sum(r["n_censored"] for r in rest),
                                sum(r["n_baths"] - r["n_censored"] for r in rest)]]
        out[name] = float(stats.fisher_exact(table)[1])
    return out


def censored_tests(data: TrialAnalysis, name: str) -> dict[str, float]:
    """Factor -> p-value of its effect on a time judged by the censored model: the Wald
    test of its coefficient (each column), or the reached-or-not test for a factor with
    a level where no bath got there."""
    out = dict(data.censoring[name].get("separation_tests", {}))
    cf = data.censored_fits.get(name)
    if cf is not None:
        table = cf.summary
        for f in cf.factors:
            mine = table[(table.term == f.name) | table.term.str.startswith(f"{f.name} = ")]
            ps = [float(p) for p in mine.p if p == p]
            if ps:
                out[f.name] = min(ps + ([out[f.name]] if f.name in out else []))
    return out


def censored_times(data: TrialAnalysis, spec, fit=None) -> None:
    """Count the censored baths of a time response and, when there are any (or no linear
    model could be fitted), fit the time with them right-censored.  The plain result goes
    to ``data.censoring``, the fit to ``data.censored_fits``."""
    from trialkit.trial.model_grammar import parse_model

    if fit is not None:
        terms = " + ".join(t.name for t in fit.spec.terms if t.name != "block")
        used = list(fit.spec.used_factors)
    else:
        terms, used = "main", list(parse_model("main", data.trial.factors).used_factors)
    used = [f for f in used if f.name != "block"]
    names = [f.name for f in used]
    table = time_table(data, spec, names)
    if table.empty:
        return
    cens = table[table.censored]
    level = CENSORED_LEVELS[spec.measure or spec.name]
    out = {"level_pct": level, "n_baths": len(table), "n_censored": len(cens),
           "censored_baths": cens.bath.tolist(), "censored_fit": None,
           "by_level": censored_by_level(table, names),
           "linear_fit_uses": ("only the baths that reached the level" if fit is not None
                               else "no linear model could be fitted")}
    separated = fully_censored_levels(table, names)
    out["fully_censored_levels"] = separated
    out["separation_tests"] = separation_tests(out["by_level"], separated)
    if separated:
        # a level where no bath got there bounds its effect from one side only (the
        # likelihood grows without end): fit the other factors on the remaining baths
        keep = ~pd.concat([table[s["factor"]] == s["level"] for s in separated],
                          axis=1).any(axis=1)
        table = table[keep].reset_index(drop=True)
        used = [f for f in used if table[f.name].nunique() > 1] if len(table) else []
        terms = " + ".join(f.name for f in used)
        out["censored_fit_uses"] = (f"the {len(table)} baths not at a level where every "
                                    "bath was still short of the level")
    if (len(cens) or fit is None) and len(table):
        alpha = fit.alpha if fit is not None else 0.05
        cf, model, error = fit_shrinking(table, used, terms or None, alpha)
        if cf is None:
            out["censored_fit_error"] = error
        else:
            out["censored_fit"] = cf.to_dict()
            out["censored_fit_model"] = model or "intercept only"
            data.censored_fits[spec.name] = cf
            if model != (terms or None):
                finished = int((~table["censored"].astype(bool)).sum())
                data.note("analysis", f"{spec.name}: only {finished} baths reached "
                          f"{int(level)} % removal, too few for the model {terms}; the "
                          f"censored time model has the main effects only ({model})")
    if len(cens):
        data.note("analysis", f"{spec.name}: {len(cens)} of {out['n_baths']} baths had not "
                              f"reached {int(level)} % removal by their last inspection; "
                              "they are right-censored in the log-normal time model "
                              "(under 'censoring'), which counts them as lasting at least "
                              "that long; the linear model, if any, uses only the baths "
                              "that got there")
    data.censoring[spec.name] = out


def fit_shrinking(table: pd.DataFrame, used: list, terms: str | None, alpha: float):
    """The censored time fit of ``terms``, or of the main effects alone when too few baths
    finished for ``terms``: ``(fit, model fitted, "")``, or ``(None, None, why)``.

    >>> import pandas as pd
    >>> from trialkit.trial.factors import Factor
    >>> a, b = Factor.continuous("a", 0, 1), Factor.continuous("b", 0, 1)
    >>> t = pd.DataFrame({"a": [0, 1, 0, 1, 0, 1], "b": [0, 0, 1, 1, 0, 1],
    ...                   "time": [5.0, 3, 4, 2, 9, 9], "censored": [0, 0, 0, 0, 1, 1]})
    >>> fit, model, why = fit_shrinking(t, [a, b], "a + b + a:b", 0.05)
    >>> model, fit.n_censored
    ('a + b', 2)
    """
    from trialkit.analysis.censored import fit_censored

    tried = [terms]
    main = " + ".join(f.name for f in used) or None
    if terms and terms != main:
        tried.append(main)
    error = ""
    for model in tried:
        try:
            return fit_censored(table, "time", used, model, censored="censored",
                                alpha=alpha), model, ""
        except TrialkitError as exc:
            error = first_line(exc)
    return None, None, error


def uses_censored_model(data: TrialAnalysis, name: str) -> bool:
    """True when a time response is to be judged by its censored model: it has one, and
    slow baths were censored (or no linear model could be fitted)."""
    return name in data.censored_fits and (name not in data.fits
                                           or bool(data.censoring[name]["n_censored"]))


def fastest_settings(data: TrialAnalysis, name: str, grid: pd.DataFrame) -> tuple[dict, str]:
    """The candidate settings with the shortest median time by the censored model.

    Factors left out of that model (a level where no bath got there) are held at the
    levels where baths did get there; the model's own factors range over ``grid``.
    """
    cf = data.censored_fits[name]
    modelled = {f.name for f in cf.factors}
    by_level = data.censoring[name].get("by_level", [])
    for f in data.trial.factors:
        if f.name in modelled:
            continue
        finished = [r["level"] for r in by_level
                    if r["factor"] == f.name and r["n_censored"] < r["n_baths"]]
        if finished:
            grid = grid[grid[f.name].isin(finished)]
    if grid.empty:
        raise TrialkitError(f"{name}: no candidate setting where baths reached the level")
    median = cf.predict(grid.reset_index(drop=True))["median"].to_numpy()
    best = grid.reset_index(drop=True).iloc[int(median.argmin())]
    settings = {k: (float(v) if not isinstance(v, str) else v) for k, v in best.items()}
    n, k = data.censoring[name]["n_baths"], data.censoring[name]["n_censored"]
    return settings, (f"shortest median {spoken(name)} by the log-normal time "
                      f"model, which counts the {k} of {n} baths that had not got there "
                      "as lasting at least until their last inspection")
