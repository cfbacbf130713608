"""The Plan: layout, seeded randomisation, stable ids and the fingerprint."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from trialkit.exceptions import PlanError
from trialkit.planning.plan import make_plan
from trialkit.trial.file import parse_trial_text


def trial_text(kind="full-factorial", replicates=1, blocks=1, center=0, controls="[]",
               coupons=1, witnesses=1, seed=5, extra_design="", factors=None):
    factors = factors or """
[[factor]]
name = "chelator"
unit = "% w/v"
low = 2.0
high = 10.0
[[factor]]
name = "ph"
unit = "pH"
low = 5.5
high = 7.5
[[factor]]
name = "surfactant"
levels = ["none", "added"]
"""
    return f"""
[trial]
title = "Plan test"
seed = {seed}
{factors}
[design]
kind = "{kind}"
{extra_design}
[layout]
replicates = {replicates}
blocks = {blocks}
center_points = {center}
controls = {controls}
coupons_per_bath = {coupons}
witness_coupons = {witnesses}
"""


def plan_of(**kw):
    return make_plan(parse_trial_text(trial_text(**kw)))


def test_columns_and_counts():
    plan = plan_of(replicates=2, center=2, controls='["untreated", "reference"]',
                   coupons=2, witnesses=1)
    t = plan.table
    assert t.columns.tolist() == ["run", "bath", "coupon", "coupon_kind", "block", "point",
                                  "chelator", "ph", "surfactant", "replicate", "std_order"]
    # 2^3 factorial x 2 replicates + 2 centers + 2 controls = 20 baths, 3 coupons each
    assert plan.n_baths == 8 * 2 + 2 + 2
    assert plan.n_coupons == 3 * plan.n_baths
    assert sorted(plan.baths["run"]) == list(range(1, plan.n_baths + 1))
    assert set(t["coupon_kind"]) == {"rusted", "witness"}
    assert t["coupon"].is_unique
    controls = plan.baths[plan.baths["point"].isin(["control", "reference"])]
    assert len(controls) == 2 and controls["chelator"].isna().all()
    centers = plan.baths[plan.baths["point"] == "center"]
    assert (centers["chelator"] == 6.0).all() and (centers["ph"] == 6.5).all()
    # factorial points sit at the natural low/high
    fact = plan.baths[plan.baths["point"] == "factorial"]
    assert set(fact["chelator"]) == {2.0, 10.0} and set(fact["ph"]) == {5.5, 7.5}


def test_same_seed_gives_byte_identical_csv(tmp_path):
    a = plan_of(replicates=2, blocks=2, center=1, controls='["untreated"]')
    b = plan_of(replicates=2, blocks=2, center=1, controls='["untreated"]')
    pa = a.write(tmp_path / "a")
    pb = b.write(tmp_path / "b")
    assert pa.read_bytes() == pb.read_bytes()
    assert a.fingerprint == b.fingerprint and len(a.fingerprint) == 12
    meta = json.loads((tmp_path / "a" / "plan.json").read_text())
    assert meta["fingerprint"] == a.fingerprint and meta["seed"] == 5


def test_another_seed_reorders_the_same_runs():
    a = plan_of(replicates=2, seed=5)
    b = plan_of(replicates=2, seed=6)
    assert a.fingerprint != b.fingerprint
    key = ["bath", "chelator", "ph", "surfactant", "replicate"]
    same = a.baths[key].sort_values("bath").reset_index(drop=True)
    other = b.baths[key].sort_values("bath").reset_index(drop=True)
    pd.testing.assert_frame_equal(same, other)  # stable bath ids, same content
    assert a.baths["bath"].tolist() != b.baths["bath"].tolist()  # different order


@settings(max_examples=25, deadline=None)
@given(replicates=st.integers(1, 4), seed=st.integers(0, 2**31), coupons=st.integers(1, 3),
       witnesses=st.integers(0, 2))
def test_replicates_multiply_baths_exactly(replicates, seed, coupons, witnesses):
    plan = plan_of(replicates=replicates, seed=seed, coupons=coupons, witnesses=witnesses)
    assert plan.n_baths == 8 * replicates
    assert plan.n_coupons == plan.n_baths * (coupons + witnesses)
    counts = plan.baths.groupby(["chelator", "ph", "surfactant"]).size()
    assert (counts == replicates).all()


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 2**31), blocks=st.sampled_from([2, 4]))
def test_randomisation_permutes_within_blocks_only(seed, blocks):
    plan = plan_of(replicates=blocks, blocks=blocks, center=1, controls='["untreated"]',
                   seed=seed)
    b = plan.baths
    # runs of block 1 all come before block 2, and so on
    assert b["block"].is_monotonic_increasing
    # every block holds one complete replicate plus its center point and control
    for _, group in b.groupby("block"):
        assert (group["point"] == "factorial").sum() == 8
        assert (group["point"] == "center").sum() == 1
        assert (group["point"] == "control").sum() == 1


def test_two_level_blocks_confound_the_highest_interaction():
    plan = plan_of(blocks=2)
    assert plan.n_blocks == 2
    assert plan.confounded_with_blocks, "a split 2^3 names what it confounds"
    coded = plan.coded.loc[plan.baths["bath"]]
    x = np.column_stack([coded["chelator"].astype(float), coded["ph"].astype(float),
                         np.where(coded["surfactant"] == "added", 1.0, -1.0)])
    abc = x.prod(axis=1)
    block = plan.baths["block"].to_numpy()
    # the three-factor interaction is constant within each block (confounded) ...
    assert all(len(set(abc[block == k])) == 1 for k in (1, 2))
    # ... and every main effect is balanced within each block (not confounded)
    for j in range(3):
        for k in (1, 2):
            assert x[block == k, j].sum() == 0


def test_axial_points_that_cannot_be_mixed_are_refused():
    factors = """
[[factor]]
name = "chelator"
unit = "% w/v"
low = 0.5
high = 10.0
[[factor]]
name = "ph"
unit = "pH"
low = 5.5
high = 7.5
"""
    with pytest.raises(PlanError) as info:
        plan_of(kind="central-composite", factors=factors, witnesses=0)
    assert "face" in str(info.value) and "chelator" in str(info.value)


def test_plan_to_dict_has_the_cli_keys():
    d = plan_of().to_dict()
    for key in ("baths", "coupons", "blocks", "seed", "fingerprint", "design", "factors"):
        assert key in d
    json.dumps(d)  # plain data


def test_optimal_design_from_a_trial_file_honours_its_constraint():
    factors = """
[[factor]]
name = "chelator"
unit = "% w/v"
low = 2
high = 10
[[factor]]
name = "ph"
unit = "pH"
low = 5
high = 8
"""
    plan = plan_of(kind="optimal", factors=factors,
                   extra_design='runs = 10\nmodel = "quadratic"\n'
                                'constraints = ["ph >= 5.2 + 0.15*chelator"]')
    assert plan.n_baths == 10
    b = plan.baths
    assert (b["point"] == "optimal").all()
    # every bath satisfies the linear constraint (natural units); rounding to 6 digits
    assert (b["ph"] >= 5.2 + 0.15 * b["chelator"] - 1e-4).all()


# -- outputs: formula-safe text, no writing through links, --out that is a file -----------
FORMULA_LEVELS = """
[trial]
title = "Formula-like levels, invented example"
seed = 3
[[factor]]
name = "rinse"
levels = ["=1+1", "@home", "plain"]
[design]
kind = "full-factorial"
"""


def test_plan_csv_escapes_formula_like_text_as_the_sheets_do(tmp_path):
    from trialkit.records.sheets.export_csv import escape_text as sheet_escape

    plan = make_plan(parse_trial_text(FORMULA_LEVELS))
    plan.write(tmp_path)
    table = pd.read_csv(tmp_path / "plan.csv", dtype=str)
    assert set(table["rinse"]) == {sheet_escape("=1+1"), sheet_escape("@home"), "plain"}
    assert set(table["rinse"]) == {"'=1+1", "'@home", "plain"}
    assert set(plan.table["rinse"]) == {"=1+1", "@home", "plain"}  # the plan keeps the text


def test_plan_through_a_symlink_is_refused_and_the_target_kept(tmp_path):
    target = tmp_path / "precious.txt"
    target.write_text("do not overwrite")
    out = tmp_path / "out"
    out.mkdir()
    (out / "plan.csv").symlink_to(target)
    plan = make_plan(parse_trial_text(trial_text()))
    with pytest.raises(PlanError, match="is a symbolic link; trialkit does not write through"):
        plan.write(out)
    assert target.read_text() == "do not overwrite"


def test_plan_out_that_is_a_file_is_a_clear_message(tmp_path, capsys):
    from trialkit.cli import main

    (tmp_path / "trial.toml").write_text(trial_text())
    a_file = tmp_path / "taken.txt"
    a_file.write_text("x")
    assert main(["plan", str(tmp_path), "--out", str(a_file)]) == 2
    err = capsys.readouterr().err
    assert "is a file, not a folder" in err and "Traceback" not in err
    assert a_file.read_text() == "x"
    existing = tmp_path / "existing"
    existing.mkdir()
    assert main(["plan", str(tmp_path), "--out", str(existing)]) == 0
    assert (existing / "plan.csv").exists()


def test_plan_csv_folder_in_the_way_is_a_clear_message(tmp_path):
    (tmp_path / "plan.csv").mkdir()
    plan = make_plan(parse_trial_text(trial_text()))
    with pytest.raises(PlanError, match="plan.csv is a folder"):
        plan.write(tmp_path)
