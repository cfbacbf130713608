"""Plain sentences for a split-plot trial: each factor's effect judged against its own
stratum's error, and why the hard-to-change factor's interval is wider.

Written from a :class:`trialkit.analysis.split_plot_trial.SplitPlotResult`; the sentences
replace the bath-level model's effect sentences, whose intervals treat every bath as
randomised on its own.

Examples
--------
>>> import itertools, pandas as pd
>>> from trialkit.analysis.split_plot_trial import analyse_split_plot
>>> from trialkit.trial.factors import Factor
>>> noise = itertools.cycle([0.8, -1.1, 0.3, -0.4, 1.2, -0.6, 0.1, -0.9, 0.5, 0.7, -0.2])
>>> rows = [dict(day=d, tank=f"{d}-{t}", temperature=t, chelator=c,
...              removal=50 + 10 * (t == 40) + 5 * (c == 6) + next(noise))
...         for d, t, c, _ in itertools.product((1, 2, 3), (20, 40), (2, 6), "ab")]
>>> res = analyse_split_plot(pd.DataFrame(rows), "removal", ["temperature"], ["chelator"],
...                          whole_plot="tank", block="day")
>>> factors = [Factor.continuous("temperature", 20, 40, unit="degC"),
...            Factor.continuous("chelator", 2, 6, unit="% w/v")]
>>> text = split_plot_findings(res, factors, unit="%")[0].text
>>> head, tail = text.split("; ")
>>> print(head)  # doctest: +ELLIPSIS
Raising temperature from 20 to 40 °C (set per tank) increased removal by ... (95 % CI ...
>>> print(tail)  # doctest: +ELLIPSIS
p ..., against the variation between tank runs, 2 degrees of freedom).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from trialkit.numbers import spoken
from trialkit.report.findings import (
    Finding,
    amount_text,
    decimals_for,
    fmt,
    fmt_p,
    interval,
    pretty_unit,
    span_text,
)

AGAINST = {"whole plot": "against the variation between tank runs",
           "subplot": "against the variation between baths in one tank"}


def _df_text(df) -> str:
    df = int(df)
    return f"{df} degree{'s' if df != 1 else ''} of freedom"


def split_plot_findings(result, factors: Sequence, *, unit: str = "",
                        alpha: float = 0.05) -> list[Finding]:
    """Effect, interaction and "why wider" sentences of one response's split-plot analysis.

    ``factors`` are the trial's :class:`~trialkit.trial.factors.Factor` objects (for units
    and ranges); ``unit`` is the response's unit (``"%"`` is said as points).
    """
    by_name = {f.name: f for f in factors}
    resp, unit = result.response, pretty_unit(unit)
    said = spoken(resp)
    out: list[tuple[float, Finding]] = []
    for r in result.effects.itertuples():
        f = by_name.get(r.factor)
        eff, lo, hi, p = float(r.effect), float(r.ci_low), float(r.ci_high), float(r.p_value)
        dec = decimals_for((hi - lo) / 2)
        hard = r.error_stratum == "whole plot"
        if f is not None and f.is_continuous:
            head = f"Raising {spoken(r.factor, f.unit)} {span_text(f, float(r.low), float(r.high))}"
        else:
            head = f"Changing {spoken(r.factor)} from {r.low} to {r.high}"
        head += " (set per tank)" if hard else ""
        tail = f"{fmt_p(p)}, {AGAINST[r.error_stratum]}, {_df_text(r.error_df)}"
        nums = {"effect": eff, "ci_low": lo, "ci_high": hi, "p": p,
                "error_stratum": r.error_stratum, "error_df": int(r.error_df)}
        if math.isfinite(p) and p < alpha:
            verb = "increased" if eff > 0 else "decreased"
            ci = interval(lo, hi, dec) if eff > 0 else interval(-hi, -lo, dec)
            text = (f"{head} {verb} {said} by {amount_text(eff, unit, dec)} "
                    f"(95 % CI {ci}; {tail}).")
            out.append((abs(eff), Finding(text, resp, r.factor, "effect", nums)))
        else:
            text = (f"{head} made no detectable difference to {said} (estimate "
                    f"{fmt(eff, dec)} {unit}, 95 % CI {interval(lo, hi, dec)}; "
                    f"{tail}).").replace(" %,", " points,")
            out.append((-1 / (1 + abs(eff)), Finding(text, resp, r.factor, "not_detected",
                                                     nums)))
    for r in result.tests.itertuples():
        if ":" not in str(r.term) or not (math.isfinite(r.p_value) and r.p_value < alpha):
            continue
        parts = str(r.term).split(":")
        text = (f"The effect of {spoken(parts[0])} on {said} depends on "
                f"{' and '.join(map(spoken, parts[1:]))} "
                f"({fmt_p(float(r.p_value))}, {AGAINST[r.error_stratum]}).")
        out.append((0.0, Finding(text, resp, str(r.term), "interaction",
                                 {"p": float(r.p_value), "error_stratum": r.error_stratum,
                                  "error_df": int(r.error_df)})))
    out.sort(key=lambda t: -t[0])
    findings = [f for _, f in out]
    why = why_wider(result, unit)
    if why:
        findings.append(Finding(why, resp, "whole plot", "split_plot",
                                dict(result.variance_components)))
    return findings


def why_wider(result, unit: str = "") -> str:
    """One sentence on why the hard-to-change factors' intervals are the wider ones."""
    eff = result.effects
    hard = eff[eff.error_stratum == "whole plot"]
    if hard.empty:
        return ""
    names = " and ".join(map(spoken, dict.fromkeys(hard.factor)))
    wp, sp = (max(float(result.variance_components[k]), 0.0)
              for k in ("whole_plot", "subplot"))
    return (f"The interval for {names} is wider than for the other factors because "
            f"{names} was set per tank: only {result.n_whole_plots} tank runs "
            f"({_df_text(result.whole_plot_error_df)} once blocks and factors are counted) "
            f"carry its information, and tank runs differ by more than baths in one tank do "
            f"(estimated tank-to-tank SD {fmt(math.sqrt(wp), 2)}, bath-to-bath SD "
            f"{amount_text(math.sqrt(sp), unit, 2)}).")
