"""Design evaluation of design points: power per model term, efficiencies, variance profile.

:func:`evaluate_design` computes, from the plan's own model matrix (blocks as fixed
effects, centre points, categorical factors in sum contrasts), the power of the F test
of every model term for a residual standard deviation ``sd`` between baths and an effect
size per term (the change in mean response from a factor's low to its high level; see
:mod:`trialkit.planning.power` for interactions, squared terms and factors with several levels),
the smallest effect detectable at a target power, how many replicates of the whole plan
reach it, the D- and I-efficiency, the largest variance inflation factor and the
variance profile: the share of the region predicted within each prediction variance
(published as the fraction-of-design-space curve; Zahran, Anderson-Cook & Myers 2003,
from memory).
:func:`trialkit.planning.comparison.compare_plans` puts several candidate plans side by side.

The experimental unit is the bath: ``sd`` is the standard deviation of a bath's response
(the mean over its rusted coupons), and control and reference baths, which lie outside
the factor space, are left out.

Examples
--------
>>> import pandas as pd
>>> from trialkit.trial.factors import Factor
>>> fs = (Factor.continuous("chelator", 2, 10, unit="% w/v"),
...       Factor.continuous("ph", 5, 8))
>>> pts = pd.DataFrame({"chelator": [-1, 1, -1, 1] * 2, "ph": [-1, -1, 1, 1] * 2})
>>> ev = evaluate_design(pts, fs, sd=1.0, effects=3.0)
>>> ev.summary[["term", "df", "power"]].round(3).to_dict("records")[0]
{'term': 'chelator', 'df': 1, 'power': 0.919}
>>> round(ev.d_efficiency, 6)
100.0
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from trialkit.exceptions import ModelSpecError, PlanError
from trialkit.numbers import readable, readable_frame, readable_table
from trialkit.planning import power as pw
from trialkit.problems import did_you_mean
from trialkit.trial.factors import Factor

__all__ = ["Evaluation", "build_model", "evaluate_design", "plain"]

_PROFILE_POINTS = 2000


def build_model(spec, factors: Sequence[Factor]) -> pw.DesignModel:
    """The :class:`trialkit.planning.power.DesignModel` of a model specification."""
    return pw.DesignModel.from_spec(spec, factors)


@dataclass
class Evaluation:
    """Power and efficiency of one plan or design.

    Attributes
    ----------
    summary : pandas.DataFrame
        One row per model term: ``term``, ``df`` (numerator degrees of freedom),
        ``effect`` (size tested, response units), ``power``, ``detectable_effect``
        (smallest effect reaching ``target_power``), ``effect_se`` (standard error of
        the estimated effect of a one-column term), ``max_vif``.
    d_efficiency, i_efficiency : float
        ``100 det(X'X/n)^(1/p)`` of the model matrix in coded units (blocks left out),
        and the average prediction variance relative to that of a design with
        ``X'X = n I`` (see :func:`trialkit.planning.power.i_efficiency`).
    average_variance : float
        Prediction variance averaged over the design region, in units of ``sd**2``.
    max_vif : float
        Largest variance inflation factor among the model's columns.
    effect_source : str
        Where the effect sizes came from: ``"stated"`` (given by the caller), the trial
        file's ``[evaluation]`` section, a response's limits, or ``"none"`` (power not
        computed; the detectable effects still are).
    sd_stated : bool
        False when no residual SD was given: ``sd`` is then 1 and every effect and
        detectable effect is in residual standard deviations.
    variance_profile : pandas.DataFrame
        Variance profile: ``share_of_region`` (0 to 1) and ``variance`` (units of sd²),
        the prediction variance not exceeded over that share of the design region.
    """

    model: str
    sd: float
    alpha: float
    target_power: float
    baths: int
    coupons: int | None
    blocks: int
    residual_df: int
    estimable: bool
    summary: pd.DataFrame
    d_efficiency: float
    i_efficiency: float
    average_variance: float
    max_vif: float
    variance_profile: pd.DataFrame
    resolution: int | None = None
    aliases: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    effect_source: str = "stated"
    sd_stated: bool = True
    _X: np.ndarray | None = field(default=None, repr=False)
    _model: pw.DesignModel | None = field(default=None, repr=False)
    _blocks: np.ndarray | None = field(default=None, repr=False)

    def power_of(self, term: str) -> float:
        """Power of one term (``KeyError``-free: unknown terms raise ModelSpecError)."""
        row = self.summary[self.summary.term == term]
        if row.empty:
            raise ModelSpecError(f"term {term!r} is not in the model; terms are "
                                 f"{list(self.summary.term)}")
        return float(row.power.iloc[0])

    def detectable_effects(self) -> dict[str, float]:
        """Smallest detectable effect per term (finite ones only)."""
        return {str(r.term): float(r.detectable_effect) for r in self.summary.itertuples()
                if np.isfinite(r.detectable_effect)}

    def model_matrix(self) -> np.ndarray:
        """The plan's model matrix: intercept, model columns, block contrasts last."""
        return _assemble(self._X, self._blocks)

    def simulated_power(self, term: str, *, n_sim: int = 10_000, seed: int = 0
                        ) -> tuple[float, float]:
        """Power of ``term`` by simulating ``n_sim`` trials (batched least squares) with
        the term's effect in its least favourable direction; ``(power, standard error)``.
        A check on the analytic ``power`` column."""
        row = self.summary[self.summary.term == term]
        if row.empty or not np.isfinite(row.effect.iloc[0]) or not self.estimable:
            raise ModelSpecError(f"term {term!r} has no effect size in an estimable model; "
                                 f"terms are {list(self.summary.term)}")
        X = self.model_matrix()
        sl = self._model.term_columns[term]
        dirs = self._model.term_directions(term)
        info = pw.information(X, sl)
        worst = dirs[int(np.argmin(np.einsum("ij,jk,ik->i", dirs, info, dirs)))]
        beta = np.zeros(X.shape[1])
        beta[sl] = worst * float(row.effect.iloc[0])
        return pw.simulate_power(X, sl, beta, self.sd, alpha=self.alpha, n_sim=n_sim,
                                 seed=seed)

    def replicates_needed(self, target_power: float | None = None, *,
                          terms: Sequence[str] | None = None,
                          max_replicates: int = 50) -> int | None:
        """Smallest number of copies of the whole plan (1 = as planned) at which every
        term in ``terms`` (default: all with an effect size) reaches ``target_power``;
        ``None`` if not reached within ``max_replicates``.  Each copy gets blocks of
        its own when the plan has blocks."""
        target = self.target_power if target_power is None else target_power
        rows = self.summary if terms is None else self.summary[self.summary.term.isin(terms)]
        rows = rows[rows.effect.notna()]
        if rows.empty:
            raise ModelSpecError("no term has an effect size to reach a power for; "
                                 "give effects")
        Xm = self._X
        for k in range(1, max_replicates + 1):
            X = _assemble(np.vstack([Xm] * k), _replicate_blocks(self._blocks, k))
            if X.shape[0] - X.shape[1] < 1 or np.linalg.matrix_rank(X) < X.shape[1]:
                continue
            powers = [_term_power(X, self._model, r.term, r.effect, self.sd, self.alpha)[0]
                      for r in rows.itertuples()]
            if min(powers) >= target:
                return k
        return None

    def to_dict(self) -> dict:
        """Plain data for JSON: ``power`` is a list of ``{term, effect, power}``."""
        return plain({
            "model": self.model, "sd": self.sd, "alpha": self.alpha,
            "target_power": self.target_power, "baths": self.baths,
            "coupons": self.coupons, "blocks": self.blocks,
            "residual_df": self.residual_df, "estimable": self.estimable,
            "power": [{"term": r.term, "effect": r.effect, "power": r.power}
                      for r in self.summary.itertuples()],
            "terms": self.summary.to_dict("records"),
            "d_efficiency": self.d_efficiency, "i_efficiency": self.i_efficiency,
            "average_variance": self.average_variance, "max_vif": self.max_vif,
            "resolution": self.resolution, "aliases": list(self.aliases),
            "variance_profile": self.variance_profile.to_dict("list"),
            "effect_source": self.effect_source, "sd_stated": self.sd_stated,
            "notes": list(self.notes),
        })

    def _sd_text(self) -> str:
        return f"sd {readable(self.sd)}" if self.sd_stated else "sd not stated (sizes in SDs)"

    def _effect_text(self) -> str:
        return ("effects: none stated, power not computed" if self.effect_source == "none"
                else f"effects: {self.effect_source}")

    def __repr__(self) -> str:
        lines = [f"Evaluation: {self.baths} baths, model {self.model!r}, {self._sd_text()}, "
                 f"alpha {readable(self.alpha)}",
                 f"  {self._effect_text()}",
                 f"  D-efficiency {self.d_efficiency:.1f} %, I-efficiency "
                 f"{self.i_efficiency:.1f} %, max VIF {self.max_vif:.2f}, "
                 f"residual df {self.residual_df}",
                 readable_table(self.summary, 3)]
        lines += [f"  note: {n}" for n in self.notes]
        return "\n".join(lines)

    def _repr_html_(self) -> str:
        head = (f"<p><b>Evaluation</b>: {self.baths} baths, model <code>{self.model}</code>, "
                f"{self._sd_text()}, alpha {readable(self.alpha)}; D-efficiency "
                f"{self.d_efficiency:.1f} %, I-efficiency {self.i_efficiency:.1f} %, "
                f"max VIF {self.max_vif:.2f}; {self._effect_text()}</p>")
        notes = "".join(f"<p>{n}</p>" for n in self.notes)
        return head + readable_frame(self.summary, 3).to_html(index=False) + notes


def plain(value):
    """Numpy scalars -> Python scalars, recursively through dicts and lists."""
    if isinstance(value, dict):
        return {str(k): plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [plain(v) for v in value]
    if isinstance(value, np.generic):
        return value.item()
    return value


def _assemble(Xm: np.ndarray, blocks: np.ndarray | None) -> np.ndarray:
    if blocks is None or len(set(blocks)) < 2:
        return Xm
    return np.hstack([Xm, pw.sum_contrasts(list(blocks))])


def _replicate_blocks(blocks, k):
    if blocks is None or len(set(blocks)) < 2:
        return None
    return np.concatenate([[f"{r}:{b}" for b in blocks] for r in range(k)])


def _term_power(X, model, term, effect, sd, alpha):
    """(power, adjusted information matrix) of one term; power NaN without an effect."""
    info = pw.information(X, model.term_columns[term])
    if info is None or effect is None or not np.isfinite(effect):
        return float("nan"), info
    dirs = model.term_directions(term)
    lam = pw.term_noncentrality(info, dirs, effect, sd)
    df1 = info.shape[0]
    return float(np.min(pw.f_test_power(lam, df1, X.shape[0] - X.shape[1], alpha))), info


def _effect_for(term: str, effects):
    if effects is None:
        return float("nan")
    if isinstance(effects, Mapping):
        return effects.get(term, float("nan"))
    return float(effects)


def evaluate_design(coded: pd.DataFrame, factors: Sequence[Factor], *,
                    model="main", sd: float | None = None, effects=None,
                    alpha: float = 0.05, target_power: float = 0.8,
                    blocks: Sequence | None = None, coupons: int | None = None,
                    resolution: int | None = None, aliases: Sequence[str] = (),
                    effect_source: str | None = None) -> Evaluation:
    """Evaluate design points (one row per bath, coded units / level labels).

    Parameters
    ----------
    coded : DataFrame
        One column per factor (coded continuous values, level labels), one row per bath.
    factors : sequence of Factor
    model : str or sequence of str
        ``"main"``, ``"interactions"``, ``"quadratic"`` or terms ``"a + b + a:b"``.
    sd : float, optional
        Residual standard deviation between baths, response units.  Not given: 1, and
        every effect and detectable effect is read in residual SDs.
    effects : float or dict, optional
        The smallest difference that matters, in response units: one size for every
        term, or ``{term: size}``.  Not given: power is not computed (there is no
        default signal-to-noise ratio); the detectable effects still are.
    alpha, target_power : float
    blocks : sequence, optional
        Block label of each bath (fixed effects in sum contrasts).
    effect_source : str, optional
        Where ``effects`` came from, for the output (default ``"stated"``).
    """
    factors = tuple(factors)
    sd_stated = sd is not None
    sd = 1.0 if sd is None else sd
    if not (isinstance(sd, (int, float)) and sd > 0):
        raise PlanError(f"sd must be a positive number (response units), got {sd!r}")
    if not 0 < alpha < 1 or not alpha < target_power < 1:
        raise PlanError(f"need 0 < alpha < target_power < 1, got alpha={alpha!r}, "
                        f"target_power={target_power!r}")
    dm = build_model(model, factors)
    names = [t.name for t in dm.terms]
    if isinstance(effects, Mapping):
        for term in effects:
            if term not in names:
                raise ModelSpecError(f"effect given for {term!r}, which is not a term of "
                                     f"model {model!r}; terms are {names}; "
                                     f"{did_you_mean(term, names)}")
    Xm = dm.expand(dm.encode(coded))
    blk = None if blocks is None else np.asarray([str(b) for b in blocks])
    X = _assemble(Xm, blk)
    n, p = X.shape
    rank = np.linalg.matrix_rank(X)
    estimable = rank == p and n > p
    notes = []
    if rank < p:
        notes.append(f"the model has {p} coefficients (with blocks) but the plan supports "
                     f"only {rank}: drop terms or add baths")
    elif n == p:
        notes.append("no residual degrees of freedom: every term is estimable but none can "
                     "be tested; add replicates or centre points")
    if effects is None:
        notes.append("no effect size stated, so no power is computed: give the smallest "
                     "difference that matters (--effect, or effects in [evaluation]) or "
                     "limits on the response; the detectable effects are still given")
    if not sd_stated:
        notes.append("no residual SD stated (--sd, or sd in [evaluation]): effects and "
                     "detectable effects are in residual standard deviations")
    vif = pw.vifs(X) if rank == p else np.full(p - 1, np.inf)
    rows = []
    df2 = n - p
    need = pw.noncentrality_needed(target_power, 1, df2, alpha) if estimable else np.nan
    for t in dm.terms:
        sl = dm.term_columns[t.name]
        eff = _effect_for(t.name, effects)
        pwr, info = _term_power(X, dm, t.name, eff, sd, alpha) if estimable \
            else (float("nan"), None)
        det_eff = se = float("nan")
        if info is not None:
            df1 = info.shape[0]
            lam_need = need if df1 == 1 else pw.noncentrality_needed(target_power, df1,
                                                                        df2, alpha)
            q = np.einsum("ij,jk,ik->i", dm.term_directions(t.name), info,
                          dm.term_directions(t.name))
            det_eff = float(sd * np.sqrt(lam_need / q.min()))
            if df1 == 1:
                se = float(sd / np.sqrt(q[0]))
        rows.append({"term": t.name, "df": sl.stop - sl.start, "effect": eff, "power": pwr,
                     "detectable_effect": det_eff, "effect_se": se,
                     "max_vif": float(np.max(vif[sl.start - 1:sl.stop - 1]))})
    summary = pd.DataFrame(rows, columns=["term", "df", "effect", "power",
                                          "detectable_effect", "effect_se", "max_vif"])
    moments = dm.moment_matrix()
    rng = np.random.default_rng(0)
    P = dm.expand(dm.sample_region(_PROFILE_POINTS, rng))
    if rank == p:
        P = np.hstack([P, np.zeros((len(P), p - dm.p))])
        var = np.sort(pw.prediction_variances(X, P))
        Mfull = np.zeros((p, p))
        Mfull[:dm.p, :dm.p] = moments
        avg = pw.average_variance(X, Mfull)
    else:
        var = np.full(len(P), np.inf)
        avg = float("inf")
    fractions = np.linspace(0.0, 1.0, 101)
    variance_profile = pd.DataFrame({"share_of_region": fractions,
                                     "variance": np.quantile(var, fractions) if rank == p
                        else np.full(101, np.inf)})
    return Evaluation(
        model=model if isinstance(model, str) else " + ".join(model), sd=float(sd),
        alpha=float(alpha), target_power=float(target_power), baths=n, coupons=coupons,
        blocks=1 if blk is None else len(set(blk)), residual_df=n - rank,
        estimable=bool(estimable), summary=summary, d_efficiency=pw.d_efficiency(Xm),
        i_efficiency=float(100.0 * np.trace(moments) / (n * avg)) if np.isfinite(avg)
        else 0.0,
        average_variance=avg, max_vif=float(np.max(vif)) if len(vif) else 1.0,
        variance_profile=variance_profile, resolution=resolution, aliases=list(aliases),
        notes=notes, sd_stated=sd_stated,
        effect_source=("none" if effects is None else effect_source or "stated"),
        _X=Xm, _model=dm, _blocks=blk)
