"""The first section of the report: the answer, for the person at the bench.

What to mix (the recommended settings and the amounts for one bath), what matters (three
to five sentences, the main response first), how sure (the predicted interval and one word
for the strength of the evidence) and the next step (confirmation baths, or a follow-up
trial when the best lies at the edge of the region).  Written from the numbers of a
:class:`~trialkit.analysis.trial_data.TrialAnalysis`; nothing is computed here but words.
"""

from __future__ import annotations

from trialkit.analysis.trial_data import TWO_LEVEL_KINDS, TrialAnalysis
from trialkit.numbers import readable, readable_interval, settings_text, spoken
from trialkit.report.document import Block
from trialkit.report.findings import pretty_unit

#: Kinds of findings that say what matters, in the order they are told.
TELLING = ("sweep", "effect", "screening", "curvature", "interaction", "split_plot",
           "censoring")
MAX_SENTENCES = 5


def strength(data: TrialAnalysis, response: str) -> tuple[str, str]:
    """One word for the strength of the evidence behind ``response``'s model, and why.

    ``strong``: the model predicts left-out baths well (predicted R² at least 0.7);
    ``moderate``: at least 0.5; ``weak``: below 0.5 (the model should not drive a
    decision on its own).
    """
    fit = data.fits.get(response)
    if fit is None or not fit.df_resid > 0:
        return "untested", "the model has no residual degrees of freedom to judge it by"
    q = fit.pred_r_squared
    word = "strong" if q >= 0.7 else "moderate" if q >= 0.5 else "weak"
    return word, f"the model predicts left-out baths with R² = {q:.2f}"


def settings_phrase(settings: dict, trial) -> str:
    """Factor settings in words, each with its factor's unit
    (:func:`trialkit.numbers.settings_text`)."""
    return settings_text(settings, {f.name: f.unit for f in trial.factors})


def _at_edge(data: TrialAnalysis) -> list[str]:
    """Continuous factors whose recommended setting lies at the low or high end."""
    rec = data.recommendation or {}
    out = []
    for f in data.trial.factors:
        v = rec.get("settings", {}).get(f.name)
        if f.is_continuous and isinstance(v, float):
            span = f.high - f.low
            if min(abs(v - f.low), abs(v - f.high)) <= 0.02 * span:
                end = "low" if abs(v - f.low) < abs(v - f.high) else "high"
                out.append(f"{spoken(f.name, f.unit)} ({end} end)")
    return out


def answer_blocks(data: TrialAnalysis, findings) -> list[Block]:
    """The blocks of the answer section (a note when there is no recommendation yet)."""
    rec = data.recommendation
    if rec is None:
        return [Block.note("no recommendation yet: no response has been analysed (see "
                           "'How complete the readings are')")]
    primary = rec.get("primary") or next(iter(data.fits))
    blocks = [Block.para(f"Recommended: {settings_phrase(rec['settings'], data.trial)}.")]
    r = data.recipe
    if r is not None:
        amounts = "; ".join(f"{readable(ln.grams, 3)} g {ln.name}" for ln in r.lines)
        blocks.append(Block.para(f"To mix one bath of {readable(r.volume_l)} L: {amounts}; make up "
                                 f"to volume with water (predicted pH {r.predicted_ph:.2f}). "
                                 "Read the safety cautions before mixing; the full steps are under "
                                 "'The recommended recipe'."))
    wanted = {n for n, s in data.specs.items() if s.is_wanted}
    said = [f.text for f in findings if f.response == primary and f.kind in TELLING]
    said += [f.text for f in findings if f.response != primary and f.kind in TELLING
             and f.response in wanted]
    if said:
        blocks.append(Block.bullets(said[:MAX_SENTENCES], "What matters"))
    why = list(rec.get("reasons") or [])[:2] or (
        [rec["source"][:1].upper() + rec["source"][1:] + "."] if rec.get("source") else [])
    if why:  # the reasons, else how the settings were chosen (e.g. the compromise)
        blocks.append(Block.bullets(why, "Why these settings"))
    pred = rec["predictions"].set_index("response")
    if primary in pred.index:
        p = pred.loc[primary]
        unit = pretty_unit(p["unit"])
        word, why = strength(data, primary)
        est, ci_low, ci_high = readable_interval(p["predicted"], p["ci_low"], p["ci_high"])
        _, pi_low, pi_high = readable_interval(p["predicted"], p["pi_low"], p["pi_high"])
        blocks.append(Block.para(
            f"How sure: {spoken(primary)} is predicted {est} {unit} at these settings "
            f"(95 % confidence interval of the mean {ci_low} to {ci_high} "
            f"{unit}; a single new bath {pi_low} to {pi_high} {unit}). "
            f"Evidence: {word} ({why})."))
    edge = _at_edge(data)
    if data.trial.design.kind in TWO_LEVEL_KINDS:
        step = ("Next step: a screen tests only the ends of each range, so its best setting "
                "is a corner. Follow it with a response-surface trial over the factors that "
                "matter, centred near these settings, before settling on a recipe; or mix "
                "three confirmation baths here if this corner will do.")
    elif edge:
        step = (f"Next step: the best lies at the edge of the trial's region for "
                f"{', '.join(edge)}; the best may lie beyond it. Plan a follow-up trial that "
                "extends the range there before settling on a recipe.")
    else:
        step = ("Next step: mix three confirmation baths at these settings and check that "
                "they fall within the intervals above (see 'How to confirm it').")
    blocks.append(Block.para(step))
    return blocks
