"""NIST StRD checks of sums of squares and regression (trialkit.analysis.exact + model fit).

Sources: NIST/ITL Statistical Reference Datasets, ANOVA section
(https://www.itl.nist.gov/div898/strd/anova/anova.html) and linear least squares section
(https://www.itl.nist.gov/div898/strd/lls/lls.shtml), certified values; files in
tests/reference/stats/nist_strd/ (see its README).  Digits are the log relative error
-log10(|x - c| / |c|); each set's digits are printed (visible with ``pytest -s``) and put in
the assertion message.
"""

from __future__ import annotations

import json
from fractions import Fraction
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from trialkit.analysis.exact import (
    exact_oneway,
    exact_sum_of_squares,
    shift_decimal,
    significant_digits,
)
from trialkit.analysis.linear import least_squares
from trialkit.analysis.model import fit_model
from trialkit.exceptions import AnalysisError
from trialkit.trial.factors import Factor

REF = Path(__file__).parent / "reference" / "stats" / "nist_strd"
ANOVA = json.loads((REF / "anova" / "certified_values.json").read_text())["datasets"]
LINREG = json.loads((REF / "linreg" / "certified_values.json").read_text())["datasets"]
MIN_DIGITS = 9.0


def _data_rows(path: Path) -> list[list[str]]:
    """Whitespace-split text rows after the last 'Data:' header line (values kept as text)."""
    lines = path.read_bytes().decode("ascii").split("\r\n")
    start = max(i for i, ln in enumerate(lines) if ln.lstrip().startswith("Data:"))
    return [ln.split() for ln in lines[start + 1:] if ln.strip()]


def test_reference_files_keep_crlf():
    # the NIST originals use CRLF; .gitattributes keeps them byte-identical
    raw = (REF / "anova" / "SmLs07.dat").read_bytes()
    assert raw.count(b"\r\n") == raw.count(b"\n") > 200


@pytest.mark.parametrize("name", sorted(ANOVA))
def test_nist_anova_certified_digits(name):
    """NIST StRD ANOVA <name>, certified SS, MS, F and R^2 to >= 9 significant digits."""
    info = ANOVA[name]
    cert = info["certified"]
    rows = _data_rows(REF / "anova" / f"{name}.dat")
    table = pd.DataFrame({"treatment": [r[0] for r in rows], "y": [r[1] for r in rows]})
    assert len(table) == info["n_observations"]
    fit = fit_model(table, "y", [Factor.categorical("treatment", sorted(
        set(table.treatment), key=int))], "treatment", block=None)
    a = fit.anova(1)
    row = a.summary.iloc[0]
    got = {"ss_between": row.sum_sq, "ms_between": row.mean_sq, "F": row.F,
           "ss_within": a.residual["sum_sq"], "ms_within": a.residual["mean_sq"],
           "r_squared": fit.r_squared, "residual_sd": float(np.sqrt(fit.sigma2))}
    digits = {k: significant_digits(v, cert[k]) for k, v in got.items()}
    print(f"\nNIST StRD {name} ({info['difficulty']}): "
          + ", ".join(f"{k} {d:.1f}" for k, d in digits.items()))
    assert int(row.df) == cert["df_between"] and a.residual["df"] == cert["df_within"]
    assert min(digits.values()) >= MIN_DIGITS, f"{name} digits {digits}"


def test_exact_rational_cross_check_smls07():
    """NIST StRD SmLs07 certified SS reproduced exactly by rational arithmetic."""
    rows = _data_rows(REF / "anova" / "SmLs07.dat")
    ss = exact_oneway([r[0] for r in rows], [r[1] for r in rows])
    cert = ANOVA["SmLs07"]["certified"]
    assert ss["ss_between"] == Fraction("1.68") == Fraction(cert["ss_between"])
    assert ss["ss_within"] == Fraction("1.8") == Fraction(cert["ss_within"])


def test_float_parsing_before_shift_loses_digits_but_text_shift_does_not():
    """The reason for exact shifting: SmLs07 values near 1e12 differ in the 13th digit."""
    y_text = [r[1] for r in _data_rows(REF / "anova" / "SmLs07.dat")]
    naive = np.array([float(v) for v in y_text])
    naive_ss = float(((naive - naive.mean()) ** 2).sum())
    shifted, shift = shift_decimal(y_text)
    exact = float(exact_sum_of_squares(y_text))
    good = float(((shifted - shifted.mean()) ** 2).sum())
    assert significant_digits(good, exact) >= 13
    assert significant_digits(naive_ss, exact) < 8
    assert str(shift).startswith("1000000000000.")


def test_text_in_response_is_reported_with_rows():
    with pytest.raises(AnalysisError, match=r"row 2: 'n/a'"):
        shift_decimal(["1.5", "n/a", "2"])


def _linreg_fit(name: str):
    rows = _data_rows(REF / "linreg" / f"{name}.dat")
    info = LINREG[name]
    return rows, info


@pytest.mark.parametrize("name, degree", [("Norris", 1), ("Pontius", 2)])
def test_nist_linreg_polynomial_via_model_fit(name, degree):
    """NIST StRD <name>: certified coefficients and SDs to >= 9 digits via fit_model."""
    rows, info = _linreg_fit(name)
    table = pd.DataFrame({"y": [r[0] for r in rows], "x": [float(r[1]) for r in rows]})
    fx = Factor.continuous("x", table.x.min(), table.x.max())
    fit = fit_model(table, "y", [fx], "x" if degree == 1 else "x + x^2", block=None)
    coefs = fit.coefficients.set_index("term")
    names = ["intercept", "x", "x^2"][: degree + 1]
    digits = {}
    for i, nm in enumerate(names):
        c = info["certified"]["parameters"][f"B{i}"]
        digits[f"B{i}"] = significant_digits(coefs.loc[nm, "estimate"], c["estimate"])
        digits[f"sd(B{i})"] = significant_digits(coefs.loc[nm, "std_error"], c["sd"])
    digits["residual_sd"] = significant_digits(np.sqrt(fit.sigma2),
                                               info["certified"]["residual_sd"])
    digits["r_squared"] = significant_digits(fit.r_squared, info["certified"]["r_squared"])
    print(f"\nNIST StRD {name}: " + ", ".join(f"{k} {d:.1f}" for k, d in digits.items()))
    assert min(digits.values()) >= MIN_DIGITS, f"{name} digits {digits}"


def test_nist_linreg_longley_main_effects_model():
    """NIST StRD Longley (6 predictors): certified coefficients and SDs to >= 9 digits."""
    rows, info = _linreg_fit("Longley")
    cols = ["y"] + [f"x{i}" for i in range(1, 7)]
    table = pd.DataFrame([[float(v) for v in r] for r in rows], columns=cols)
    table["y"] = [r[0] for r in rows]
    fs = [Factor.continuous(c, table[c].min(), table[c].max()) for c in cols[1:]]
    fit = fit_model(table, "y", fs, "main", block=None)
    coefs = fit.coefficients.set_index("term")
    digits = {}
    for i, nm in enumerate(["intercept"] + cols[1:]):
        c = info["certified"]["parameters"][f"B{i}"]
        digits[f"B{i}"] = significant_digits(coefs.loc[nm, "estimate"], c["estimate"])
        digits[f"sd(B{i})"] = significant_digits(coefs.loc[nm, "std_error"], c["sd"])
    print("\nNIST StRD Longley: " + ", ".join(f"{k} {d:.1f}" for k, d in digits.items()))
    assert min(digits.values()) >= MIN_DIGITS, f"Longley digits {digits}"


def test_nist_linreg_noint1_least_squares_core():
    """NIST StRD NoInt1 (no intercept): certified B1 and SD via the least-squares core."""
    rows, info = _linreg_fit("NoInt1")
    y = np.array([float(r[0]) for r in rows])
    X = np.array([[float(r[1])] for r in rows])
    ls = least_squares(X, y)
    c = info["certified"]["parameters"]["B1"]
    d_est = significant_digits(ls.beta[0], c["estimate"])
    d_sd = significant_digits(np.sqrt(ls.xtx_inv[0, 0] * ls.sigma2), c["sd"])
    print(f"\nNIST StRD NoInt1: B1 {d_est:.1f}, sd(B1) {d_sd:.1f}")
    assert min(d_est, d_sd) >= MIN_DIGITS
