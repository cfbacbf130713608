"""Build the report of a trial folder: :func:`build_report` -> :class:`Report`.

Sections (our own names): the trial in brief; how complete the readings are; what
matters; the models and how well they fit; the recommended recipe; how to confirm it;
safety cautions; how to reproduce this report.  A section whose inputs are missing says
plainly what is not available and why.
"""

from __future__ import annotations

import math
from pathlib import Path

import pandas as pd

from trialkit.analysis.trial_data import TrialAnalysis
from trialkit.numbers import (
    readable,
    readable_interval,
    readable_to_interval,
    spoken,
    spoken_capitalised,
)
from trialkit.report import figure_list as figs
from trialkit.report.answer import answer_blocks, settings_phrase
from trialkit.report.comparison_text import comparison_blocks
from trialkit.report.document import Block, Report, Section
from trialkit.report.findings import (
    caveat_findings,
    effects_findings,
    fmt_p,
    model_findings,
    pretty_unit,
)
from trialkit.report.quality import readings_blocks
from trialkit.report.reproduce import reproduce_blocks

SECTION_TITLES = {
    "answer": "The answer",
    "brief": "The trial in brief",
    "readings": "How complete the readings are",
    "matters": "What matters",
    "models": "The models and how well they fit",
    "recipe": "The recommended recipe",
    "confirm": "How to confirm it",
    "safety": "Safety cautions",
    "reproduce": "How to reproduce this report",
}
NOT_THE_LAST_WORD = ("This recommendation summarises a bench trial. It is not a substitute "
                     "for the safety data sheets of the ingredients, local regulations and "
                     "licensed practice, which take precedence.")


def build_report(data: TrialAnalysis) -> Report:
    """The report of an analysed trial (it renders; it computes nothing).

    Parameters
    ----------
    data : TrialAnalysis
        From :func:`trialkit.analyze` (``trialkit.analysis.trial_analysis.analyze``).

    Returns
    -------
    Report
        ``write(path)`` writes the self-contained HTML page.
    """
    findings = report_findings(data)
    sections = [
        Section("answer", SECTION_TITLES["answer"], answer_blocks(data, findings)),
        Section("brief", SECTION_TITLES["brief"], _brief(data)),
        Section("readings", SECTION_TITLES["readings"], readings_blocks(data)),
        Section("matters", SECTION_TITLES["matters"], _matters(data, findings)),
        Section("models", SECTION_TITLES["models"], _models(data), folded=True),
        Section("recipe", SECTION_TITLES["recipe"], _recipe(data)),
        Section("confirm", SECTION_TITLES["confirm"], _confirm(data)),
        Section("safety", SECTION_TITLES["safety"], safety_blocks(data)),
        Section("reproduce", SECTION_TITLES["reproduce"], reproduce_blocks(data)),
    ]
    trial = data.trial
    sub = f"Trial report · plan {data.plan.fingerprint} · seed {trial.seed}"
    payload = {"findings": [f.to_dict() for f in findings],
               "recommendation": data.recommendation_dict(),
               "confirmation": {k: v.to_dict() for k, v in data.confirmations.items()},
               "fingerprint": data.plan.fingerprint, "seed": trial.seed,
               "notes": {k: list(v) for k, v in data.notes.items()}}
    return Report(trial.title, sections, sub, payload)


def write_report(data: TrialAnalysis, out: str | Path, *,
                 markdown: str | Path | None = None) -> Path:
    """Render the report of ``data`` and write it to ``out`` (HTML) and ``markdown``."""
    return build_report(data).write(out, markdown=markdown)


# -- sections ---------------------------------------------------------------------------
def _notes(data: TrialAnalysis, *topics: str) -> list[Block]:
    """The analysis' notes on ``topics``, a leading response name as a sentence says it."""
    return [Block.note(_spoken_lead(t, data)) for topic in topics
            for t in data.notes.get(topic, [])]


def _spoken_lead(note: str, data: TrialAnalysis) -> str:
    """``"time_to_clean: no model ..."`` -> ``"Time to clean: no model ..."``."""
    name, sep, rest = note.partition(": ")
    if sep and name in data.specs:
        return f"{spoken_capitalised(name)}: {rest}"
    return note


def _levels(f) -> str:
    if f.is_continuous:
        extra = f" (levels {', '.join(readable(v) for v in f.levels)})" if f.levels else ""
        return f"{readable(f.low)} to {readable(f.high)} {pretty_unit(f.unit)}".rstrip() + extra
    return ", ".join(map(str, f.levels))


def _brief(data: TrialAnalysis) -> list[Block]:
    t, p = data.trial, data.plan
    lay = t.layout
    baths = p.baths
    counts = baths["point"].value_counts()
    pairs = [("Question", t.question or "not stated in the trial file"),
             ("Design", f"{t.design.kind}" + (f", resolution {p.design.resolution}"
                                             if getattr(p.design, "resolution", None) else "")),
             ("Baths", f"{len(baths)} (" + ", ".join(f"{n} {k}" for k, n in counts.items())
              + f") in {lay.blocks} block(s), {lay.replicates} replicate(s)"),
             ("Coupons per bath", f"{lay.coupons_per_bath} rusted, {lay.witness_coupons} "
                                  "bare witness"),
             ("Seed", str(t.seed)), ("Plan fingerprint", p.fingerprint)]
    if t.coupons is not None:
        pairs.insert(4, ("Coupons", f"{t.coupons.shape} of {t.coupons.metal}"))
    blocks = [Block.pairs(pairs)]
    if t.notes:
        blocks.append(Block.para(f"Notes: {t.notes}"))
    ftab = pd.DataFrame([{"factor": f.name, "kind": f.kind, "unit": pretty_unit(f.unit),
                          "levels": _levels(f)} for f in t.factors])
    blocks.append(Block.frame(ftab, "Factors and their levels"))
    if t.responses:
        rtab = pd.DataFrame([{"response": r.name, "unit": pretty_unit(data.unit(r.name)),
                              "aim": r.aim, "computed as": r.measure or r.name}
                             for r in t.responses])
        blocks.append(Block.frame(rtab, "Responses"))
    return blocks + _notes(data, "plan")


def report_findings(data: TrialAnalysis) -> list:
    """Every finding the report tells, response by response (censored times first)."""
    from trialkit.analysis.censored_times import uses_censored_model
    from trialkit.report.censored_text import censored_findings

    out = []
    for name, censoring in data.censoring.items():
        out += censored_findings(name, censoring, data.censored_fits.get(name),
                                 data.trial.factors)
    for name, fit in data.fits.items():
        unit = data.unit(name)
        censored = uses_censored_model(data, name)
        if censored:
            # the censored model speaks for the time; the linear one saw only the finished
            out += [f for f in model_findings(fit, unit=unit) if f.kind == "model"]
        elif name in data.split_plots:
            # effects judged on their own stratum; the bath-level fit gives only its R²
            from trialkit.report.split_plot_text import split_plot_findings

            out += split_plot_findings(data.split_plots[name], data.trial.factors,
                                       unit=unit, alpha=fit.alpha)
            out += [f for f in model_findings(fit, unit=unit) if f.kind == "model"]
        elif fit.df_resid > 0:
            out += model_findings(fit, unit=unit, detectable=data.detectable.get(name))
        elif name in data.effects:
            out += effects_findings(data.effects[name], unit=unit)
        res = data.results.get(name)
        out += caveat_findings(fit, unit=unit, reduced=getattr(res, "reduction", None)
                               is not None, surface=data.surfaces.get(name),
                               sweep=None if censored else data.sweeps.get(name),
                               diagnostics=getattr(res, "diagnostics", None))
        sw = None if censored else data.sweeps.get(name)  # the sweep saw only the finished
        if sw is not None:
            from trialkit.report.findings import Finding

            f = sw.factor
            best, f_low, f_high = readable_interval(sw.best, sw.fieller_low, sw.fieller_high)
            interval = (f"Fieller 95 % interval {f_low} to {f_high} "
                        f"{f.unit}" if sw.fieller_bounded else "its interval is unbounded")
            if not sw.fieller_bounded:
                best = readable(sw.best, 3)
            text = (f"{spoken_capitalised(name)} is best at "
                    f"{_at(f, best)} "
                    f"({interval}); the practical lean level, the lowest level within "
                    f"{_size(sw.tolerance, unit)} of the best, is "
                    f"{readable(sw.lean_level, 3)} {f.unit} (a rule applied to the fitted curve, "
                    f"so it has no interval of its own)."
                    + (f" Above the best level {spoken(name)} gets worse again: "
                       f"{_size(sw.drop_at_high, unit)} "
                       f"{'higher' if sw.aim == 'lower' else 'lower'} at the top of the "
                       "range than at the best." if sw.falls_off else ""))
            out.append(Finding(text, name, f.name, "sweep",
                               {"best": sw.best, "lean_level": sw.lean_level,
                                "fieller_low": sw.fieller_low,
                                "fieller_high": sw.fieller_high}))
    if data.kinetics:
        from trialkit.report.findings import Finding

        t90 = {b: f.time_to_90_h for b, f in data.kinetics.items()}
        done = {b: v for b, v in t90.items() if math.isfinite(v)}
        if done:
            fast = min(done, key=done.get)
            text = (f"Bath {fast} reached 90 % removal fastest, in {readable(done[fast], 3)} h; "
                    f"{len(done)} of {len(t90)} baths reached 90 % within their readings.")
            out.append(Finding(text, "time_to_90", fast, "kinetics", {"t90": done[fast]}))
    return out


def _lack_of_fit_text(name: str, lf: dict) -> str:
    """The lack-of-fit sentence, or why the test cannot be made."""
    if lf["F"] == lf["F"]:
        return (f"Lack of fit against pure error for {name}: F = {readable(lf['F'], 3)}, "
                f"{fmt_p(lf['p'])}.")
    if lf["lack_of_fit_df"] <= 0:
        return (f"Lack of fit for {name} is not tested: the model has as many terms as "
                "there are distinct settings.")
    return (f"Lack of fit for {name} is not tested: the baths at the same settings agree "
            "exactly (no pure error), as for a value worked out rather than measured.")


def _at(factor, value_text: str) -> str:
    """``chelator 4.6 % w/v`` or ``pH 6.2``: a factor at a value already written."""
    if factor.unit == "pH":
        return f"pH {value_text}"
    return f"{spoken(factor.name)} {value_text} {pretty_unit(factor.unit)}".rstrip()


def _size(x: float, unit: str) -> str:
    size = readable(x, 3)
    return f"{size} points" if unit == "%" else f"{size} {pretty_unit(unit)}".rstrip()


def _matters(data: TrialAnalysis, findings) -> list[Block]:
    if not data.fits:
        why = "no responses to analyse yet" if data.baths is None else \
            "no model could be fitted to the responses"
        return [Block.note(why)] + _notes(data, "analysis")
    blocks = []
    for name in data.fits:
        said = [f.text for f in findings if f.response == name]
        unit = pretty_unit(data.unit(name)) or "no unit"
        if said:
            blocks.append(Block.bullets(said, f"{spoken_capitalised(name)} ({unit})"))
        if name in data.effects and data.fits[name].df_resid > 0:
            lenth = effects_findings(data.effects[name], unit=data.unit(name))
            blocks.append(Block.bullets(
                [f.text for f in lenth], f"{spoken_capitalised(name)}: the two-level effects "
                "judged by Lenth's "
                "method (no model needed; useful when the model has few residual degrees "
                "of freedom)"))
        blocks += comparison_blocks(data, name)
        blocks += figs.effect_figures(data, name)
    other = [f.text for f in findings if f.response not in data.fits]
    if other:
        blocks.append(Block.bullets(other, "Removal over time"))
    blocks += figs.kinetics_figure(data)
    return blocks + _notes(data, "analysis", "kinetics")


def _models(data: TrialAnalysis) -> list[Block]:
    if not data.fits:
        return [Block.note("no model was fitted (see above)")]
    blocks = []
    for name, fit in data.fits.items():
        an = fit.anova(2)
        blocks.append(Block.para(
            f"{fit.equation()} (factors in coded units, low -1 to high +1): "
            f"{fit.n} baths, R² = {fit.r_squared:.3f}, "
            f"adjusted R² = {fit.adj_r_squared:.3f}, predicted R² = {fit.pred_r_squared:.3f}, "
            f"residual degrees of freedom {fit.df_resid}, test: {an.test}."))
        blocks.append(Block.frame(an.summary, f"Analysis of variance for {name} (type II)"))
        coef = fit.coefficients[["term", "estimate", "std_error", "ci_low", "ci_high", "p"]]
        blocks.append(Block.frame(coef, f"Coefficients for {name} in the factors' own units"))
        if an.lack_of_fit:
            lf = an.lack_of_fit
            blocks.append(Block.para(_lack_of_fit_text(name, lf)))
        blocks += _diagnostic_text(data, name)
        if fit.df_resid > 0:
            blocks += figs.model_figures(data, name)
        else:
            blocks.append(Block.note(f"{name}: the model uses every bath (no residual "
                                     "degrees of freedom), so residual checks are not possible"))
    return blocks


def _diagnostic_text(data: TrialAnalysis, name: str) -> list[Block]:
    res = data.results.get(name)
    out = []
    red = getattr(res, "reduction", None)
    if red is not None and getattr(red, "steps", None) is not None:
        steps = red.steps
        rows = steps.to_dict("records") if hasattr(steps, "to_dict") else list(steps)
        if rows:
            out.append(Block.frame(pd.DataFrame(rows), f"Model reduction steps for {name}"))
    d = getattr(res, "diagnostics", None)
    if d is None:
        return out
    said = []
    p = d.normality.get("p")
    if p is not None and math.isfinite(p):
        said.append(f"Shapiro–Wilk test of normal residuals: {fmt_p(p)}"
                    + (" (the residuals do not look normal)." if p < 0.05 else "."))
    if d.drift and math.isfinite(d.drift.get("p", math.nan)):
        said.append(f"Trend of residuals with run order: Spearman ρ = {d.drift['rho']:.2f}, "
                    f"{fmt_p(d.drift['p'])}"
                    + (" (drift between runs or days)." if d.drift["p"] < 0.05 else "."))
    flagged = d.table[d.table.flagged]
    if len(flagged):
        said.append("Baths to look at: " + ", ".join(
            f"{r.bath} ({r.reason.replace(',', ', ').replace('_', ' ')})"
            for r in flagged.itertuples()) + ".")
    if d.box_cox and d.box_cox.get("recommended"):
        said.append(f"The residual spread grows with the mean; a {d.box_cox['transform']} "
                    f"transform of {name} (Box–Cox power "
                    f"{readable(d.box_cox['suggested'])}) may fit better.")
    if said:
        out.append(Block.bullets(said, f"Checks of the model for {name}"))
    return out


def _recipe(data: TrialAnalysis) -> list[Block]:
    rec = data.recommendation
    if rec is None:
        return [Block.note("no recommendation: no response has been analysed yet")] + \
            _notes(data, "recipe")
    settings = settings_phrase(rec["settings"], data.trial)
    blocks = [Block.para(f"Recommended settings: {settings}. Chosen as the {rec['source']}.")]
    if rec.get("reasons"):
        blocks.append(Block.bullets(list(rec["reasons"]), "Why these settings, and what to "
                                                          "watch"))
    pred = rec["predictions"][["response", "unit", "predicted", "ci_low", "ci_high", "pi_low",
                               "pi_high"]].assign(unit=lambda d: d.unit.map(pretty_unit))
    blocks.append(Block.frame(pred, "Predicted responses at the recommended settings (95 % "
                                    "confidence interval of the mean, prediction interval "
                                    "of one new bath)"))
    blocks += figs.desirability_figure(data)
    r = data.recipe
    if r is not None:
        lines = pd.DataFrame([{"ingredient": ln.name, "grams": ln.grams,
                               "millilitres": ln.millilitres, "role": ln.role,
                               "basis": ln.basis} for ln in r.lines])
        blocks.append(Block.frame(lines, f"To mix {readable(r.volume_l)} L at "
                                         f"{readable(r.temperature_c)} °C "
                                         f"(predicted pH {r.predicted_ph:.2f})"))
        c = r.cost
        if c.per_l is not None:
            blocks.append(Block.pairs([
                ("Cost per litre", f"{readable(c.per_l, 3)} {c.currency or ''}".strip()),
                ("Cost per US gallon",
                 f"{readable(c.per_us_gal, 3)} {c.currency or ''}".strip())]))
        else:
            blocks.append(Block.note("cost: prices missing for "
                                     + ", ".join(c.missing_prices or ("some ingredients",))))
        if r.steps:
            blocks.append(Block.bullets(r.steps, "How to mix it"))
    return blocks + _notes(data, "recipe")


def _confirm(data: TrialAnalysis) -> list[Block]:
    rec = data.recommendation
    if rec is None:
        return [Block.note("nothing to confirm until a recipe is recommended")]
    lay = data.trial.layout
    n = 3
    pred = rec["predictions"]
    numbers = ["predicted", "pi_low", "pi_high", "pi3_low", "pi3_high"]
    tab = pred[["response", "unit"] + numbers].assign(unit=lambda d: d.unit.map(pretty_unit))
    # every number of a row to the digits of its narrower (mean-of-n) interval
    tab[numbers] = [readable_to_interval(row, row[3], row[4])
                    for row in pred[numbers].itertuples(index=False)]
    tab = tab.rename(columns={"pi_low": "one bath: low", "pi_high": "one bath: high",
                              "pi3_low": f"mean of {n}: low", "pi3_high": f"mean of {n}: high"})
    blocks = []
    if data.confirmations:
        rows = []
        for name, c in data.confirmations.items():
            m = c.mean
            observed, predicted, low, high = readable_to_interval(
                [m["observed"], m["predicted"], m["pi_low"], m["pi_high"]], m["pi_low"],
                m["pi_high"])
            rows.append({"response": name, "baths": m["n"], "observed mean": observed,
                         "predicted": predicted, "interval low": low,
                         "interval high": high,
                         "baths inside": f"{int(c.table.inside.sum())} of {len(c.table)}",
                         "confirmed": "yes" if c.all_inside else "no"})
        settings = settings_phrase(next(iter(data.confirmations.values())).settings,
                                   data.trial)
        ok = [n for n, c in data.confirmations.items() if c.all_inside]
        bad = [n for n, c in data.confirmations.items() if not c.all_inside]
        text = f"Confirmation baths were run at {settings}. "
        text += (f"Inside the prediction intervals: {', '.join(ok)}. " if ok else "")
        text += (f"Outside: {', '.join(bad)} — the model does not hold there; look again "
                 "before adopting the recipe." if bad else "The model holds there.")
        text += f" Each response is {next(iter(data.confirmations.values())).rule}."
        blocks += [Block.para(text), Block.frame(pd.DataFrame(rows),
                   "Confirmation baths against the 95 % prediction interval of their mean")]
    return blocks + _notes(data, "confirm") + [Block.para(
        f"Mix {n} fresh baths at the recommended settings, each with {lay.coupons_per_bath} "
        f"rusted coupon(s) and {lay.witness_coupons} witness coupon(s) prepared as in this "
        "trial, in one new block, next to one bath of the current recipe for comparison. The "
        "recommendation is confirmed when each bath's result lies inside the one-bath "
        f"interval and the mean of the {n} inside the mean-of-{n} interval below."),
        Block.frame(tab, "Where the confirmation baths should land (95 % prediction "
                         "intervals)")]


def safety_blocks(data: TrialAnalysis) -> list[Block]:
    """The cautions of the recommended recipe (general ones when there is none)."""
    from trialkit.chemistry.cautions import cautions_for

    if data.recipe is not None:
        lead = ("For the recommended recipe (the mixing sheet lists the cautions of every "
                "bath of the trial, the reference bath included):")
        items = list(data.recipe.cautions)
    else:
        lead = ("No recipe was worked out, so these are the general cautions; the mixing "
                "sheet ('trialkit recipe') gives those of each bath's ingredients.")
        items = cautions_for([])
    return [Block.para(lead), Block.bullets(items), Block.para(NOT_THE_LAST_WORD)]
