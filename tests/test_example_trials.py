"""The example trials in example_trials/: they plan, and their checked-in plan and
invented readings are exactly what their seeded generators make now (so they cannot
drift from the generator or the truth model).  Behaviour checks on the invented data are
against the truth model's own trade-shaped claims (common practice), not external data.
"""

from __future__ import annotations

import json
import runpy
from pathlib import Path

import pandas as pd
import pytest

from trialkit.demo.truth_models import EXAMPLES
from trialkit.planning.plan import load_plan

REPO = Path(__file__).resolve().parents[1]
ROOT = REPO / "example_trials"
FOLDERS = ["chelator-sweep", "five-factor-screen", "surface-follow-up"]
MEASURES = {"removal_pct", "rust_removed_g_per_m2", "corrosion_rate_mm_per_y",
            "mass_loss_g_per_m2", "time_to_90_h", "cost_per_l"}
#: Trade-mark and registered-mark signs must not appear (project rule: no product names).
FORBIDDEN = ("\u2122", "\u00ae")


def _files(folder: Path) -> dict[str, bytes]:
    names = ["plan.csv", "plan.json"] + [f"readings/{p.name}"
                                         for p in sorted((folder / "readings").glob("*"))]
    return {n: (folder / n).read_bytes() for n in names}


@pytest.fixture(scope="module", params=FOLDERS)
def regenerated(request, tmp_path_factory):
    name = request.param
    out = tmp_path_factory.mktemp(name)
    main = runpy.run_path(str(ROOT / "generate_readings.py"))["main"]
    assert main([str(ROOT / name), "--out", str(out)]) == 0
    return name, out / name


def test_checked_in_files_equal_what_the_generator_makes(regenerated):
    name, out = regenerated
    mine, fresh = _files(ROOT / name), _files(out)
    assert sorted(mine) == sorted(fresh)
    for key in mine:
        assert mine[key] == fresh[key], f"{name}/{key} differs from its generator's output"


@pytest.mark.parametrize("name", FOLDERS)
def test_each_folder_plans_to_its_checked_in_plan(name, tmp_path):
    plan = load_plan(ROOT / name)
    plan.write(tmp_path)
    assert (tmp_path / "plan.csv").read_bytes() == (ROOT / name / "plan.csv").read_bytes()
    assert plan.n_coupons == len(_readings(name))


def test_trialkit_plan_command_works_on_an_example_folder(tmp_path, cli):
    # one folder through the real command line (each run starts a fresh interpreter)
    name = "five-factor-screen"
    proc = cli("plan", str(ROOT / name), "--out", str(tmp_path), "--json")
    assert proc.returncode == 0, proc.stderr
    data = json.loads(proc.stdout)
    assert data["fingerprint"] == load_plan(ROOT / name).fingerprint
    assert (tmp_path / "plan.csv").read_bytes() == (ROOT / name / "plan.csv").read_bytes()


@pytest.mark.parametrize("name", FOLDERS)
def test_each_folder_says_its_data_are_invented(name):
    plan = load_plan(ROOT / name)
    assert "invented" in plan.trial.notes.lower() and "invented" in plan.trial.title.lower()
    readme = (ROOT / name / "README.md").read_text(encoding="utf-8").lower()
    assert "invented" in readme and "truth model" in readme
    assert {r.measure for r in plan.trial.responses} <= MEASURES
    for path in [*(ROOT / name).rglob("*"), ROOT / "README.md"]:
        if path.is_file():
            text = path.read_text(encoding="utf-8").lower()
            assert not [w for w in FORBIDDEN if w in text], path


@pytest.mark.parametrize("name", FOLDERS)
def test_truth_file_matches_the_scenario(name):
    truth = json.loads((ROOT / name / "readings" / "truth.json").read_text(encoding="utf-8"))
    sc = EXAMPLES[name]
    assert truth["seed"] == sc.seed and truth["invented"] is True
    assert truth["model"]["chelator_optimum"] == sc.truth.chelator_optimum
    assert truth["plan_fingerprint"] == load_plan(ROOT / name).fingerprint


def _readings(name: str) -> pd.DataFrame:
    return pd.read_csv(ROOT / name / "readings" / "coupons.csv")


def test_sweep_controls_and_attack_behave_as_the_trade_reports():
    # common practice: water removes almost nothing; near-neutral baths barely attack
    # steel (iron's corrosion rate against pH, Whitman, Russell & Altieri 1924, from memory)
    c = _readings("chelator-sweep")
    hours = EXAMPLES["chelator-sweep"].immersion_h
    rusted = c[c["coupon_kind"] == "rusted"]
    removal = 100 * (1 - rusted["coverage_after_pct"] / rusted["coverage_before_pct"])
    control = removal[rusted["point"] == "control"].max()
    assert control < 10 and removal[rusted["point"] == "sweep"].min() > 3 * control
    w = c[(c["coupon_kind"] == "witness")]
    cr = 8.76e4 * (w["mass_initial_g"] - w["mass_final_g"]) / (w["area_cm2"] * hours * 7.86)
    assert cr[w["point"] == "sweep"].max() < 0.2 < cr[w["point"] == "reference"].min()


def test_surface_acidic_baths_attack_the_steel():
    # pH below 5 attacks bare steel, near-neutral baths barely do (iron's corrosion rate
    # against pH, Whitman, Russell & Altieri 1924, from memory)
    c = _readings("surface-follow-up")
    w = c[(c["coupon_kind"] == "witness") & (c["point"] != "reference")]
    cr = 8.76e4 * (w["mass_initial_g"] - w["mass_final_g"]) / (w["area_cm2"] * 8 * 7.86)
    assert cr[w["ph"] == 4.5].min() > 5 * cr[w["ph"] == 7.5].max()


def test_surface_confirmation_readings_are_at_the_stated_recipe():
    conf = pd.read_csv(ROOT / "surface-follow-up" / "readings" / "confirmation.csv")
    recipe = EXAMPLES["surface-follow-up"].confirmation_recipe
    assert set(conf["point"]) == {"confirmation"}
    assert (conf["chelator"] == recipe["chelator"]).all() and (conf["ph"] == recipe["ph"]).all()
    assert conf["immersion_start"].str.startswith("2026-11-04").all()  # the day after day 2
