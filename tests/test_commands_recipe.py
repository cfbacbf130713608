"""``trialkit recipe`` run as a real subprocess on a trial file in tmp_path."""

import json

import pandas as pd

TRIAL = """
[trial]
title = "invented example"
seed = 3
[[factor]]
name = "chelator"
unit = "% w/v"
low = 3.0
high = 5.0
[design]
kind = "full-factorial"
[layout]
controls = ["untreated"]
coupons_per_bath = 1
[coupons]
shape = "given"
area = 40
[bath]
adjust_with = "citric acid"
target_ph = 6.5
[[bath.ingredient]]
name = "tetrasodium EDTA"
factor = "chelator"
"""


def test_recipe_writes_csv_and_html(tmp_path, cli):
    (tmp_path / "trial.toml").write_text(TRIAL, encoding="utf-8")
    r = cli("recipe", str(tmp_path / "trial.toml"))
    assert r.returncode == 0, r.stderr
    csv = pd.read_csv(tmp_path / "mixing_sheet.csv", skiprows=1)  # after the caution line
    assert set(csv.bath) == {"B01", "B02", "B03"}
    html = (tmp_path / "mixing_sheet.html").read_text()
    assert "<h1>Mixing sheet: invented example</h1>" in html
    assert "hydrogen" in r.stdout


def test_recipe_json_and_out(tmp_path, cli):
    (tmp_path / "trial.toml").write_text(TRIAL, encoding="utf-8")
    out = tmp_path / "sheets"
    r = cli("recipe", str(tmp_path), "--out", str(out), "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert (out / "mixing_sheet.csv").exists()
    # 40 cm2 x 20 mL/cm2 = 0.8 L -> 1 L container
    assert {x["volume_l"] for x in d["recipes"]} == {1.0}
    by_id = {x["bath"]: x for x in d["recipes"]}
    assert len(by_id) == 3
    for rec in d["recipes"]:
        if rec["target_ph"] is not None:
            assert abs(rec["predicted_ph"] - 6.5) < 0.01
