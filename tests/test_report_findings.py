"""Findings sentences are written from the numbers: different data, different sentences.

Invented data (tests/report_trials.py, seeded).  Independent check: in a balanced
two-level factorial a main effect is mean(high) - mean(low) of the factorial runs (Box,
Hunter & Hunter 2005, ch. 5), and its t-test p-value equals the ANOVA F-test p-value
(one degree of freedom: F = t²), here from scipy.stats.
"""

from __future__ import annotations

import re

import pytest
import report_trials as rt
from scipy import stats

from trialkit.analysis.model import fit_model
from trialkit.numbers import spoken
from trialkit.report import findings as fd

NUM = r"(−?[\d.]+)"
RAISE = re.compile(r"Raising chelator from 2 to 10 % w/v (increased|decreased) removal by "
                   rf"{NUM} points \(95 % CI {NUM}–{NUM}; p (<|=) {NUM}\)\.")


def _num(s: str) -> float:
    return float(s.replace("−", "-"))


def _data(tmp_path, name, **kw):
    trial, plan, baths = rt.screening(tmp_path / name, **kw)
    fit = fit_model(baths, "removal", trial.factors, "main")
    return baths, fit


def _bhh_effect(baths, factor, low, high):
    fac = baths[baths.point == "factorial"]
    return fac[fac[factor] == high].removal.mean() - fac[fac[factor] == low].removal.mean()


@pytest.mark.parametrize("kw", [dict(seed=1, chelator_effect=30.0, surfactant_effect=0.0),
                                dict(seed=7, chelator_effect=12.0, surfactant_effect=9.0)],
                         ids=["strong-chelator", "weak-chelator-surfactant"])
def test_chelator_sentence_quotes_the_effect_of_the_data(tmp_path, kw):
    baths, fit = _data(tmp_path, "t", **kw)
    text = next(f.text for f in fd.model_findings(fit, unit="%") if f.term == "chelator")
    m = RAISE.fullmatch(text)
    assert m, text
    effect = _bhh_effect(baths, "chelator", 2.0, 10.0)
    assert m.group(1) == ("increased" if effect > 0 else "decreased")
    dec = len(m.group(2).split(".")[1]) if "." in m.group(2) else 0
    assert _num(m.group(2)) == pytest.approx(abs(effect), abs=0.51 * 10 ** -dec)
    row = fit.effects.set_index("term").loc["chelator"]
    assert _num(m.group(3)) == pytest.approx(row.ci_low, abs=0.51 * 10 ** -dec)
    assert _num(m.group(4)) == pytest.approx(row.ci_high, abs=0.51 * 10 ** -dec)
    # p from scipy: two-sided t with the residual degrees of freedom
    t = row.effect / row.std_error
    p = 2 * stats.t.sf(abs(t), fit.df_resid)
    assert (m.group(5) == "<" and p < 0.001) or _num(m.group(6)) == pytest.approx(
        float(f"{p:.2g}"))


def test_two_data_sets_give_different_sentences(tmp_path):
    _, fit_a = _data(tmp_path, "a", seed=1, chelator_effect=30.0, surfactant_effect=0.0)
    _, fit_b = _data(tmp_path, "b", seed=7, chelator_effect=12.0, surfactant_effect=9.0)
    a = {f.term: f for f in fd.model_findings(fit_a, unit="%")}
    b = {f.term: f for f in fd.model_findings(fit_b, unit="%")}
    assert a["chelator"].text != b["chelator"].text
    # the invented truths differ in the surfactant: absent in a, 9 points in b
    assert a["surfactant"].kind == "not_detected"
    assert "made no detectable difference" in a["surfactant"].text
    assert b["surfactant"].kind == "effect"
    assert b["surfactant"].text.startswith(
        "Changing surfactant from none to added increased removal by ")
    # the surfactant is orthogonal to the rest, centre points included (one bath at each
    # level), so its effect is the difference of the level means over all model baths
    nat = fit_b.natural
    means = nat.groupby("surfactant").removal.mean()
    assert b["surfactant"].numbers["effect"] == pytest.approx(means["added"] - means["none"])


def test_not_detected_quotes_smallest_detectable_effect(tmp_path):
    _, fit = _data(tmp_path, "a", seed=1, chelator_effect=30.0, surfactant_effect=0.0)
    f = next(x for x in fd.model_findings(fit, unit="%", detectable={"surfactant": 4.567})
             if x.term == "surfactant")
    assert f.text.endswith("the trial could detect an effect of about 4.6 points.")
    assert f.numbers["detectable"] == 4.567


def test_detectable_effects_from_design_evaluation(tmp_path):
    from trialkit.planning.evaluation import evaluate_plan

    trial, plan, _ = rt.screening(tmp_path / "e")
    ev = evaluate_plan(plan, model="main", sd=2.0)
    got = ev.detectable_effects()
    assert set(got) == {"chelator", "ph", "surfactant"}
    assert got["chelator"] == pytest.approx(
        float(ev.summary.set_index("term").loc["chelator", "detectable_effect"]))


def test_effects_findings_use_lenth_margin(tmp_path):
    from trialkit.analysis.effects import two_level_effects

    trial, _, baths = rt.screening(tmp_path / "l", seed=1)
    eff = two_level_effects(baths, "removal", trial.factors)
    out = fd.effects_findings(eff, unit="%")
    loud = [f for f in out if f.kind == "screening"]
    assert [f.term for f in loud] == list(eff.summary[eff.summary.significant].term)
    me = f"{eff.lenth.me:.{fd.decimals_for(eff.lenth.me / 2)}f}"
    assert all(f"margin of error of {me} points" in f.text for f in loud)
    quiet = [f for f in out if f.kind == "not_detected"][0]
    for term in eff.summary[~eff.summary.significant].term:
        assert spoken(term) in quiet.text   # "chelator × pH", not "chelator:ph"


def test_interactions_and_curvature_sentences(tmp_path):
    data = rt.analysed("surface")[0]
    out = fd.model_findings(data.fits["removal"], unit="%")
    curve = [f for f in out if f.kind == "curvature"]
    # invented truth: removal peaks inside the region along both factors
    assert {f.term for f in curve} == {"chelator^2", "ph^2"}
    assert all("higher in the middle of the range" in f.text for f in curve)
    assert any(f.text.startswith("No interaction on removal was detected: chelator × pH (p = ")
               for f in out)


@pytest.mark.parametrize("p, text", [(0.0004, "p < 0.001"), (0.6234, "p = 0.62"),
                                     (0.04567, "p = 0.046"), (float("nan"), "p not available")])
def test_fmt_p(p, text):
    assert fd.fmt_p(p) == text


def test_interval_and_decimals():
    assert fd.decimals_for(7.1) == 1 and fd.decimals_for(0.012) == 3
    assert fd.interval(24.12, 38.3, 1) == "24.1–38.3"
    assert fd.interval(-17.3, -14.1, 1) == "−17.3 to −14.1"
    assert fd.fmt(-0.0001, 2) == "0.00"
    assert fd.pretty_unit("g/m**2") == "g/m²"


# -- issue 15: claims only where the data reach ------------------------------------------
def _line_fit(high_seen, factor_high=20.0, limits=(None, None)):
    """Invented: time to clean rises 3 h per % w/v of chelator, baths from 2 to high_seen."""
    import numpy as np
    import pandas as pd

    from trialkit.trial.factors import Factor

    x = np.repeat(np.linspace(2.0, high_seen, 4), 3)
    rng = np.random.default_rng(5)
    df = pd.DataFrame({"chelator": x, "t": 10 + 3 * x + rng.normal(0, 1, x.size)})
    f = Factor.continuous("chelator", 2.0, factor_high, unit="% w/v")
    return fit_model(df, "t", [f], "main", block=None, limits=limits)


def test_effect_is_quoted_over_the_fitted_range_only():
    # fitted on 2-8 % of a declared 2-20 % range: the sentence says 2 to 8 and the change
    # over that range (about 3 h x 6 = 18 h), never 2 to 20 (which would be 54 h)
    sent = fd.model_findings(_line_fit(8.0), unit="h")[0]
    assert "from 2 to 8 % w/v" in sent.text and "to 20 %" not in sent.text
    assert sent.numbers["fitted_range"] == [2.0, 8.0]
    assert 15 < sent.numbers["effect"] < 21
    full = fd.model_findings(_line_fit(20.0), unit="h")[0]
    assert "from 2 to 20 % w/v" in full.text and 50 < full.numbers["effect"] < 58


def test_caveats_scale_holm_reduction_and_weak_model():
    fit = _line_fit(8.0, limits=(0.0, None))
    cav = fd.caveat_findings(fit, unit="h", reduced=True)
    text = " ".join(c.text for c in cav)
    assert "can only lie at or above 0 h" in text and "raw scale" in text
    assert "from the reduced model" in text and "optimistic" in text
    assert not any(c.numbers.get("weak") for c in cav)  # a strong model is not flagged
    two = fit_model(rt_two_terms(), "y", rt_two_factors(), "main", block=None)
    holm = next(c for c in fd.caveat_findings(two) if c.kind == "multiplicity")
    p = fd._anova_p(two)
    assert holm.numbers["n_tested"] == 2
    # Holm (1979): the smaller p times 2, the larger max(previous, itself)
    small, large = sorted(p[k] for k in ("a", "b"))
    assert sorted(holm.numbers["p_holm"].values()) == pytest.approx(
        [min(1, 2 * small), min(1, max(2 * small, large))])
    weak = fit_model(rt_two_terms(noise_only=True), "y", rt_two_factors(), "main",
                     block=None)
    assert any(c.numbers.get("weak") for c in fd.caveat_findings(weak))


def rt_two_factors():
    from trialkit.trial.factors import Factor

    return [Factor.continuous("a", -1, 1), Factor.continuous("b", -1, 1)]


def rt_two_terms(noise_only=False):
    import itertools

    import numpy as np
    import pandas as pd

    pts = list(itertools.product([-1.0, 1.0], [-1.0, 1.0])) * 3
    df = pd.DataFrame(pts, columns=["a", "b"])
    rng = np.random.default_rng(9)
    df["y"] = (0 if noise_only else 3 * df.a + 0.4 * df.b) + rng.normal(0, 1, len(df))
    return df


def test_edge_optimum_says_so():
    import numpy as np
    import pandas as pd

    from trialkit.analysis.sweep import fit_sweep
    from trialkit.trial.factors import Factor

    x = np.repeat([1.0, 3, 5, 7, 9], 3)
    rng = np.random.default_rng(2)
    y = 50 + 4 * x - 0.05 * x ** 2 + rng.normal(0, 1, x.size)  # still rising at 9
    sw = fit_sweep(pd.DataFrame({"chelator": x, "r": y}), "r",
                   Factor.continuous("chelator", 1, 9), n_boot=0)
    cav = fd.caveat_findings(sw.fit, sweep=sw)
    edge = next(c for c in cav if c.kind == "edge")
    assert "at the edge" in edge.text and "extend the range" in edge.text


def test_lenth_p_values_are_labelled_approximate():
    import itertools

    import numpy as np
    import pandas as pd

    from trialkit.analysis.effects import two_level_effects
    from trialkit.trial.factors import Factor

    pts = list(itertools.product([-1.0, 1.0], repeat=3))
    df = pd.DataFrame(pts, columns=["a", "b", "c"])
    df["y"] = 10 + 5 * df.a + np.random.default_rng(1).normal(0, 0.3, len(df))
    eff = two_level_effects(df, "y", [Factor.continuous(n, -1, 1) for n in "abc"])
    sentences = fd.effects_findings(eff)
    loud = [s for s in sentences if s.kind == "screening"]
    assert loud and all("approximate p" in s.text and "simultaneous margin" in s.text
                        for s in loud)
