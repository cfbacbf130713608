"""Fitting a linear model to bath-level responses: :func:`fit_model` -> :class:`ModelFit`.

The model is fitted in coded units (continuous factors -1..1, categorical factors as
sum-to-zero contrasts) with blocks as a fixed effect, after the response has been shifted
by an exact decimal amount (see :mod:`trialkit.analysis.exact`).

Examples
--------
>>> import pandas as pd
>>> from trialkit.trial.factors import Factor
>>> df = pd.DataFrame({"chelator": [2, 10, 2, 10, 6, 6], "ph": [5.5, 5.5, 7.5, 7.5, 6.5, 6.5],
...                    "removal": [40.0, 60.0, 50.0, 75.0, 58.0, 57.0]})
>>> fs = [Factor.continuous("chelator", 2, 10), Factor.continuous("ph", 5.5, 7.5)]
>>> fit = fit_model(df, "removal", fs, "main")
>>> float(round(fit.coded_coefficients.set_index("term").loc["chelator", "estimate"], 6))
11.25
>>> float(round(fit.coefficients.set_index("term").loc["chelator", "estimate"], 6))
2.8125
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from decimal import Decimal
from functools import cached_property

import numpy as np
import pandas as pd
from scipy import stats

from trialkit.analysis.data import finite, prepare, response_column
from trialkit.analysis.exact import shift_decimal
from trialkit.analysis.linear import LeastSquares, least_squares
from trialkit.analysis.natural import natural_coefficients
from trialkit.analysis.response_scale import RAW, ResponseScale
from trialkit.exceptions import AnalysisError
from trialkit.numbers import readable
from trialkit.trial.factors import Factor
from trialkit.trial.model_grammar import INTERCEPT, ModelSpec, Term, parse_model
from trialkit.trial.model_matrix import ModelMatrix, coded_frame, model_matrix

BLOCK = "block"


@dataclass(eq=False)
class ModelFit:
    """A fitted linear model.

    Attributes
    ----------
    spec : ModelSpec
        The model, with the block term first when blocks are in it.
    response : str
    natural, coded : DataFrame
        Rows used (natural units / coded units).
    mm : ModelMatrix
    ls : LeastSquares
        Fit on the shifted response.
    y : ndarray
        Shifted response (``response - shift``).
    shift : Decimal
        Exact decimal shift added back to the intercept and predictions.
    alpha : float
        For confidence and prediction intervals.
    n_dropped : int
        Rows left out (missing factor values or response, e.g. controls).
    limits : tuple
        Physical range ``(low, high)`` of the response (None: no bound on that side);
        :meth:`predict` cuts predictions and intervals to it and flags the rows it cut.
    transform : ResponseScale
        The scale the response was fitted on (:mod:`trialkit.analysis.response_scale`);
        ``y``, the coefficients and the residuals are on it, :meth:`predict` and
        :meth:`profile` transform back to the response's unit.
    """

    spec: ModelSpec
    response: str
    natural: pd.DataFrame
    coded: pd.DataFrame
    mm: ModelMatrix
    ls: LeastSquares
    y: np.ndarray
    shift: Decimal
    alpha: float = 0.05
    n_dropped: int = 0
    limits: tuple = (None, None)
    transform: ResponseScale = RAW
    _cache: dict = field(default_factory=dict, repr=False)

    @property
    def scale(self) -> str:
        """How the model respects the response's physical range (a sentence)."""
        lo, hi = self.limits
        if not self.transform.is_raw:
            return self.transform.describe()
        if lo is None and hi is None:
            return "raw scale (no physical range known)"
        return (f"raw scale; predictions and intervals cut to the physical range "
                f"{range_text(self.limits)} and flagged where cut")

    # -- basic quantities ---------------------------------------------------------
    @property
    def n(self) -> int:
        return len(self.y)

    @property
    def df_resid(self) -> int:
        return self.ls.df_resid

    @property
    def sigma2(self) -> float:
        return self.ls.sigma2

    @property
    def cov(self) -> np.ndarray:
        """Covariance of the coded coefficients."""
        return self.ls.xtx_inv * self.sigma2

    @property
    def tss(self) -> float:
        d = self.y - self.y.mean()
        return float(d @ d)

    @property
    def fitted(self) -> np.ndarray:
        return self.ls.fitted + float(self.shift)

    @property
    def resid(self) -> np.ndarray:
        return self.ls.resid

    @property
    def r_squared(self) -> float:
        return 1.0 - self.ls.rss / self.tss if self.tss > 0 else float("nan")

    @property
    def adj_r_squared(self) -> float:
        if self.df_resid <= 0 or self.tss <= 0:
            return float("nan")
        return 1.0 - (self.ls.rss / self.df_resid) / (self.tss / (self.n - 1))

    @property
    def press(self) -> float:
        """Prediction error sum of squares (leave-one-out residuals)."""
        h = self.ls.leverage
        if np.any(h > 1 - 1e-10):
            return float("nan")
        e = self.ls.resid / (1.0 - h)
        return float(e @ e)

    @property
    def pred_r_squared(self) -> float:
        p = self.press
        return 1.0 - p / self.tss if np.isfinite(p) and self.tss > 0 else float("nan")

    def _t(self) -> float:
        return float(stats.t.ppf(1 - self.alpha / 2, self.df_resid)) if self.df_resid > 0 \
            else float("nan")

    # -- coefficients -------------------------------------------------------------
    def _table(self, names: Sequence[str], est: np.ndarray, cov: np.ndarray) -> pd.DataFrame:
        se = np.sqrt(np.clip(np.diag(cov), 0, None)) if self.df_resid > 0 \
            else np.full(len(est), np.nan)
        t = self._t()
        with np.errstate(divide="ignore", invalid="ignore"):
            tval = est / se
        p = 2 * stats.t.sf(np.abs(tval), self.df_resid) if self.df_resid > 0 \
            else np.full(len(est), np.nan)
        return pd.DataFrame({"term": list(names), "estimate": est, "std_error": se,
                             "t": tval, "p": p, "ci_low": est - t * se,
                             "ci_high": est + t * se})

    @cached_property
    def coded_coefficients(self) -> pd.DataFrame:
        """Coefficients in coded units: term, estimate, std_error, t, p, ci_low, ci_high."""
        est = self.ls.beta.copy()
        est[0] += float(self.shift)
        return self._table(self.mm.columns, est, self.cov)

    @cached_property
    def coefficients(self) -> pd.DataFrame:
        """Coefficients in the factors' own units (same columns as coded)."""
        cov = self.cov if self.df_resid > 0 else np.zeros_like(self.ls.xtx_inv)
        names, est, vcov = natural_coefficients(self.mm, self.ls.beta, cov)
        est = est.copy()
        est[names.index(INTERCEPT)] += float(self.shift)
        return self._table(names, est, vcov)

    @cached_property
    def effects(self) -> pd.DataFrame:
        """Effects of two-level columns: twice the coded coefficient (low -> high)."""
        c = self.coded_coefficients.iloc[1:].copy()
        for col in ("estimate", "std_error", "ci_low", "ci_high"):
            c[col] = 2 * c[col]
        return c.rename(columns={"estimate": "effect"}).reset_index(drop=True)

    # -- prediction ---------------------------------------------------------------
    def design_rows(self, settings: pd.DataFrame | Mapping[str, object]) -> np.ndarray:
        """Model-matrix rows for settings given in natural units (dict or DataFrame)."""
        frame = pd.DataFrame([settings]) if isinstance(settings, Mapping) \
            else pd.DataFrame(settings).reset_index(drop=True)
        frame = frame.copy()
        for f in self.spec.used_factors:
            if f.name not in frame.columns:
                if f.name == BLOCK:
                    frame[BLOCK] = self.mm.levels[BLOCK][0]
                    continue
                raise AnalysisError(f"prediction needs a value for factor {f.name!r}")
        coded = coded_frame(frame, self.spec.used_factors)
        X = model_matrix(self.spec, coded, coding=self.mm.coding, levels=self.mm.levels).X
        if BLOCK in self.mm.term_columns:
            X[:, self.mm.term_columns[BLOCK]] = 0.0  # average over blocks (sum coding)
        return X

    def predict(self, settings: pd.DataFrame | Mapping[str, object], *, n_new: int = 1,
                clip: bool = True) -> pd.DataFrame:
        """Predicted mean with confidence and prediction intervals.

        Parameters
        ----------
        settings : DataFrame or dict
            Factor values in natural units (labels for categorical factors).
        n_new : int
            The prediction interval covers the mean of this many new baths.
        clip : bool
            Cut predictions and intervals to the physical range (``limits``); False gives
            the raw linear predictions (for searching an optimum).

        Returns
        -------
        DataFrame
            predicted, se_fit, ci_low, ci_high, pi_low, pi_high, and ``clipped`` (True
            where a value was cut to the physical range).
        """
        X = self.design_rows(settings)
        pred = X @ self.ls.beta + float(self.shift)
        var_fit = np.einsum("ij,jk,ik->i", X, self.ls.xtx_inv, X) * self.sigma2
        se = np.sqrt(var_fit)
        t = self._t()
        se_pi = np.sqrt(var_fit + self.sigma2 / n_new)
        out = pd.DataFrame({"predicted": pred, "se_fit": se, "ci_low": pred - t * se,
                            "ci_high": pred + t * se, "pi_low": pred - t * se_pi,
                            "pi_high": pred + t * se_pi})
        lo, hi = self.limits
        if not self.transform.is_raw:   # back to the response's unit: inside its range
            for c in ("predicted", "ci_low", "ci_high", "pi_low", "pi_high"):
                out[c] = self.transform.back(out[c].to_numpy())
            out["clipped"] = False
        elif clip and (lo is not None or hi is not None):
            cols = ["predicted", "ci_low", "ci_high", "pi_low", "pi_high"]
            raw = out[cols].to_numpy()
            cut = np.clip(raw, -np.inf if lo is None else lo, np.inf if hi is None else hi)
            out[cols] = cut
            out["clipped"] = np.any(cut != raw, axis=1)
        else:
            out["clipped"] = False
        return out

    def profile(self, factor: str, *, by: str | None = None, n: int = 21) -> pd.DataFrame:
        """Predictions along one factor (and per level of ``by``), others at their centre.

        Continuous factors not shown sit at the middle of their range; with sum-to-zero
        coding, categorical factors not shown are averaged over their levels.  The data of
        main-effect (``by=None``) and interaction plots.

        Returns
        -------
        DataFrame
            ``factor`` (natural units or level), ``by`` when given, predicted, se_fit,
            ci_low, ci_high, pi_low, pi_high.
        """
        shown = [factor] + ([by] if by else [])
        facs = {f.name: f for f in self.spec.used_factors}
        for name in shown:
            if name not in facs or name == BLOCK:
                raise AnalysisError(f"{name!r} is not a factor of the model "
                                    f"{self.spec.to_text()!r}")

        def values(name):
            f = facs[name]
            return list(self.mm.levels[name]) if f.is_categorical else \
                list(np.linspace(f.low, f.high, n if name == factor else 3))

        grid = pd.MultiIndex.from_product([values(s) for s in shown], names=shown).to_frame(
            index=False)
        frame = grid.copy()
        for f in self.spec.used_factors:
            if f.name in shown or f.name == BLOCK:
                continue
            frame[f.name] = f.center if f.is_continuous else self.mm.levels[f.name][0]
        X = self.design_rows(frame)
        if self.mm.coding == "sum":
            hidden = {f.name for f in self.spec.used_factors
                      if f.is_categorical and f.name not in shown}
            for t in self.spec.terms:
                if hidden & set(t.factors):
                    X[:, self.mm.term_columns[t.name]] = 0.0
        pred = X @ self.ls.beta + float(self.shift)
        var = np.einsum("ij,jk,ik->i", X, self.ls.xtx_inv, X) * self.sigma2
        t = self._t()
        se, se_pi = np.sqrt(var), np.sqrt(var + self.sigma2)
        back = self.transform.back
        return pd.concat([grid, pd.DataFrame({
            "predicted": back(pred), "se_fit": se, "ci_low": back(pred - t * se),
            "ci_high": back(pred + t * se), "pi_low": back(pred - t * se_pi),
            "pi_high": back(pred + t * se_pi)})], axis=1)

    # -- tables and output ----------------------------------------------------------
    def anova(self, typ: int = 2):
        """The ANOVA table of sums of squares of type 1, 2 or 3."""
        from trialkit.analysis.anova import anova_table

        key = ("anova", typ)
        if key not in self._cache:
            self._cache[key] = anova_table(self, typ)
        return self._cache[key]

    @property
    def summary(self) -> pd.DataFrame:
        """Coded coefficients (the table a reader looks at first)."""
        return self.coded_coefficients

    def to_dict(self, typ: int = 2) -> dict:
        """The JSON contract of ``trialkit analyze``."""
        table = self.anova(typ)

        def rows(df: pd.DataFrame) -> list[dict]:
            return [{"term": r.term, "estimate": finite(r.estimate),
                     "std_error": finite(r.std_error), "ci_low": finite(r.ci_low),
                     "ci_high": finite(r.ci_high)} for r in df.itertuples()]

        out = {"response": self.response, "model": self.spec.to_text(), "n": self.n,
               "n_dropped": self.n_dropped, "alpha": self.alpha,
               "physical_range": list(self.limits), "scale": self.scale,
               "scale_kind": self.transform.kind}
        out.update(table.to_dict())
        out.update({"r_squared": finite(self.r_squared),
                    "adj_r_squared": finite(self.adj_r_squared),
                    "pred_r_squared": finite(self.pred_r_squared),
                    "coefficients": rows(self.coefficients),
                    "coded_coefficients": rows(self.coded_coefficients)})
        return out

    def equation(self, digits: int = 4) -> str:
        """The fitted model written out in coded units, e.g. ``removal = 61.2 + 8.1 × chelator``.

        Categorical levels appear as ``(surfactant = none)``, worth 1 for that level, -1 for
        the last level and 0 otherwise (sum contrasts); continuous factors run from -1
        (low) to +1 (high).
        """
        parts = []
        for term, est in zip(self.coded_coefficients.term, self.coded_coefficients.estimate,
                             strict=True):
            value = readable(abs(est), digits)  # plain notation, never 1.35e-19
            if not np.isfinite(est) or (value == "≈ 0" and term != "intercept"):
                continue  # a zero up to rounding adds nothing to the equation
            if term == "intercept":
                parts.append(("-" if est < 0 else "") + value)
                continue
            label = " × ".join(f"({p})" if "=" in p else p for p in str(term).split(":"))
            sign = "−" if est < 0 else "+"
            parts.append(f"{sign} {value} × {label}" if parts else
                         f"{'-' if est < 0 else ''}{value} × {label}")
        return f"{self.response} = " + " ".join(parts or ["0"])

    def __repr__(self) -> str:
        return (f"ModelFit({self.response!r} modelled on {self.spec.to_text()}, n={self.n}, "
                f"R²={self.r_squared:.4f}, df_resid={self.df_resid})")

    def _repr_html_(self) -> str:
        return (f"<p><b>{self.response}</b> modelled on {self.spec.to_text()} (n = {self.n}, "
                f"R² = {self.r_squared:.4f})</p>" + self.anova().summary.to_html(index=False)
                + self.coded_coefficients.to_html(index=False))


def range_text(limits: tuple) -> str:
    """``"0 to 100"``, ``"at least 0"``, ``"at most 10"`` or ``"unbounded"``."""
    lo, hi = limits
    if lo is not None and hi is not None:
        return f"{readable(lo)} to {readable(hi)}"
    if lo is not None:
        return f"at least {readable(lo)}"
    return f"at most {readable(hi)}" if hi is not None else "unbounded"


def with_block(spec: ModelSpec, natural: pd.DataFrame, block: str | None
               ) -> tuple[ModelSpec, pd.DataFrame]:
    """Add blocks as a fixed effect (first term) when the block column varies."""
    if not block or block not in natural.columns:
        return spec, natural
    labels = natural[block].astype(str)
    if labels.nunique() < 2:
        return spec, natural
    levels = sorted(labels.unique(), key=lambda s: (len(s), s))
    bf = Factor.categorical(BLOCK, levels)
    factors = tuple(f for f in spec.factors if f.name != BLOCK) + (bf,)
    terms = (Term((BLOCK,)),) + tuple(t for t in spec.terms if t.name != BLOCK)
    natural = natural.copy()
    natural[BLOCK] = labels
    return ModelSpec(terms, factors), natural


def fit_model(table: pd.DataFrame, response: str, factors: Sequence[Factor],
              model: str | ModelSpec = "main", *, block: str | None = BLOCK,
              alpha: float = 0.05, coding: str = "sum",
              limits: tuple = (None, None), scale: str = "raw") -> ModelFit:
    """Fit ``response`` to a model over ``factors`` on a bath-level table.

    Parameters
    ----------
    table : DataFrame
        One row per bath; factor columns in natural units; the response column named
        ``response`` or ``<response>_mean``. Rows missing a factor value or the response
        (controls, reference baths) are left out and counted.
    response : str
    factors : sequence of Factor
    model : str or ModelSpec
        Model text (see :mod:`trialkit.trial.model_grammar`) or a parsed model.
    block : str or None
        Column of blocks; a fixed effect when it has two or more values.
    alpha : float
        1 - confidence level of every interval.
    coding : {"sum", "treatment"}
        Contrasts of categorical factors (type 3 tables require "sum").
    limits : tuple
        Physical range of the response, ``(low, high)``, None for no bound.
    scale : {"raw", "log", "logit"}
        The scale the response is fitted on (:mod:`trialkit.analysis.response_scale`).

    Returns
    -------
    ModelFit
    """
    if not 0 < alpha < 0.5:
        raise AnalysisError(f"alpha must be between 0 and 0.5, got {alpha!r}")
    spec = model if isinstance(model, ModelSpec) else parse_model(model, factors)
    column = response_column(table, response)
    used = spec.used_factors
    prep = prepare(table, column, used)
    spec, natural = with_block(spec, prep.natural, block)
    coded = coded_frame(natural, spec.used_factors)
    mm = model_matrix(spec, coded, coding=coding)
    n, p = mm.X.shape
    if p > n:
        raise AnalysisError(
            f"the model {spec.to_text()!r} has {p} coefficients but only {n} baths have "
            f"{response!r}; use a smaller model (e.g. 'main') or run more baths")
    transform = ResponseScale.for_response(scale, tuple(limits))
    values = natural[column].tolist() if transform.is_raw else \
        transform.forward(natural[column].astype(float), name=response).tolist()
    y, shift = shift_decimal(values, name=column)
    ls = least_squares(mm.X, y, mm.columns)
    return ModelFit(spec, response, natural, coded, mm, ls, y, shift, alpha, prep.n_dropped,
                    tuple(limits), transform)
