"""Plain-language findings, written from the numbers of fitted models and effects.

Nothing here is canned: every sentence is assembled from an estimate, its interval and
its p-value, so different data give different sentences.  Each :class:`Finding` keeps the
numbers it quotes, so a reader (or a test) can check the sentence against them.

Examples
--------
>>> import pandas as pd
>>> from trialkit.trial.factors import Factor
>>> from trialkit.analysis.model import fit_model
>>> df = pd.DataFrame({"chelator": [2, 10, 2, 10, 6, 6], "ph": [5.5, 5.5, 7.5, 7.5, 6.5, 6.5],
...                    "removal": [40.0, 70.0, 41.0, 72.0, 56.0, 55.0]})
>>> fit = fit_model(df, "removal", [Factor.continuous("chelator", 2, 10, unit="% w/v"),
...                                 Factor.continuous("ph", 5.5, 7.5, unit="pH")], "main")
>>> print(model_findings(fit, unit="%")[0].text)  # doctest: +ELLIPSIS
Raising chelator from 2 to 10 % w/v increased removal by 30.5 points (95 % CI 28.8–32.2; p < 0.001).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import asdict, dataclass, field

import numpy as np

from trialkit.numbers import p_phrase, readable, readable_unit, spoken, spoken_capitalised

DASH = "\u2013"
MINUS = "\u2212"


@dataclass
class Finding:
    """One sentence and the numbers it quotes.

    Attributes
    ----------
    text : str
    response, term : str
    kind : str
        ``effect`` (detected), ``not_detected``, ``interaction``, ``curvature``,
        ``model`` (fit quality) or ``screening`` (Lenth).
    numbers : dict
        effect, ci_low, ci_high, p, detectable ... as quoted.
    """

    text: str
    response: str
    term: str
    kind: str
    numbers: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        return asdict(self)


def decimals_for(width: float) -> int:
    """Decimals that show an interval of half-width ``width`` to two significant digits."""
    if not (isinstance(width, float | int) and math.isfinite(width)) or width <= 0:
        return 2
    return int(min(4, max(0, 1 - math.floor(math.log10(abs(width))))))


def fmt(x: float, dec: int) -> str:
    """A number with ``dec`` decimals and a true minus sign."""
    s = f"{x:.{dec}f}"
    if s.lstrip("-").strip("0.") == "":
        s = s.lstrip("-")
    return s.replace("-", MINUS)


def fmt_p(p: float) -> str:
    """``p < 0.001`` or ``p = 0.62`` (two significant digits)."""
    return p_phrase(p)


def pretty_unit(unit: str) -> str:
    """``g/m**2`` -> ``g/m²``; ``degC`` -> ``°C`` (:func:`trialkit.numbers.readable_unit`)."""
    return readable_unit(unit)


def amount_text(effect: float, unit: str, dec: int) -> str:
    size = fmt(abs(effect), dec)
    if unit == "%":
        return f"{size} points"
    return f"{size} {unit}".strip()


def span_text(f, low: float | None = None, high: float | None = None) -> str:
    """``from 2 to 10 % w/v``, or ``from 5.5 to 7.5`` for a factor in pH (said "Raising pH
    from 5.5 to 7.5"): the factor's range, or the ``low``-``high`` range given (the one the
    model was fitted on)."""
    low = f.low if low is None else low
    high = f.high if high is None else high
    if f.unit == "pH":
        return f"from {readable(low)} to {readable(high)}"
    return f"from {readable(low)} to {readable(high)} {pretty_unit(f.unit)}".rstrip()


def interval(lo: float, hi: float, dec: int) -> str:
    """``24.1–38.3``, or ``−17.3 to −14.1`` when a bound is negative."""
    sep = " to " if lo < 0 or hi < 0 else DASH
    return f"{fmt(lo, dec)}{sep}{fmt(hi, dec)}"


def _anova_p(fit) -> dict:
    tab = fit.anova(2).summary
    return {r.term: float(r.p) for r in tab.itertuples()}


def _effect_row(fit, term: str):
    cols = fit.mm.term_columns.get(term)
    if cols is None or cols.stop - cols.start != 1:
        return None
    name = fit.mm.columns[cols.start]
    eff = fit.effects
    row = eff[eff.term == name]
    return None if row.empty else row.iloc[0]


def _curvature_text(fit, factor: str, est: float, p_text: str) -> str:
    """A significant square term in words: a peak or a dip only where the fitted curve
    (transformed back, other factors at their middle) has one inside the range."""
    resp = spoken_capitalised(fit.response)
    curve = fit.profile(factor, n=41)["predicted"].to_numpy()
    inner = int(np.argmax(curve) if est < 0 else np.argmin(curve))
    scale = "" if fit.transform.is_raw else f" on the {fit.transform.kind} scale"
    if 0 < inner < len(curve) - 1:
        where = "higher in the middle of the range than at its ends" if est < 0 \
            else "lower in the middle of the range than at its ends"
        return f"{resp} curves along {spoken(factor)}: it is {where} ({p_text})."
    steep = np.abs(np.diff(curve))
    end = "high" if steep[-1] < steep[0] else "low"
    return (f"{resp} curves along {spoken(factor)}{scale} without a peak or a dip inside the "
            f"range: it changes more slowly towards the {end} end ({p_text}).")


def _transformed_effect(fit, f, p: float, sig: bool, unit: str,
                        nums: dict) -> tuple[float, Finding]:
    """The sentence of a main effect fitted on the log or logit scale: the response at the
    two ends of the factor, transformed back (others at their middle), not a difference
    of coefficients (which is in log or logit units)."""
    ends = fit.profile(f.name, n=2)
    a, b = (float(v) for v in ends["predicted"].iloc[:2])
    head = (f"Raising {spoken(f.name, f.unit)} {span_text(f, f.low, f.high)}"
            if f.is_continuous else
            f"Changing {spoken(f.name)} from {ends[f.name].iloc[0]} to {ends[f.name].iloc[1]}")
    said, kind = spoken(fit.response), fit.transform.kind
    span = f"from {readable(a, 3)} to {readable(b, 3)} {unit}".rstrip()
    nums.update(effect=b - a, ends=[a, b], scale=kind, ci_low=math.nan, ci_high=math.nan)
    if sig:
        verb = "raised" if b > a else "lowered"
        text = (f"{head} {verb} {said} {span} (the other factors at their middle; fitted "
                f"on the {kind} scale, {fmt_p(p)}).")
        return abs(b - a), Finding(text, fit.response, f.name, "effect", nums)
    text = (f"{head} made no detectable difference to {said} ({fmt_p(p)}, fitted on the "
            f"{kind} scale; {span} at the two ends).")
    return -1 / (1 + abs(b - a)), Finding(text, fit.response, f.name, "not_detected", nums)


def model_findings(fit, *, unit: str = "", detectable: Mapping[str, float] | None = None,
                   alpha: float | None = None) -> list[Finding]:
    """Sentences for every term of a fitted model, largest first.

    Parameters
    ----------
    fit : ModelFit
    unit : str
        Unit of the response (``"%"`` is said as "points").
    detectable : mapping, optional
        Smallest detectable effect per term (from the design evaluation), quoted beside
        effects that were not detected.
    alpha : float, optional
        Significance level (default the fit's).
    """
    alpha = fit.alpha if alpha is None else alpha
    detectable = dict(detectable or {})
    pvals = _anova_p(fit)
    factors = {f.name: f for f in fit.spec.used_factors}
    out: list[tuple[float, Finding]] = []
    quiet_inter: list[tuple[str, float]] = []
    quiet_curve: list[tuple[str, float]] = []
    resp = fit.response
    said = spoken(resp)
    unit = pretty_unit(unit)
    for term in fit.spec.terms:
        name = term.name
        if name == "block":
            continue
        p = pvals.get(name, math.nan)
        row = _effect_row(fit, name)
        if row is not None and term.order == 1 and term.power == 1 and \
                math.isfinite(float(row.p)):
            # quote the p-value of the same coefficient as the interval beside it (its
            # t-test); a type 2 F that ignores the square term could contradict the interval
            p = float(row.p)
        sig = math.isfinite(p) and p < alpha
        nums = {"p": p}
        if row is not None:
            nums.update(effect=float(row.effect), ci_low=float(row.ci_low),
                        ci_high=float(row.ci_high))
        if term.order == 1 and term.power == 1 and row is not None and \
                not fit.transform.is_raw:
            out.append(_transformed_effect(fit, factors[name], p, sig, unit, nums))
        elif term.order == 1 and term.power == 1 and row is not None:
            f = factors[name]
            eff, lo, hi = float(row.effect), float(row.ci_low), float(row.ci_high)
            dec = decimals_for((hi - lo) / 2)
            if f.is_continuous:
                # quote the change over the range the model was fitted on, never beyond
                seen = fit.natural[name].astype(float)
                lo_seen, hi_seen = float(seen.min()), float(seen.max())
                scale = (hi_seen - lo_seen) / (f.high - f.low) if f.high > f.low else 1.0
                eff, lo, hi = eff * scale, lo * scale, hi * scale
                dec = decimals_for((hi - lo) / 2)
                nums["fitted_range"] = [lo_seen, hi_seen]
                verb = "increased" if eff > 0 else "decreased"
                head = f"Raising {spoken(name, f.unit)} {span_text(f, lo_seen, hi_seen)}"
                change_sign = 1.0
            else:
                # sum coding: the column of the first level; effect = first - second
                first, second = f.levels[0], f.levels[1]
                eff, lo, hi = -eff, -hi, -lo
                verb = "increased" if eff > 0 else "decreased"
                head = f"Changing {spoken(name)} from {first} to {second}"
                change_sign = -1.0
            nums.update(effect=eff, ci_low=lo, ci_high=hi, sign=change_sign)
            ci = f"95 % CI {interval(lo, hi, dec)}"
            if sig:
                mag = f"95 % CI {interval(lo, hi, dec)}" if eff > 0 else \
                    f"95 % CI {interval(-hi, -lo, dec)}"
                text = (f"{head} {verb} {said} by {amount_text(eff, unit, dec)} "
                        f"({mag}; {fmt_p(p)}).")
                kind = "effect"
            else:
                text = (f"{head} made no detectable difference to {said} ({fmt_p(p)}; "
                        f"estimate {fmt(eff, dec)} {unit}, {ci}).".replace(" %,", " points,"))
                if name in detectable and np.isfinite(detectable[name]):
                    d = float(detectable[name])
                    nums["detectable"] = d
                    text = text[:-1] + (f"; the trial could detect an effect of about "
                                        f"{amount_text(d, unit, dec)}.")
                kind = "not_detected"
            out.append((abs(eff) if sig else -1 / (1 + abs(eff)), Finding(text, resp, name,
                                                                          kind, nums)))
        elif term.order >= 2 and term.power == 1:
            a, b = term.factors[0], term.factors[1]
            if sig:
                size = ""
                if row is not None:
                    dec = decimals_for((nums["ci_high"] - nums["ci_low"]) / 2)
                    size = f"; interaction effect {fmt(nums['effect'], dec)} {unit}".rstrip()
                text = (f"The effect of {spoken(a)} on {said} depends on {spoken(b)}" +
                        (" (and " + ", ".join(map(spoken, term.factors[2:])) + ")"
                         if len(term.factors) > 2 else "") + f" ({fmt_p(p)}{size}).")
                out.append((abs(nums.get("effect", 0.0)) + 1e-9, Finding(text, resp, name,
                                                                         "interaction", nums)))
            else:
                quiet_inter.append((name, p))
        elif term.power == 2:
            f = term.factors[0]
            est = fit.coded_coefficients.set_index("term").loc[name, "estimate"]
            nums["coefficient"] = float(est)
            if sig:
                text = _curvature_text(fit, f, float(est), fmt_p(p))
                out.append((abs(float(est)) * 2, Finding(text, resp, name, "curvature", nums)))
            else:
                quiet_curve.append((f, p))
    if quiet_inter:
        listed = "; ".join(f"{spoken(n)} ({fmt_p(p)})" for n, p in quiet_inter)
        out.append((-2.0, Finding(f"No interaction on {said} was detected: {listed}.", resp,
                                  ", ".join(n for n, _ in quiet_inter), "not_detected",
                                  {"p": [p for _, p in quiet_inter]})))
    if quiet_curve:
        listed = "; ".join(f"along {spoken(n)} ({fmt_p(p)})" for n, p in quiet_curve)
        out.append((-3.0, Finding(f"No curvature of {said} was detected {listed}.", resp,
                                  ", ".join(n for n, _ in quiet_curve), "not_detected",
                                  {"p": [p for _, p in quiet_curve]})))
    out.sort(key=lambda t: -t[0])
    findings = [f for _, f in out]
    if math.isfinite(fit.r_squared):
        pr = fit.pred_r_squared
        extra = (f", and predicts left-out baths with R² = {pr:.2f}"
                 if math.isfinite(pr) else "")
        findings.append(Finding(
            f"The model for {said} explains {100 * fit.r_squared:.1f} % of the variation between "
            f"{fit.n} baths (R² = {fit.r_squared:.2f}{extra}).", resp, "model", "model",
            {"r_squared": fit.r_squared, "pred_r_squared": pr, "n": fit.n}))
    return findings


def effects_findings(effects, *, unit: str = "") -> list[Finding]:
    """Sentences for a two-level effects analysis judged by Lenth's margin of error."""
    df = effects.summary
    me = effects.lenth.me
    sme = effects.lenth.sme
    unit = pretty_unit(unit)
    dec = decimals_for(me / 2)
    out = []
    for r in df.itertuples():
        nums = {"effect": float(r.effect), "p": float(r.p), "me": me, "sme": sme,
                "p_approximate": True}
        if r.significant:
            verb = "raised" if r.effect > 0 else "lowered"
            text = (f"Going from the low to the high level of {spoken(r.term)} {verb} "
                    f"{spoken(effects.response)} by {amount_text(r.effect, unit, dec)}, beyond "
                    f"Lenth's margin of error of {amount_text(me, unit, dec)} (simultaneous "
                    f"margin {amount_text(sme, unit, dec)}; approximate {fmt_p(r.p)}, from "
                    f"Lenth's pseudo standard error).")
            out.append(Finding(text, effects.response, r.term, "screening", nums))
    quiet = [r.term for r in df.itertuples() if not r.significant]
    if quiet:
        text = (f"Within Lenth's margin of error ({amount_text(me, unit, dec)}; simultaneous "
                f"margin {amount_text(sme, unit, dec)}), no effect on "
                f"{spoken(effects.response)} was detected for: "
                f"{', '.join(map(spoken, quiet))}.")
        out.append(Finding(text, effects.response, ", ".join(quiet), "not_detected",
                           {"me": me, "sme": sme}))
    return out


def _range_text(lo, hi) -> str:
    if lo is not None and hi is not None:
        return f"between {readable(lo)} and {readable(hi)}"
    return (f"at or above {readable(lo)}" if lo is not None
            else f"at or below {readable(hi)}")


def caveat_findings(fit, *, unit: str = "", reduced: bool = False, surface=None,
                    sweep=None, diagnostics=None, weak_below: float = 0.5) -> list[Finding]:
    """What a reader must know before acting on a model's numbers (issue 15).

    Sentences on the scale and physical range of the response, a weak model (predicted
    R² below ``weak_below``), p-values after model reduction, how many terms were tested
    with Holm-adjusted p-values, and a best point at the edge of the region.
    """
    resp = fit.response
    said = spoken(resp)
    out: list[Finding] = []
    lo, hi = fit.limits
    if not fit.transform.is_raw:
        out.append(Finding(
            f"{spoken_capitalised(resp)} is modelled on the {fit.scale}, so every "
            "prediction and interval stays inside its range.", resp, "scale", "model",
            {"physical_range": list(fit.limits), "scale": fit.transform.kind}))
    elif lo is not None or hi is not None:
        out.append(Finding(
            f"{spoken_capitalised(resp)} can only lie {_range_text(lo, hi)} "
            f"{pretty_unit(unit)}".rstrip() + ": the model is fitted on the raw scale and "
            "its predictions and intervals are cut to that range (flagged where cut).",
            resp, "scale", "model", {"physical_range": list(fit.limits)}))
    box = getattr(diagnostics, "box_cox", None)
    if box and box.get("chosen_scale_supported", box.get("raw_scale_supported")) is False:
        kind = box.get("chosen_scale", "raw")
        better = f"a {box['transform']}" if kind == "raw" else f"the {box['transform']}"
        hint = (' (scale = "log" in its [[response]])' if kind == "raw"
                and box["suggested"] == 0 else "")
        out.append(Finding(
            f"The Box–Cox check does not support the {kind} scale for {said} (power "
            f"{readable(box['lambda_hat'], 2)}, interval {readable(box['ci_low'], 2)} to "
            f"{readable(box['ci_high'], 2)}"
            f"); {better} scale would fit better{hint}.", resp, "scale", "model",
            {"box_cox": dict(box)}))
    pr = fit.pred_r_squared
    if math.isfinite(pr) and pr < weak_below:
        out.append(Finding(
            f"The model for {said} is weak: it predicts left-out baths with R² = {pr:.2f} "
            f"(below {readable(weak_below)}); do not let it decide on its own.", resp, "model",
            "model", {"pred_r_squared": pr, "weak": True}))
    pvals = {k: v for k, v in _anova_p(fit).items() if k != "block" and math.isfinite(v)}
    if len(pvals) > 1:
        from statsmodels.stats.multitest import multipletests

        names = list(pvals)
        holm = multipletests([pvals[n] for n in names], method="holm")[1]
        listed = "; ".join(f"{spoken(n)} {fmt_p(float(h)).removeprefix('p ')}"
                           for n, h in zip(names, holm, strict=True))
        out.append(Finding(
            f"{len(names)} terms were tested for {said}; Holm-adjusted p-values (for "
            f"testing them all at once): {listed}.", resp, "model", "multiplicity",
            {"n_tested": len(names), "p_holm": dict(zip(names, map(float, holm),
                                                        strict=True))}))
    if reduced:
        out.append(Finding(
            f"The p-values for {said} are from the reduced model, after terms were dropped "
            "on the same data: they are optimistic.", resp, "model", "model",
            {"reduced": True}))
    edge = []
    if surface is not None:
        edge = list(surface.optimum.get("on_boundary") or [])
    elif sweep is not None and sweep.to_dict()["sweep"]["at_edge"]:
        edge = [sweep.factor.name]
    if edge:
        out.append(Finding(
            f"The best point for {said} is at the edge of the region in "
            f"{', '.join(map(spoken, edge))}: "
            "the best may lie beyond; extend the range to find it.", resp,
            ", ".join(edge), "edge", {"at_edge": edge}))
    return out
