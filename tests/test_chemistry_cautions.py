"""Safety cautions carried by every recipe."""

from trialkit.chemistry.cautions import GENERAL, cautions_for


def test_general_cautions_always_present_and_defer_to_sds():
    out = cautions_for([])
    assert out == list(GENERAL)
    assert any("safety data sheet" in c for c in out)
    assert any("dispose" in c and "regulations" in c for c in out)
    assert any("eye protection" in c for c in out)


def test_hazard_specific_cautions():
    out = cautions_for(["alkaline", "corrosive_base"])
    assert any("Alkaline" in c for c in out)
    assert any("never water onto the solid" in c for c in out)
    assert not any("hydrogen" in c for c in out)
    assert any("closed container" in c for c in cautions_for([], acidic_bath=True))


def test_a_recipe_without_acid_has_no_acid_caution_and_a_warm_bath_has_the_heated_one():
    # issue 17: the cautions of the recipe at hand, not of every ingredient there is
    from trialkit.chemistry.recipe import BathSpec, make_recipe

    plain = make_recipe(BathSpec("A", 1.0, (("tetrasodium EDTA", "5 % w/v"),),
                                 temperature_c=25.0))
    assert not any("hydrogen" in c for c in plain.cautions)
    assert not any(c.startswith("Heated bath") for c in plain.cautions)
    assert any("Alkaline" in c for c in plain.cautions)
    warm = make_recipe(BathSpec("B", 1.0, (("tetrasodium EDTA", "5 % w/v"),), "citric acid",
                                6.5, temperature_c=40.0))
    assert any(c.startswith("Heated bath") and "top it up with water to the mark" in c
               for c in warm.cautions)
    assert any("hydrogen" in c for c in warm.cautions)      # citric acid is an acid
    assert any("dispose" in c for c in warm.cautions)       # spent baths, always


def test_the_csv_mixing_sheet_starts_with_a_caution(tmp_path):
    from trialkit.chemistry.mixing_sheet import CSV_CAUTION, MixingSheet, recipes_for_plan  # noqa: F401
    from trialkit.planning.plan import load_plan

    root = __import__("pathlib").Path(__file__).resolve().parents[1]
    sheet = recipes_for_plan(load_plan(root / "example_trials" / "chelator-sweep"))
    path = sheet.write_csv(tmp_path / "m.csv")
    first = path.read_text(encoding="utf-8").splitlines()[0]
    assert first == CSV_CAUTION and "safety data sheet" in first
