"""Several candidate plans side by side: baths, coupons, power per term, efficiencies,
aliasing, variance inflation and the variance profiles.

Examples
--------
>>> from trialkit.planning.plan import make_plan
>>> from trialkit.trial.file import parse_trial_text
>>> text = '''
... [trial]
... title = "{title}"
... seed = 3
... [[factor]]
... name = "chelator"
... unit = "% w/v"
... low = 2
... high = 10
... [[factor]]
... name = "ph"
... low = 5
... high = 8
... [design]
... kind = "full-factorial"
... [layout]
... replicates = {reps}
... '''
>>> plans = [make_plan(parse_trial_text(text.format(title=f"{r} replicates", reps=r)))
...          for r in (2, 3)]
>>> cmp = compare_plans(plans, sd=1.0, effects=2.0)
>>> cmp.summary[["plan", "baths", "power_chelator"]].round(3).values.tolist()
[['2 replicates', 8, 0.623], ['3 replicates', 12, 0.868]]
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import pandas as pd

from trialkit.exceptions import PlanError
from trialkit.numbers import readable_frame, readable_table
from trialkit.planning.evaluation import Evaluation, evaluate_plan, plain


@dataclass
class Comparison:
    """Several candidate plans side by side.

    Attributes
    ----------
    summary : pandas.DataFrame
        One row per plan: ``plan``, ``baths``, ``coupons``, ``blocks``, ``residual_df``,
        ``d_efficiency``, ``i_efficiency``, ``max_vif``, ``resolution``, ``aliased``
        (number of alias rows), then ``power_<term>`` for every term of any plan.
    variance_profile : pandas.DataFrame
        Long form ``plan``, ``share_of_region``, ``variance`` (one curve a plan, for a plot).
    evaluations : list of Evaluation
    """

    summary: pd.DataFrame
    variance_profile: pd.DataFrame
    evaluations: list[Evaluation]

    def to_dict(self) -> dict:
        return plain({"plans": self.summary.to_dict("records"),
                      "variance_profile": self.variance_profile.to_dict("list")})

    def __repr__(self) -> str:
        return "Comparison\n" + readable_table(self.summary, 3)

    def _repr_html_(self) -> str:
        return ("<p><b>Comparison of plans</b></p>"
                + readable_frame(self.summary, 3).to_html(index=False))


def compare_plans(plans: Sequence, *, names: Sequence[str] | None = None, **kwargs
                  ) -> Comparison:
    """Evaluate each plan with the same settings (``kwargs`` of :func:`evaluate_plan`)
    and tabulate them; ``names`` default to the trial titles."""
    plans = list(plans)
    if not plans:
        raise PlanError("compare_plans needs at least one plan")
    if names is None:
        names = [getattr(getattr(p, "trial", None), "title", None) or f"plan {i}"
                 for i, p in enumerate(plans, 1)]
    if len(names) != len(plans):
        raise PlanError(f"got {len(names)} names for {len(plans)} plans")
    evals = [evaluate_plan(p, **kwargs) for p in plans]
    rows, curves = [], []
    for name, ev in zip(names, evals, strict=True):
        row = {"plan": name, "baths": ev.baths, "coupons": ev.coupons, "blocks": ev.blocks,
               "residual_df": ev.residual_df, "d_efficiency": ev.d_efficiency,
               "i_efficiency": ev.i_efficiency, "max_vif": ev.max_vif,
               "resolution": ev.resolution, "aliased": len(ev.aliases),
               "effects": ev.effect_source}
        row.update({f"power_{r.term}": r.power for r in ev.summary.itertuples()})
        row.update({f"detectable_{r.term}": r.detectable_effect
                    for r in ev.summary.itertuples()})
        rows.append(row)
        curves.append(ev.variance_profile.assign(plan=name)[["plan", "share_of_region",
                                                              "variance"]])
    return Comparison(pd.DataFrame(rows), pd.concat(curves, ignore_index=True), evals)
