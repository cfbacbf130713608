"""PHREEQC speciation against buffer tables, handbook constants and the activity model."""

import json
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy.optimize import brentq

from trialkit.chemistry import speciation
from trialkit.chemistry.speciation import davies_log_gamma, limiting_law_log_gamma, solve

REF = Path(__file__).parent / "reference" / "chem"


def test_redeclaration_gives_davies_activity_to_h2edta():
    # 5 % w/v disodium EDTA dihydrate (0.1343 mol/L), I about 0.4 mol/kg.
    r = solve([{"Na": 0.2686, "Edta": 0.1343}], gamma_species=("H2(Edta)-2",))[0]
    i = r.ionic_strength
    lg = r.log_gamma["H2(Edta)-2"]
    assert lg == pytest.approx(davies_log_gamma(2, i), abs=0.01)
    assert abs(lg - limiting_law_log_gamma(2, i)) > 0.5


def test_gamma_claim_at_ionic_strength_0_3():
    # Issue 3 / reference notes: at I = 0.306, Davies gives -0.54, the limiting law -1.13.
    assert davies_log_gamma(2, 0.306) == pytest.approx(-0.54, abs=0.01)
    assert limiting_law_log_gamma(2, 0.306) == pytest.approx(-1.13, abs=0.01)


def test_shipped_database_without_redeclaration_uses_limiting_law():
    import phreeqc

    p = phreeqc.Phreeqc()
    p.LoadBuiltInDatabase("minteq.v4.dat")
    p.RunString("SELECTED_OUTPUT 1\n -reset false\n -ionic_strength true\n"
                " -activities H2(Edta)-2\n -molalities H2(Edta)-2\n"
                "SOLUTION 1\n units mol/l\n density 1\n pH 7 charge\n Na 0.2686\n"
                " Edta 0.1343\nEND\n")
    out = p.GetSelectedOutput()
    lg = out["la_H2(Edta)-2"][0] - math.log10(out["m_H2(Edta)-2(mol/kgw)"][0])
    assert lg == pytest.approx(limiting_law_log_gamma(2, out["mu"][0]), abs=0.02)


def test_disodium_edta_ph_moves_with_the_redeclaration():
    # Issue 3: 5 % disodium EDTA is about pH 4.2 with Davies activity (3.4 as shipped).
    r = solve([{"Na": 0.2686, "Edta": 0.1343}])[0]
    assert r.ph == pytest.approx(4.2, abs=0.1)


def test_redeclared_species_cover_edta_and_citrate_protonation():
    names = speciation.redeclared_species()
    for sp in ("H(Edta)-3", "H2(Edta)-2", "H3(Edta)-", "H(Citrate)-2", "H2(Citrate)-",
               "Na(Edta)-3", "Fe(Edta)-"):
        assert sp in names
    assert "-gamma" not in speciation.redeclaration_block()


def _mcilvaine():
    t = pd.read_csv(REF / "buffer_tables_vs_phreeqc.csv")
    return t[t["table"] == "McIlvaine_1921"]


def test_mcilvaine_buffer_table_all_rows():
    # McIlvaine (1921) J. Biol. Chem. 49:183, every row of the table.
    t = _mcilvaine()
    comps = [{"Na": r.Na_mol_L, "P": r.phosphate_mol_L, "Citrate": r.citrate_mol_L}
             for r in t.itertuples()]
    ph = np.array([r.ph for r in solve(comps, 25.0)])
    err = ph - t["table_pH"].to_numpy()
    rmse = float(np.sqrt(np.mean(err**2)))
    print(f"McIlvaine table: {len(t)} rows, RMSE {rmse:.3f} pH, max |error| "
          f"{np.max(np.abs(err)):.3f}")
    assert len(t) == 30
    assert np.all(np.abs(err) < 0.25)
    assert rmse < 0.15


def test_mcilvaine_with_sit_database():
    t = _mcilvaine()
    comps = [{"Na": r.Na_mol_L, "P": r.phosphate_mol_L, "Citrate": r.citrate_mol_L}
             for r in t.itertuples()]
    ph = np.array([r.ph for r in solve(comps, 25.0, database="sit.dat")])
    rmse = float(np.sqrt(np.mean((ph - t["table_pH"].to_numpy()) ** 2)))
    print(f"McIlvaine table with sit.dat: RMSE {rmse:.3f} pH")
    assert rmse < 0.1


def _citric_ph_davies(c, pka=(3.127, 4.759, 6.397)):
    """pH of c mol/L citric acid from handbook pKa with Davies activity (own solver)."""
    k = [10 ** -p for p in pka]
    i = 0.0
    for _ in range(50):
        s = math.sqrt(i)
        f = 0.5085 * (s / (1 + s) - 0.3 * i)
        g1, g2, g3 = 10 ** -f, 10 ** (-4 * f), 10 ** (-9 * f)

        def balance(ph, g1=g1, g2=g2, g3=g3):
            ah = 10 ** -ph
            h = ah / g1
            # conditional constants
            k1, k2, k3 = k[0] / (g1 * g1), k[1] * g1 / (g1 * g2), k[2] * g2 / (g1 * g3)
            d = h**3 + k1 * h**2 + k1 * k2 * h + k1 * k2 * k3
            a1, a2, a3 = k1 * h**2 / d, k1 * k2 * h / d, k1 * k2 * k3 / d
            return h - c * (a1 + 2 * a2 + 3 * a3) - 1e-14 / ah
        ph = brentq(balance, 0.5, 7.0)
        h = 10 ** -ph / g1
        k1 = k[0] / (g1 * g1)
        frac = k1 * h**2 / (h**3 + k1 * h**2)
        i = 0.5 * (h + c * frac)
    return ph


def test_citric_acid_0_1_molar_against_handbook_constants():
    # pKa 3.127, 4.759, 6.397: Bénézeth, Palmer & Wesolowski (1997) J. Solution Chem.
    # 26:63 (tests/reference/chem/acid_base_complexation_constants.json); pH computed
    # here independently of PHREEQC with the Davies equation.
    expected = _citric_ph_davies(0.1)
    got = solve([{"Citrate": 0.1}])[0].ph
    assert 2.0 < expected < 2.15
    assert got == pytest.approx(expected, abs=0.02)


def test_pka_in_database_match_the_handbook():
    data = json.loads((REF / "acid_base_complexation_constants.json").read_text())
    bates = data["citric_acid"][0]["pKa"]  # Bates & Pinching (1949)
    text = speciation.redeclaration_block()
    assert "H+ + Citrate-3 = H(Citrate)-2\n    log_k 6.396" in text
    assert bates[2] == pytest.approx(6.396, abs=0.001)


def test_phreeqc_failure_names_the_bath():
    from trialkit.exceptions import ChemistryError

    # 80 mol/L of sodium leaves no water: PHREEQC refuses it
    with pytest.raises(ChemistryError, match="bath B07.*[Mm]ass of water"):
        solve([{"Na": 80.0}], label="bath B07")
    assert solve([{"Citrate": 0.1}])[0].ph < 3  # the engine still works afterwards
    with pytest.raises(ChemistryError, match="unknown master species 'Nonsense'"):
        solve([{"Nonsense": 1.0}])


def test_several_solutions_one_call():
    before = speciation.call_count()
    solve([{"Citrate": 0.01 * k} for k in range(1, 11)])
    assert speciation.call_count() - before == 1


def test_own_oxalate_definition_matches_sit_dat():
    # minteq.v4 lacks oxalate; ours copies sit.dat's constants (Hummel et al. 2005,
    # NEA-TDB), so a dilute solution must give the same pH in both databases.
    a = solve([{"Oxalate": 0.01}])[0].ph
    b = solve([{"Oxalate": 0.01}], database="sit.dat")[0].ph
    assert a == pytest.approx(b, abs=0.01)
    assert 1.9 < a < 2.3
