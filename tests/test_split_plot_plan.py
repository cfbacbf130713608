"""Split-plot plans: the ``[whole_plots]`` section, the whole-plot layout and the
minimum-aberration split-plot fractions.

The fraction checks compare trialkit's search with an independent brute force written here
(every assignment of the factors to the non-zero columns of a 2^m full factorial), and the
admissibility conditions with their definitions (Huang, Chen & Voelkel 1998, Technometrics
40: an added whole-plot factor is generated from whole-plot factors; Bingham & Sitter 1999,
Technometrics 41: no defining word with exactly one subplot letter — from memory).
"""

from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest

from trialkit.exceptions import DesignError, TrialFileError
from trialkit.planning.designs.aliasing import defining_words
from trialkit.planning.designs.split_plot_fraction import split_plot_fraction
from trialkit.planning.plan import make_plan
from trialkit.trial.factors import Factor
from trialkit.trial.file import parse_trial_text

TRIAL = '''
[trial]
title = "Tank temperature split plot (invented scenario)"
seed = {seed}
[[factor]]
name = "temperature"
unit = "degC"
low = 20
high = 40
[[factor]]
name = "chelator"
unit = "% w/v"
low = 2
high = 6
[[factor]]
name = "surfactant"
levels = ["none", "added"]
[design]
kind = "full-factorial"
[layout]
replicates = 3
blocks = 3
block_label = "day"
controls = ["untreated"]
[whole_plots]
hard_to_change = ["temperature"]
{extra}
'''


def plan_of(seed=41, extra="tanks_per_block = 3"):
    return make_plan(parse_trial_text(TRIAL.format(seed=seed, extra=extra)))


def test_each_whole_plot_holds_one_setting_and_runs_together():
    plan = plan_of()
    baths = plan.baths
    assert list(baths.columns[:5]) == ["run", "bath", "block", "whole_plot", "point"]
    design = baths[baths["point"] == "factorial"]
    # one setting of the hard-to-change factor per whole plot, 4 baths (2 x 2 subplots) each
    assert design.groupby("whole_plot")["temperature"].nunique().eq(1).all()
    assert design.groupby("whole_plot").size().eq(4).all()
    # every subplot setting once in every whole plot
    assert design.groupby("whole_plot")[["chelator", "surfactant"]].apply(
        lambda g: len(g.drop_duplicates())).eq(4).all()
    # a whole plot's baths are consecutive in run order, and a whole plot lies in one day
    for _, g in baths.groupby("whole_plot"):
        assert g["run"].max() - g["run"].min() == len(g) - 1
        assert g["block"].nunique() == 1
    # 2 temperature tanks + 1 controls tank per day, numbered in run order
    assert baths.groupby("block")["whole_plot"].nunique().eq(3).all()
    assert baths.drop_duplicates("whole_plot")["whole_plot"].tolist() == list(range(1, 10))
    assert "whole_plot" in plan.table.columns and "whole_plot" in plan.csv_text()


def test_same_seed_same_plan_and_both_orders_randomised():
    assert plan_of(41).csv_text() == plan_of(41).csv_text()
    # Over seeds, the first tank of day 1 is sometimes hot, sometimes cold, and the first
    # bath within the first tank takes several subplot settings: both orders are drawn.
    first_tank, first_bath = set(), set()
    for seed in range(1, 31):
        b = plan_of(seed).baths
        tank = b[b["whole_plot"] == 1]
        first_tank.add(str(tank["temperature"].iloc[0]))
        first_bath.add((tank["chelator"].iloc[0], tank["surfactant"].iloc[0]))
    assert len(first_tank) == 3  # 20, 40 or the controls tank (nan)
    assert len(first_bath) >= 3


def test_trial_file_refuses_split_plots_it_cannot_run():
    with pytest.raises(TrialFileError) as err:
        plan_of(extra="tanks_per_block = 2")
    assert "each day needs 3 tank runs" in str(err.value)
    with pytest.raises(TrialFileError) as err:
        parse_trial_text(TRIAL.format(seed=1, extra="").replace(
            '["temperature"]', '["temperature", "chelator", "surfactant"]'))
    assert "nothing to vary within a tank" in str(err.value)
    with pytest.raises(TrialFileError) as err:
        parse_trial_text(TRIAL.format(seed=1, extra="").replace('["temperature"]',
                                                                 '["temprature"]'))
    assert "no factor is called 'temprature'" in str(err.value)
    text = TRIAL.format(seed=1, extra="").replace('kind = "full-factorial"',
                                                   'kind = "latin-hypercube"\nruns = 8')
    with pytest.raises(TrialFileError) as err:
        parse_trial_text(text)
    assert "split-plot plans are built for full-factorial" in str(err.value)


def test_ordinary_trials_keep_their_plans():
    """A trial without [whole_plots] has no whole_plot column (bundled plans unchanged)."""
    text = TRIAL.format(seed=41, extra="").split("[whole_plots]")[0]
    plan = make_plan(parse_trial_text(text))
    assert "whole_plot" not in plan.table.columns


# -- fractions ---------------------------------------------------------------------------
def _brute_force_best(k: int, wp: list[int], m: int, resolution: int):
    """Minimum word-length pattern over every split-plot-admissible regular fraction of
    2^m runs: every choice of m independent (base) factors, whichever they are, and every
    word of two or more base factors for each other factor (any regular fraction can be
    written so).  Independent of trialkit's search, which fixes the base factors."""
    whole = sum(1 << i for i in wp)
    best = None
    for base in itertools.combinations(range(k), m):
        others = [i for i in range(k) if i not in base]
        words = [sum(1 << base[j] for j in range(m) if r >> j & 1) for r in range(1, 2 ** m)]
        words = [w for w in words if bin(w).count("1") >= 2]
        for choice in itertools.permutations(words, len(others)):
            gens = [w | 1 << t for w, t in zip(choice, others, strict=True)]
            group = set()
            for r in range(1, len(gens) + 1):
                for combo in itertools.combinations(gens, r):
                    acc = 0
                    for g in combo:
                        acc ^= g
                    group.add(acc)
            ok = min(bin(w).count("1") for w in group) >= resolution
            for w in group:
                sp, wpn = bin(w & ~whole).count("1"), bin(w & whole).count("1")
                if sp == 1 or (bin(w).count("1") == 3 and wpn == 1 and sp == 2):
                    ok = False
            if ok:
                wlp = tuple(sum(bin(w).count("1") == n for w in group)
                            for n in range(3, k + 1))
                best = wlp if best is None or wlp < best else best
    return best


@pytest.mark.parametrize("k, wp, resolution", [(5, [0, 1], 3), (6, [0, 1], 3),
                                                (6, [0], 4), (5, [0], 3)])
def test_fraction_is_minimum_aberration_and_runnable(k, wp, resolution):
    fs = [Factor.continuous(f"x{i}", 0, 1) for i in range(k)]
    design = split_plot_fraction(fs, [f"x{i}" for i in wp], resolution=resolution)
    x = design.coded.to_numpy(dtype=float)
    n = len(x)
    m = int(np.log2(n))
    words = [w for w, _ in defining_words(x)]
    wlp = tuple(sum(bin(w).count("1") == L for w in words) for L in range(3, k + 1))
    # no smaller run size has an admissible fraction, and at this size trialkit's is the best
    if m - 1 >= 3:
        assert _brute_force_best(k, wp, m - 1, resolution) is None
    assert wlp == _brute_force_best(k, wp, m, resolution)
    assert design.resolution >= resolution
    # the subplot factors vary within every whole plot; the whole-plot settings are
    # replicated equally
    frame = pd.DataFrame(x)
    groups = frame.groupby([frame[i] for i in wp])
    sizes = groups.size()
    assert sizes.nunique() == 1
    for j in range(k):
        if j not in wp:
            assert (groups[j].nunique() == 2).all()


def test_given_generators_that_break_the_whole_plots_are_refused():
    fs = [Factor.continuous(n, 0, 1) for n in ("a", "b", "c", "d")]
    with pytest.raises(DesignError, match="from easy-to-change factors"):
        split_plot_fraction(fs, ["a", "d"], generators=["D = ABC"])
    with pytest.raises(DesignError, match="constant within every tank"):
        split_plot_fraction(fs, ["a", "b"], generators=["D = AB"])
