"""Agreement of two ways of reading the same coupons: hand estimates and photo measurements.

* **Bland–Altman** (Bland & Altman 1986): the differences d = photo - hand; the bias is
  their mean, the 95 % limits of agreement are bias ± 1.96 SD(d) (SD with n - 1).
* **Intraclass correlation ICC(A,1)** (McGraw & Wong 1996), the same as Shrout & Fleiss's
  (1979) ICC(2,1): two-way random effects, absolute agreement, a single measurement,
  from the two-way ANOVA mean squares of the coupons (rows, MSR), the two methods
  (columns, MSC) and the residual (MSE) of an n x k table::

      ICC(A,1) = (MSR - MSE) / (MSR + (k - 1) MSE + k (MSC - MSE) / n)

  Absolute agreement, because a method that reads every coupon 10 points high does not
  agree with the other even though it ranks them the same.

:func:`coverage_agreement` pairs the record log's hand coverages with the photo
measurements of the same coupon and moment (before, after, each inspection) and pools
the pairs.

Examples
--------
>>> r = bland_altman([10.0, 20.0, 30.0, 40.0], [12.0, 21.0, 33.0, 42.0])
>>> r["bias"], round(r["sd"], 3)
(2.0, 0.816)
>>> round(icc_a1([[1, 2], [3, 4], [5, 6.5]]), 3)
0.864
"""

from __future__ import annotations

import html
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from trialkit.exceptions import AnalysisError

#: Two-sided 95 % normal quantile used for the limits of agreement (Bland & Altman 1986).
Z95 = 1.959963984540054
ICC_FORM = ("ICC(A,1): two-way random effects, absolute agreement, single measurement "
            "(McGraw & Wong 1996; Shrout & Fleiss 1979 ICC(2,1))")
#: Hand field -> photo field of the record log (as in trialkit.records.fields).
_PAIRS = {"coverage_before_pct": "coverage_before_photo_pct",
          "coverage_after_pct": "coverage_after_photo_pct"}
_INSPECTION_PAIR = ("coverage_pct", "coverage_photo_pct")


def bland_altman(reference, other) -> dict[str, float]:
    """Bias and 95 % limits of agreement of ``other - reference``.

    Returns
    -------
    dict
        ``n, bias, sd, lower, upper`` (limits = bias ± 1.96 sd).

    Raises
    ------
    AnalysisError
        Fewer than two complete pairs, or arrays of different lengths.
    """
    a = np.asarray(reference, dtype=float)
    b = np.asarray(other, dtype=float)
    if a.shape != b.shape:
        raise AnalysisError(f"the two methods need the same number of readings; got "
                            f"{a.size} and {b.size}.")
    ok = np.isfinite(a) & np.isfinite(b)
    d = (b - a)[ok]
    if d.size < 2:
        raise AnalysisError(f"agreement needs at least two coupons read both ways; got "
                            f"{d.size}.")
    bias = float(d.mean())
    sd = float(d.std(ddof=1))
    return {"n": int(d.size), "bias": bias, "sd": sd, "lower": bias - Z95 * sd,
            "upper": bias + Z95 * sd}


def icc_a1(table) -> float:
    """ICC(A,1) of an ``n x k`` table (rows: coupons, columns: methods), complete rows.

    Raises
    ------
    AnalysisError
        Fewer than two complete rows or two columns, or no variation at all.
    """
    y = np.asarray(table, dtype=float)
    if y.ndim != 2 or y.shape[1] < 2:
        raise AnalysisError(f"an ICC needs a table of coupons by at least two methods; got "
                            f"shape {y.shape}.")
    y = y[np.all(np.isfinite(y), axis=1)]
    n, k = y.shape
    if n < 2:
        raise AnalysisError(f"an ICC needs at least two coupons read by every method; got {n}.")
    grand = y.mean()
    ss_rows = k * float(((y.mean(axis=1) - grand) ** 2).sum())
    ss_cols = n * float(((y.mean(axis=0) - grand) ** 2).sum())
    ss_err = float(((y - grand) ** 2).sum()) - ss_rows - ss_cols
    msr = ss_rows / (n - 1)
    msc = ss_cols / (k - 1)
    mse = ss_err / ((n - 1) * (k - 1))
    denom = msr + (k - 1) * mse + k * (msc - mse) / n
    if denom <= 0 or not math.isfinite(denom):
        raise AnalysisError("the readings do not vary between coupons; no ICC can be given.")
    return (msr - mse) / denom


@dataclass
class CoverageAgreement:
    """How closely photo measurements agree with hand estimates of the same coupons.

    Attributes
    ----------
    pairs : DataFrame
        ``coupon, inspection, reading, hand_pct, photo_pct, difference`` (photo - hand).
    n : int
        Pairs pooled.
    bias, sd, lower, upper : float
        Bland–Altman bias, SD of the differences, 95 % limits of agreement (points of
        coverage).
    icc : float
        ICC(A,1) (see :data:`ICC_FORM`); NaN when it cannot be given.
    notes : list of str
    """

    pairs: pd.DataFrame
    n: int
    bias: float
    sd: float
    lower: float
    upper: float
    icc: float
    icc_form: str = ICC_FORM
    notes: list[str] = field(default_factory=list)

    @property
    def summary(self) -> pd.DataFrame:
        """One row: ``n, bias, sd, lower, upper, icc``."""
        return pd.DataFrame([{"n": self.n, "bias": self.bias, "sd": self.sd,
                              "lower": self.lower, "upper": self.upper, "icc": self.icc}])

    def to_dict(self) -> dict[str, Any]:
        return {"n": self.n, "bias": self.bias, "sd": self.sd, "lower": self.lower,
                "upper": self.upper, "icc": None if math.isnan(self.icc) else self.icc,
                "icc_form": self.icc_form, "difference": "photo - hand (points of coverage)",
                "pairs": self.pairs.to_dict("records"), "notes": list(self.notes)}

    def sentence(self) -> str:
        """The agreement in one sentence."""
        icc = "" if math.isnan(self.icc) else f"; ICC(A,1) {self.icc:.2f}"
        return (f"Over {self.n} coupon readings made both ways, photos read {self.bias:+.1f} "
                f"points of coverage against the hand estimates on average; 95 % of the "
                f"differences should lie between {self.lower:+.1f} and {self.upper:+.1f} "
                f"points (Bland–Altman){icc}.")

    def __repr__(self) -> str:
        return (f"CoverageAgreement(n={self.n}, bias={self.bias:.2f}, limits=({self.lower:.2f}, "
                f"{self.upper:.2f}), icc={self.icc:.3f})")

    def _repr_html_(self) -> str:
        return f"<p>{html.escape(self.sentence())}</p>" + self.summary.to_html(index=False)


def coverage_pairs(current: pd.DataFrame | None, timecourse: pd.DataFrame | None = None
                   ) -> pd.DataFrame:
    """Hand and photo coverages of the same coupon and moment, one row per pair.

    ``current`` is the record log's wide coupon values (``RecordLog.current_values``),
    ``timecourse`` its long inspection values (``RecordLog.current_timecourse``).
    """
    cols = ["coupon", "inspection", "reading", "hand_pct", "photo_pct", "difference"]
    rows = []
    if current is not None and len(current):
        for hand, photo in _PAIRS.items():
            if hand in current and photo in current:
                sub = current[["coupon", hand, photo]].dropna()
                for c, h, p in sub.itertuples(index=False):
                    rows.append((str(c), 0, hand, float(h), float(p)))
    if timecourse is not None and len(timecourse):
        hand, photo = _INSPECTION_PAIR
        wide = timecourse[timecourse.field.isin([hand, photo])].pivot_table(
            index=["coupon", "inspection"], columns="field", values="value", aggfunc="last")
        if hand in wide and photo in wide:
            for (c, i), h, p in zip(wide.index, wide[hand], wide[photo], strict=True):
                if pd.notna(h) and pd.notna(p):
                    rows.append((str(c), int(i), hand, float(h), float(p)))
    out = pd.DataFrame(rows, columns=cols[:5])
    out["difference"] = out["photo_pct"] - out["hand_pct"]
    return out[cols]


def coverage_agreement(current: pd.DataFrame | None, timecourse: pd.DataFrame | None = None
                       ) -> CoverageAgreement | None:
    """Agreement of hand and photo coverages; None when fewer than two pairs exist."""
    pairs = coverage_pairs(current, timecourse)
    if len(pairs) < 2:
        return None
    ba = bland_altman(pairs["hand_pct"], pairs["photo_pct"])
    notes = []
    try:
        icc = icc_a1(pairs[["hand_pct", "photo_pct"]].to_numpy())
    except AnalysisError as exc:
        icc = math.nan
        notes.append(str(exc))
    if len(pairs) < 10:
        notes.append(f"only {len(pairs)} pairs: the limits of agreement are rough")
    return CoverageAgreement(pairs, ba["n"], ba["bias"], ba["sd"], ba["lower"], ba["upper"],
                             icc, notes=notes)
