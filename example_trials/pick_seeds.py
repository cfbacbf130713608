"""How the readings seeds of the example trials were chosen (invented data; run to check).

Usage (from the repository root)::

    python example_trials/pick_seeds.py

Any seed gives readings drawn from the same invented truth model; by chance a few show a
null factor as significant (about 1 in 20 at alpha = 0.05, which is what alpha means) or
an optimum off the truth. Teaching data should show the truth, so for each example the
seed in ``trialkit/demo/truth_models.py`` is the first one from the scenario's starting seed up
for which these plain checks (independent of trialkit's analysis: numpy least squares and
statsmodels OLS on the raw readings) agree with the truth:

- chelator-sweep: a quadratic in chelator fitted to each bath's time to 90 % removal
  (ln 10 / k from a first-order fit through the origin of log coverage) has its vertex
  within its 95 % delta-method interval of the true optimum, and the untreated control
  removes under 10 %;
- five-factor-screen: in main-effect regressions of the log first-order rate, the removal
  percentage and the log witness corrosion rate, every factor the truth uses has
  p < 0.05 and every other factor p > 0.05;
- surface-follow-up: the desirability optimum of quadratic fits (removal 50..90 % up,
  attack 0.05..0.30 mm/y down) lies within 0.5 % w/v and 0.25 pH of the true one;
- tank-split-plot: in statsmodels MixedLM fits (tank run as a random intercept, day
  fixed) of the bath means of removal and of the log witness corrosion rate, every
  factor the truth uses has p < 0.05 and every other factor p > 0.05.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
START = {"chelator-sweep": 8201, "five-factor-screen": 8102, "surface-follow-up": 8103,
         "tank-split-plot": 8301}


def _rates(sim):
    c = sim.coupons.copy()
    before = c.set_index("coupon")["coverage_before_pct"]
    rate = {}
    for coupon, g in sim.timecourse.groupby("coupon"):
        y = np.log(np.maximum(g["coverage_pct"].to_numpy(), 0.5) / before[coupon])
        x = g["elapsed_h"].to_numpy()
        rate[coupon] = -np.sum(x * y) / np.sum(x * x)
    c["k"] = c["coupon"].map(rate)
    return c


def _witness_log_cr(c, hours):
    w = c[(c["coupon_kind"] == "witness") & ~c["point"].isin(["control", "reference"])].copy()
    w["lcr"] = np.log(8.76e4 * (w["mass_initial_g"] - w["mass_final_g"])
                      / (w["area_cm2"] * hours * 7.86))
    return w


def check_sweep(sim, sc) -> bool:
    import statsmodels.formula.api as smf
    c = _rates(sim)
    r = c[(c["coupon_kind"] == "rusted") & (c["point"] == "sweep")]
    bath = r.groupby(["bath", "chelator", "block"], as_index=False)["k"].mean()
    bath["t90"] = np.log(10.0) / bath["k"]  # the truth makes this a parabola in chelator
    m = smf.ols("t90 ~ chelator + I(chelator**2)", data=bath).fit()
    b1, b2 = m.params["chelator"], m.params["I(chelator ** 2)"]
    v = m.cov_params().loc[["chelator", "I(chelator ** 2)"], ["chelator", "I(chelator ** 2)"]]
    grad = np.array([-1 / (2 * b2), b1 / (2 * b2 ** 2)])
    se = float(np.sqrt(grad @ v.to_numpy() @ grad))
    opt = -b1 / (2 * b2)
    ctrl = c[(c["coupon_kind"] == "rusted") & (c["point"] == "control")]
    removal = 100 * (1 - ctrl["coverage_after_pct"] / ctrl["coverage_before_pct"])
    return b2 > 0 and abs(opt - sc.truth.chelator_optimum) < 1.96 * se and removal.max() < 10


def check_screen(sim, sc) -> bool:
    import statsmodels.formula.api as smf
    c = _rates(sim)
    r = c[(c["coupon_kind"] == "rusted") & (c["point"] == "factorial")].copy()
    r["lk"] = np.log(r["k"])
    r["removal"] = 100 * (1 - r["coverage_after_pct"] / r["coverage_before_pct"])
    keys = ["bath", "chelator", "ph", "temperature", "surfactant", "agitation"]
    bath = r.groupby(keys, as_index=False)[["lk", "removal"]].mean()
    w = _witness_log_cr(c[c["point"] != "center"], sc.immersion_h)
    terms = {"chelator": "chelator", "ph": "ph", "temperature": "temperature",
             "surfactant": "C(surfactant)[T.none]", "agitation": "C(agitation)[T.periodic]"}
    real = sc.truth.real_effects(terms)
    for resp, data, kind in (("lk", bath, "removal"), ("removal", bath, "removal"),
                             ("lcr", w, "corrosion")):
        m = smf.ols(f"{resp} ~ chelator + ph + temperature + C(surfactant) + C(agitation)",
                    data=data).fit()
        for name, term in terms.items():
            if (m.pvalues[term] < 0.05) != (name in real[kind]):
                return False
    return True


def check_surface(sim, sc) -> bool:
    import pandas as pd
    import statsmodels.formula.api as smf

    from trialkit.demo.truth_models import surface_desirability
    c = sim.coupons
    r = c[(c["coupon_kind"] == "rusted") & (c["point"] != "reference")].copy()
    r["removal"] = 100 * (1 - r["coverage_after_pct"] / r["coverage_before_pct"])
    bath = r.groupby(["bath", "chelator", "ph", "block"], as_index=False)["removal"].mean()
    w = _witness_log_cr(c, sc.immersion_h)
    f = " ~ chelator + ph + I(chelator**2) + I(ph**2) + chelator:ph + C(block)"
    m1, m2 = smf.ols("removal" + f, data=bath).fit(), smf.ols("lcr" + f, data=w).fit()
    g1, g2 = np.meshgrid(np.linspace(3, 7, 81), np.linspace(4.5, 7.5, 121), indexing="ij")
    grid = pd.DataFrame({"chelator": g1.ravel(), "ph": g2.ravel(), "block": 1})
    d = np.sqrt(np.clip((m1.predict(grid) - 50) / 40, 0, 1)
                * np.clip((0.30 - np.exp(m2.predict(grid))) / 0.25, 0, 1))
    i = int(np.argmax(d.to_numpy()))
    true = sc.truth.best_on_grid({"chelator": (3, 7), "ph": (4.5, 7.5)}, surface_desirability,
                                 points=121)["conditions"]
    return (abs(grid["chelator"][i] - true["chelator"]) <= 0.5
            and abs(grid["ph"][i] - true["ph"]) <= 0.25)


def check_split_plot(sim, sc) -> bool:
    import statsmodels.formula.api as smf
    c = sim.coupons
    r = c[c["coupon_kind"] == "rusted"].copy()
    r["removal"] = 100 * (1 - r["coverage_after_pct"] / r["coverage_before_pct"])
    keys = ["bath", "block", "whole_plot", "chelator", "temperature", "surfactant"]
    bath = r.groupby(keys, as_index=False)["removal"].mean()
    w = _witness_log_cr(c, sc.immersion_h)
    terms = {"temperature": "temperature", "chelator": "chelator",
             "surfactant": "C(surfactant)[T.none]"}
    real = sc.truth.real_effects(terms)
    for resp, data, kind in (("removal", bath, "removal"), ("lcr", w, "corrosion")):
        m = smf.mixedlm(f"{resp} ~ temperature + chelator + C(surfactant) + C(block)",
                        data, groups=data["whole_plot"]).fit(reml=True)
        for name, term in terms.items():
            if (m.pvalues[term] < 0.05) != (name in real[kind]):
                return False
    return True


CHECKS = {"chelator-sweep": check_sweep, "five-factor-screen": check_screen,
          "surface-follow-up": check_surface, "tank-split-plot": check_split_plot}


def first_good_seed(name: str, tries: int = 50) -> int:
    """The first seed from START[name] whose readings pass the scenario's check."""
    from trialkit.demo.simulate import simulate_readings
    from trialkit.demo.truth_models import EXAMPLES
    from trialkit.planning.plan import load_plan
    sc, plan = EXAMPLES[name], load_plan(HERE / name)
    for seed in range(START[name], START[name] + tries):
        sim = simulate_readings(plan, sc.truth, seed=seed, inspections_h=sc.inspections_h,
                                immersion_h=sc.immersion_h)
        if CHECKS[name](sim, sc):
            return seed
    raise RuntimeError(f"no seed of {tries} passed for {name}")


def main() -> int:
    try:
        import trialkit  # noqa: F401
    except ModuleNotFoundError:
        sys.path.insert(0, str(HERE.parent))
    from trialkit.demo.truth_models import EXAMPLES
    for name in CHECKS:
        seed = first_good_seed(name)
        used = EXAMPLES[name].seed
        print(f"{name}: first passing seed {seed}; trialkit uses {used}"
              + ("" if seed == used else "  <-- differs"))
    return 0


if __name__ == "__main__":
    sys.exit(main())
