"""Cost responses come from the recipes, and unknown measures are refused at plan time.

The cost of a bath is checked by hand against the catalogue's prices: grams of each
ingredient times its price per gram (``trialkit/data/ingredients.toml``), summed."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from trialkit.chemistry.mixing_sheet import recipes_for_plan
from trialkit.cli import main
from trialkit.planning.plan import load_plan
from trialkit.responses.bath_cost import COST_MEASURES, bath_costs, cost_unit
from trialkit.responses.measures import known_measures

EXAMPLES = Path(__file__).resolve().parents[1] / "example_trials"


def test_each_bath_costs_what_its_recipe_costs():
    plan = load_plan(EXAMPLES / "surface-follow-up")
    costs = bath_costs(plan).set_index("bath")
    sheet = recipes_for_plan(plan)
    assert set(costs.index) == set(plan.baths.bath.astype(str))
    for bath, i in list(sheet.bath_recipe.items())[:4]:
        r = sheet.recipes[i - 1]
        by_hand = sum(ln.cost for ln in r.lines)            # grams x price per gram
        assert costs.loc[bath, "cost_per_bath"] == pytest.approx(by_hand, rel=1e-12)
        assert costs.loc[bath, "cost_per_l"] == pytest.approx(by_hand / r.volume_l)
    # more chelator costs more at the same pH (the chelator is the dearest ingredient)
    b = plan.baths.astype({"bath": str}).set_index("bath")
    at_ph6 = b[(b.ph == 6.0) & b.chelator.notna()]
    by_chel = costs.loc[at_ph6.index, "cost_per_l"].groupby(at_ph6.chelator).mean()
    assert by_chel.is_monotonic_increasing and len(by_chel) >= 2


def test_the_surface_example_trades_removal_attack_and_computed_cost():
    # issue 16: the cost response is no longer "not available"; it enters the compromise
    import report_trials as rt

    data, _ = rt.analysed("example:surface-follow-up")
    assert data.baths["cost"].notna().sum() >= 20
    assert "cost" in data.fits
    assert data.desirability is not None
    names = [a.response for a in data.desirability.aims]
    assert {"removal", "attack", "cost"} <= set(names)
    # the trial file leaves the unit blank; the catalogue's one currency gives it (issue 17)
    assert data.specs["cost"].unit == "" and data.unit("cost") == "EUR/L"
    said = [f["text"] for f in rt.report_of("example:surface-follow-up").findings
            if f["response"] == "cost" and f["kind"] == "effect"]
    assert said and all(" EUR/L (95 % CI" in t for t in said)


def test_a_cost_unit_names_one_currency_or_none():
    assert cost_unit("cost_per_m2", ["USD"]) == "USD/m²"
    assert cost_unit("cost_per_bath", ["EUR"]) == "EUR per bath"
    assert cost_unit("cost_per_l", ["EUR", "USD"]) == "per L"      # no exchange rates assumed
    assert cost_unit("cost_per_l", [None]) == "per L"


def test_unknown_measure_is_refused_at_plan_time_with_a_suggestion(tmp_path, capsys):
    folder = tmp_path / "t"
    shutil.copytree(EXAMPLES / "chelator-sweep", folder)
    text = (folder / "trial.toml").read_text(encoding="utf-8")
    (folder / "trial.toml").write_text(text.replace('measure = "removal_pct"',
                                                    'measure = "removal_percent"'),
                                       encoding="utf-8")
    before = (folder / "plan.csv").read_bytes()
    assert main(["plan", str(folder)]) == 1          # refused, the problems listed
    err = capsys.readouterr().err
    assert "unknown measure 'removal_percent'" in err and "removal_pct" in err
    assert (folder / "plan.csv").read_bytes() == before


def test_new_lists_the_measures(capsys):
    assert main(["new", "--measures"]) == 0
    out = capsys.readouterr().out
    for name in [*COST_MEASURES, "removal_pct", "corrosion_rate_mm_per_y", "time_to_90_h"]:
        assert name in out
    assert set(COST_MEASURES) <= set(known_measures())
