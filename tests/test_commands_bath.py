"""``trialkit bath`` run as a real subprocess."""

import json

JSON_KEYS = {"bath", "volume_l", "ingredients", "target_ph", "predicted_ph",
             "ionic_strength", "cost", "currency", "capacity_g_fe_per_l", "cautions"}


def test_bath_json(cli):
    r = cli("bath", "--volume", "2 L", "--add", "tetrasodium EDTA=5 % w/v", "--ph", "6.5",
            "--adjust-with", "citric acid", "--temperature", "25 degC", "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert JSON_KEYS <= set(d)
    assert d["volume_l"] == 2.0 and d["target_ph"] == 6.5
    assert abs(d["predicted_ph"] - 6.5) < 0.01
    assert [x["name"] for x in d["ingredients"]] == ["tetrasodium EDTA", "citric acid"]
    assert all({"name", "grams", "basis"} <= set(x) for x in d["ingredients"])
    assert d["currency"] == "EUR" and d["cost"] > 0
    assert any("eye protection" in c for c in d["cautions"])


def test_bath_text_output_has_cautions(cli):
    r = cli("bath", "--volume", "1 L", "--add", "tetrasodium EDTA=5 % w/v")
    assert r.returncode == 0, r.stderr
    assert "Cautions:" in r.stdout and "pH meter" in r.stdout


def test_unknown_ingredient_suggests(cli):
    r = cli("bath", "--volume", "1 L", "--add", "citrik acid=1 % w/v", "--json")
    assert r.returncode == 2
    assert "did you mean 'citric acid'" in r.stderr and "Traceback" not in r.stderr


def test_unreachable_ph_gives_range(cli):
    r = cli("bath", "--volume", "1 L", "--add", "tetrasodium EDTA=5 % w/v", "--ph", "3",
            "--adjust-with", "vinegar", "--json")
    assert r.returncode == 2
    assert "cannot be reached" in r.stderr and "give pH" in r.stderr


def test_bad_amount(cli):
    r = cli("bath", "--volume", "1 L", "--add", "citric acid=120 % w/v")
    assert r.returncode == 2 and "over 100" in r.stderr
