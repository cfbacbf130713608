"""Plain sentences for a time to clean with slow baths kept (right-censored).

Written from ``TrialAnalysis.censoring`` (the counts) and ``censored_fits`` (the
log-normal time model of :mod:`trialkit.analysis.censored`).  An effect on a time is a
*ratio*: the model is linear in ln T, so raising a factor over its range multiplies the
median time by ``exp(change in x'beta)``, with a Wald interval on the log scale.

Examples
--------
>>> cen = {"level_pct": 90.0, "n_baths": 8, "n_censored": 4, "censored_fit": None,
...        "by_level": [{"factor": "temperature", "level": 20.0, "n_baths": 4,
...                      "n_censored": 4},
...                     {"factor": "temperature", "level": 40.0, "n_baths": 4,
...                      "n_censored": 0}],
...        "censored_fit_error": "only 4 baths reached the level; the model has 6 "
...                              "coefficients; use a smaller model or run longer"}
>>> from trialkit.trial.factors import Factor
>>> count, why = censored_findings("time_to_clean", cen, None,
...                                [Factor.continuous("temperature", 20, 40, unit="degC")])
>>> print(count.text.split("; ")[0])
Time to clean: 4 of 8 baths had not reached 90 % removal by their last inspection
>>> print(count.text.split("; ")[1])
they count as lasting at least that long (temperature 20 °C: 4 of 4, 40 °C: 0 of 4).
>>> print(why.text.split(": ")[0])
Time to clean cannot be modelled
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from scipy import stats

from trialkit.numbers import p_phrase, readable, settings_text, spoken, spoken_capitalised
from trialkit.report.findings import Finding, span_text
from trialkit.trial.model_matrix import level_label

#: A factor's levels are listed when their censored shares differ by at least this much.
LISTED_CONTRAST = 0.5
#: Significance level of the reached-or-not comparison.
ALPHA = 0.05


def _level_text(name: str, level, unit: str | None) -> str:
    if isinstance(level, str):
        return level
    text = settings_text({name: level}, {name: unit})
    return text.removeprefix(f"{name} ")


def _by_level_text(rows: list[dict], factors: Sequence) -> str:
    parts = []
    for f in factors:
        mine = [r for r in rows if r["factor"] == f.name and r["n_baths"]]
        shares = [r["n_censored"] / r["n_baths"] for r in mine]
        if len(shares) < 2 or max(shares) - min(shares) < LISTED_CONTRAST:
            continue
        levels = ", ".join(f"{_level_text(f.name, r['level'], f.unit)}: {r['n_censored']} "
                           f"of {r['n_baths']}" for r in mine)
        parts.append(f"{spoken(f.name, f.unit)} {levels}" if f.unit != "pH"
                     else f"pH {levels.replace('pH ', '')}")
    return f" ({'; '.join(parts)})" if parts else ""


def _separated_sentences(name: str, censoring: dict, factors: Sequence) -> list[Finding]:
    """A factor with an end level where no bath got there: its effect has one side only."""
    out = []
    rows = censoring.get("by_level", [])
    level = readable(censoring["level_pct"])
    for f in factors:
        mine = [r for r in rows if r["factor"] == f.name and r["n_baths"]]
        ends = {mine[0]["level"], mine[-1]["level"]} if f.is_continuous and mine else \
            {r["level"] for r in mine}
        stuck = [s for s in censoring.get("fully_censored_levels", [])
                 if s["factor"] == f.name and s["level"] in ends]
        if not stuck:
            continue
        done = [r for r in mine if r["n_censored"] < r["n_baths"]]
        at = " and ".join(f"{_level_text(f.name, s['level'], f.unit)} ({s['n_baths']})"
                          for s in stuck)
        got = ", ".join(f"{r['n_baths'] - r['n_censored']} of {r['n_baths']} at "
                        f"{_level_text(f.name, r['level'], f.unit)}" for r in done)
        last = readable(max(s["last_h"] for s in stuck), 3)
        p = float(censoring.get("separation_tests", {}).get(f.name, math.nan))
        p_text = p_phrase(p)
        verdict = (f"{spoken(name)} depends on {spoken(f.name, f.unit)} (Fisher's exact test "
                   f"on reached or not, {p_text}), but this trial cannot say by how much"
                   if p < ALPHA else
                   f"too few baths to tell whether {spoken(name)} depends on "
                   f"{spoken(f.name, f.unit)} (Fisher's exact test, {p_text})")
        text = (f"Every bath at {spoken(f.name, f.unit)} {at} was still short of {level} % "
                f"removal at its last inspection ({last} h), while {got} got there: "
                f"{verdict}; inspect such baths for longer.")
        out.append(Finding(text, name, f.name, "effect" if p < ALPHA else "not_detected",
                           {"fully_censored": stuck, "reached": done, "p": p}))
    return out


def _ratio_sentences(name: str, fit, factors: Sequence) -> list[Finding]:
    said = spoken(name)
    z = float(stats.norm.ppf(1 - fit.alpha / 2))
    out = []
    by_name = {f.name: f for f in factors}
    first_levels = {level_label(f.name, f.levels[0]): f for f in factors
                    if not f.is_continuous}
    for term, beta, se, p in zip(fit.columns, fit.beta, fit.se, fit.summary.p,
                                 strict=True):
        f = by_name.get(term) or first_levels.get(term)
        if f is None or not (se > 0):
            continue
        if f.is_continuous:
            change, head = 2.0, f"Raising {spoken(f.name, f.unit)} {span_text(f)}"
        elif len(f.levels) == 2:  # sum coding: the column of the first level, +1 / -1
            change, head = -2.0, f"Changing {spoken(f.name)} from {f.levels[0]} to " \
                f"{f.levels[1]}"
        else:
            continue
        ratio = math.exp(change * beta)
        lo, hi = sorted(math.exp(change * (beta + s * z * se)) for s in (-1, 1))
        p = float(p)
        nums = {"time_ratio": ratio, "ci_low": lo, "ci_high": hi, "p": p}
        p_text = p_phrase(p)
        ci = f"time ratio {readable(ratio, 2)}, 95 % CI {readable(lo, 2)}–{readable(hi, 2)}"
        if p < fit.alpha:
            verb = "shortened" if ratio < 1 else "lengthened"
            text = (f"{head} {verb} the median {said} {readable(max(ratio, 1 / ratio), 2)}"
                    f"-fold ({ci}; {p_text}; slow baths counted as censored).")
            out.append(Finding(text, name, term, "effect", nums))
        else:
            out.append(Finding(f"{head} made no detectable difference to the median {said} "
                               f"({ci}; {p_text}).", name, term, "not_detected", nums))
    return out


def censored_findings(name: str, censoring: dict, fit, factors: Sequence) -> list[Finding]:
    """The count of slow baths (by level where it differs), and the time ratios of the
    censored model or why it could not be fitted."""
    n, k = int(censoring["n_baths"]), int(censoring["n_censored"])
    out: list[Finding] = []
    if k:
        text = (f"{spoken_capitalised(name)}: {k} of {n} baths had not reached "
                f"{readable(censoring['level_pct'])} % removal by their last inspection; "
                f"they count as lasting at least that long"
                f"{_by_level_text(censoring.get('by_level', []), factors)}.")
        out.append(Finding(text, name, "censoring", "censoring",
                           {"n_baths": n, "n_censored": k}))
    out += _separated_sentences(name, censoring, factors)
    if fit is not None:
        out += sorted(_ratio_sentences(name, fit, factors),
                      key=lambda f: (f.kind != "effect", f.numbers["p"]))
    elif censoring.get("censored_fit_error"):
        out.append(Finding(
            f"{spoken_capitalised(name)} cannot be modelled: "
            f"{censoring['censored_fit_error']}. Inspect the slow baths for longer next "
            "time.", name, "censoring", "model", {"n_censored": k}))
    return out

