"""Key findings of one demo trial, read off its :class:`TrialAnalysis` (plain data).

The report renders the same analysis in full; these few numbers go into the demo's result
and its ``analysis.json`` so that a run can be checked and compared at a glance, and they
cannot disagree with the report because both read one object.
"""

from __future__ import annotations

from trialkit.analysis.trial_data import TWO_LEVEL_KINDS, TrialAnalysis


def _error_for(data: TrialAnalysis, name: str) -> str:
    said = [s.split(": ", 1)[-1] for s in data.notes.get("analysis", [])
            if s.startswith(f"{name}: ")]
    return said[0] if said else "not analysed"


def demo_findings(data: TrialAnalysis) -> dict:
    """Key findings per response with an aim of higher or lower (plain data).

    Sweeps: the best level, its Fieller interval and the lean level; two-level designs:
    the p-value of every factor in the trial's model and the factors significant at the
    trial's alpha; surfaces: the best point of the fitted surface (with its bootstrap
    interval when the analysis drew one).  A response that could not be analysed gets
    ``{"error": sentence}``.
    """
    trial = data.trial
    kind = trial.design.kind
    out: dict = {}
    for spec in trial.responses:
        if spec.aim not in ("higher", "lower"):
            continue
        name = spec.name
        res = data.results.get(name)
        if res is None:
            out[name] = {"error": _error_for(data, name)}
        elif res.sweep is not None:
            sw = res.sweep
            out[name] = {"factor": sw.factor.name, "best": float(sw.best),
                         "interval": [float(sw.fieller_low), float(sw.fieller_high)],
                         "lean_level": float(sw.lean_level)}
        elif name in data.split_plots:  # each factor tested on its own stratum
            tests = data.split_plots[name].tests.set_index("term")["p_value"]
            p = {f.name: float(tests[f.name]) for f in trial.factors if f.name in tests.index}
            out[name] = {"p_values": p, "active": [k for k, v in p.items() if v < res.fit.alpha],
                         "split_plot": True}
        elif kind in TWO_LEVEL_KINDS:
            table = res.fit.anova(res.anova_type).summary.set_index("term")["p"]
            p = {f.name: float(table[f.name]) for f in trial.factors if f.name in table.index}
            out[name] = {"p_values": p, "active": [k for k, v in p.items() if v < res.fit.alpha]}
        elif res.surface is not None:
            s = res.surface
            boot = s.bootstrap
            out[name] = {
                "optimum": {k: float(v) for k, v in s.optimum["settings"].items()},
                "kind": s.kind,
                "interval": ({} if boot is None else
                             {r.factor: [float(r.low), float(r.high)]
                              for r in boot.itertuples()})}
        else:
            out[name] = {"error": "no sweep, screening or surface model for this design"}
    return out
