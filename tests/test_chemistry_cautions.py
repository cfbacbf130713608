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
