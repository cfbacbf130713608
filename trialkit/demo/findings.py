"""Key findings of one demo trial: :func:`analyse_demo_trial` (plain data for the result).

The report does the full analysis; these few numbers go into the demo's result and its
``analysis.json`` so that a run can be checked and compared at a glance.
"""

from __future__ import annotations

from typing import Any

import pandas as pd

from trialkit.exceptions import TrialkitError

TWO_LEVEL_KINDS = ("full-factorial", "fractional-factorial", "plackett-burman")
#: Alpha of the demo's significance statements.
ALPHA = 0.05


def _message(exc: BaseException) -> str:
    text = str(exc).strip()
    return text.splitlines()[0] if text else type(exc).__name__


def _bath_table(plan: Any, responses: Any) -> pd.DataFrame:
    table = plan.baths.copy()
    table["bath"] = table["bath"].astype(str)
    for spec in plan.trial.responses:
        try:
            values = responses.bath_values(spec.measure or spec.name)
        except TrialkitError:
            continue
        table[spec.name] = table["bath"].map(values.to_dict())
    return table[~table["point"].isin(["control", "reference"])].reset_index(drop=True)


def analyse_demo_trial(plan: Any, responses: Any, *, alpha: float = ALPHA,
                       n_boot: int = 400) -> dict:
    """Key findings per response of a demo trial (plain data).

    Sweeps: the best level and its Fieller interval; two-level designs: the factors whose
    main effect is significant at ``alpha`` (main-effects model); surfaces: the best point
    of the quadratic surface and its bootstrap interval.  A response that cannot be
    analysed gets ``{"error": sentence}``.
    """
    from trialkit.analysis.model import fit_model
    from trialkit.analysis.pipeline import analyze_table

    trial = plan.trial
    table = _bath_table(plan, responses)
    kind = trial.design.kind
    cont = [f for f in trial.factors if f.is_continuous]
    out: dict = {}
    for spec in trial.responses:
        if spec.aim not in ("higher", "lower") or spec.name not in table:
            continue
        if table[spec.name].notna().sum() < 3:
            out[spec.name] = {"error": "fewer than three baths have a value"}
            continue
        try:
            if kind == "sweep":
                res = analyze_table(table, spec.name, trial.factors, sweep=cont[0].name,
                                    aim=spec.aim, alpha=alpha, n_boot=0,
                                    seed=int(trial.seed or 0))
                sw = res.sweep
                out[spec.name] = {"factor": sw.factor.name, "best": float(sw.best),
                                  "interval": [float(sw.fieller_low), float(sw.fieller_high)],
                                  "lean_level": float(sw.lean_level)}
            elif kind in TWO_LEVEL_KINDS:
                fit = fit_model(table, spec.name, trial.factors, "main", alpha=alpha)
                p = fit.anova(2).summary.set_index("term")["p"]
                p = p[[f.name for f in trial.factors if f.name in p.index]]
                out[spec.name] = {"p_values": {k: float(v) for k, v in p.items()},
                                  "active": [k for k, v in p.items() if v < alpha]}
            else:
                res = analyze_table(table, spec.name, trial.factors, model="quadratic",
                                    aim=spec.aim, alpha=alpha, n_boot=n_boot,
                                    seed=int(trial.seed or 0))
                if res.surface is None:
                    out[spec.name] = {"error": "no second-order surface could be fitted"}
                    continue
                s = res.surface
                boot = s.bootstrap
                out[spec.name] = {
                    "optimum": {k: float(v) for k, v in s.optimum["settings"].items()},
                    "kind": s.kind,
                    "interval": ({} if boot is None else
                                 {r.factor: [float(r.low), float(r.high)]
                                  for r in boot.itertuples()})}
        except TrialkitError as exc:
            out[spec.name] = {"error": _message(exc)}
    return out
