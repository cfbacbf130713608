"""Hierarchical backward model reduction, every step reported.

At each step the candidates are the terms no other remaining term depends on (an
interaction keeps its main effects; a square keeps its factor's main effect; blocks are
never dropped).  With ``criterion="p"`` the candidate with the largest type 3 p-value
is removed while that p-value exceeds ``threshold``; with ``"aic"`` or ``"bic"`` the
candidate whose removal lowers the criterion most is removed while it lowers it.

Examples
--------
>>> import numpy as np, pandas as pd
>>> from trialkit.trial.factors import Factor
>>> from trialkit.analysis.model import fit_model
>>> rng = np.random.default_rng(1)
>>> df = pd.DataFrame({"a": np.tile([-1.0, 1.0], 8), "b": np.repeat([-1.0, 1.0], 8)})
>>> df["y"] = 5 + 2 * df.a + rng.normal(0, 0.1, 16)
>>> fs = [Factor.continuous("a", -1, 1), Factor.continuous("b", -1, 1)]
>>> r = reduce_model(fit_model(df, "y", fs, "interactions", block=None))
>>> r.final.spec.to_text()
'a'
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from trialkit.analysis.model import BLOCK, ModelFit, fit_model
from trialkit.exceptions import AnalysisError

CRITERIA = ("p", "aic", "bic")


def information(fit: ModelFit) -> tuple[float, float]:
    """Gaussian AIC and BIC (constants dropped: n log(RSS/n) + penalty)."""
    n, p = fit.n, fit.mm.X.shape[1]
    rss = max(fit.ls.rss, np.finfo(float).tiny)
    base = n * np.log(rss / n)
    return float(base + 2 * p), float(base + np.log(n) * p)


@dataclass
class ReductionResult:
    """Steps of a model reduction.

    Attributes
    ----------
    steps : DataFrame
        step, removed, p, aic, bic, model (text after the step); step 0 is the start.
    final : ModelFit
    criterion : str
    threshold : float
    """

    steps: pd.DataFrame
    final: ModelFit
    criterion: str
    threshold: float

    @property
    def summary(self) -> pd.DataFrame:
        return self.steps

    def to_dict(self) -> dict:
        rows = self.steps.replace({np.nan: None}).to_dict("records")
        return {"criterion": self.criterion, "threshold": self.threshold,
                "steps": rows, "final_model": self.final.spec.to_text()}

    def __repr__(self) -> str:
        return f"ReductionResult({self.criterion}: {self.final.spec.to_text()!r})\n" + \
            self.steps.to_string(index=False)

    def _repr_html_(self) -> str:
        return self.steps.to_html(index=False)


def _refit(fit: ModelFit, spec) -> ModelFit:
    return fit_model(fit.natural, fit.response, spec.factors, spec, block=None,
                     alpha=fit.alpha, coding=fit.mm.coding, limits=fit.limits,
                     scale=fit.transform.kind)


def reduce_model(fit: ModelFit, *, criterion: str = "p", threshold: float = 0.05
                 ) -> ReductionResult:
    """Backward elimination that keeps the model hierarchical (see module docstring)."""
    if criterion not in CRITERIA:
        raise AnalysisError(f"criterion must be one of {CRITERIA}, got {criterion!r}")
    if criterion == "p" and not 0 < threshold < 1:
        raise AnalysisError(f"threshold must be between 0 and 1, got {threshold!r}")
    current = fit
    aic, bic = information(current)
    steps = [{"step": 0, "removed": None, "p": np.nan, "aic": aic, "bic": bic,
              "model": current.spec.to_text()}]
    while True:
        terms = current.spec.terms
        needed = {p for t in terms for p in t.parents()}
        cands = [t for t in terms if t not in needed and t.name != BLOCK]
        if not cands or (current.df_resid <= 0 and criterion == "p"):
            break
        if len([t for t in terms if t.name != BLOCK]) == 1:
            break  # keep at least one term
        if criterion == "p":
            table = current.anova(3).summary.set_index("term")
            pv = {t.name: float(table.loc[t.name, "p"]) for t in cands}
            worst = max(pv, key=pv.get)
            if not pv[worst] > threshold:
                break
            nxt = _refit(current, current.spec.without(worst))
            aic, bic = information(nxt)
            steps.append({"step": len(steps), "removed": worst, "p": pv[worst], "aic": aic,
                          "bic": bic, "model": nxt.spec.to_text()})
            current = nxt
        else:
            col = 0 if criterion == "aic" else 1
            now = information(current)[col]
            trials = []
            for t in cands:
                nxt = _refit(current, current.spec.without(t))
                trials.append((information(nxt)[col], t.name, nxt))
            if not trials:
                break
            val, name, nxt = min(trials, key=lambda r: r[0])
            if not val < now:
                break
            aic, bic = information(nxt)
            p = float(current.anova(3).summary.set_index("term").loc[name, "p"]) \
                if current.df_resid > 0 else np.nan
            steps.append({"step": len(steps), "removed": name, "p": p, "aic": aic, "bic": bic,
                          "model": nxt.spec.to_text()})
            current = nxt
    return ReductionResult(pd.DataFrame(steps), current, criterion, threshold)
