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


def censored_times(data: TrialAnalysis, spec, fit=None) -> None:
    """Count the censored baths of a time response and, when there are any (or no linear
    model could be fitted), fit the time with them right-censored.  The plain result goes
    to ``data.censoring``, the fit to ``data.censored_fits``."""
    from trialkit.analysis.censored import fit_censored
    from trialkit.trial.model_grammar import parse_model

    if fit is not None:
        terms = " + ".join(t.name for t in fit.spec.terms if t.name != "block")
        used = list(fit.spec.used_factors)
    else:
        terms, used = "main", list(parse_model("main", data.trial.factors).used_factors)
    names = [f.name for f in used if f.name != "block"]
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
        try:
            cf = fit_censored(table, "time", used, terms or None, censored="censored",
                              alpha=fit.alpha if fit is not None else 0.05)
            out["censored_fit"] = cf.to_dict()
            data.censored_fits[spec.name] = cf
        except TrialkitError as exc:
            out["censored_fit_error"] = first_line(exc)
    if len(cens):
        data.note("analysis", f"{spec.name}: {len(cens)} of {len(table)} baths had not "
                              f"reached {int(level)} % removal by their last inspection; "
                              "they are right-censored in the log-normal time model "
                              "(under 'censoring'), which counts them as lasting at least "
                              "that long; the linear model, if any, uses only the baths "
                              "that got there")
    data.censoring[spec.name] = out
