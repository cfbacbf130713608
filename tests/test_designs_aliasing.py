"""Defining relation, resolution and alias table computed from a design's own matrix."""

import itertools
import json
from pathlib import Path

import numpy as np
import pytest
from pyDOE3 import fracfact, fracfact_aliasing, pbdesign

from trialkit.exceptions import DesignError
from trialkit.planning.designs.aliasing import alias_structure, defining_words, roman
from trialkit.planning.designs.twolevel import fraction_matrix
from trialkit.trial.factors import FACTOR_LETTERS

REF = json.loads((Path(__file__).parent / "reference" / "designs" /
                  "design_properties.json").read_text())
EX = REF["worked_alias_example_2k8m3"]
L8 = FACTOR_LETTERS[:8]


def _letters(numbers: str) -> str:
    """Factor numbers 1..8 of the e-Handbook example -> letters A..H."""
    return "".join(L8[int(c) - 1] for c in numbers)


def _gens(numbered):
    out = []
    for g in numbered:
        left, right = (s.strip() for s in g.split("="))
        out.append(f"{_letters(left)} = {_letters(right)}")
    return out


def test_worked_2k8m3_defining_relation_and_resolution():
    # source: e-Handbook design-resolution page, 2^(8-3) example (6=345, 7=1245, 8=1235)
    s = alias_structure(fraction_matrix(8, _gens(EX["generators"])), L8)
    assert {w for w, _ in s.words} == {_letters(w) for w in EX["defining_relation"]}
    assert all(sign == 1 for _, sign in s.words)
    assert roman(s.resolution) == EX["resolution"]


def test_worked_2k8m3_two_factor_alias_chains():
    # source: e-Handbook 2^(8-3) example: chains 34 = 56 = 78, 35 = 46, ...; 13 clear 2fi
    s = alias_structure(fraction_matrix(8, _gens(EX["generators"])), L8)
    table = dict(zip(s.table.effect, s.table.aliases, strict=True))
    for chain in EX["two_factor_alias_chains"]:
        members = [_letters(m.strip()) for m in chain.split("=")]
        for a, b in itertools.permutations(members, 2):
            assert "+" + b in table[a].split(", ")
    two_fi = [e for e in s.table.effect if len(e) == 2]
    clear = [e for e in two_fi
             if not any(len(t) == 3 for t in table[e].split(", ") if t)]
    assert len(clear) == EX["n_2fi_clear_of_other_2fi"]


def test_non_minimum_aberration_alternative_has_five_length_four_words():
    # source: e-Handbook 2^(8-3) example, alternative generators 6=12345, 7=135, 8=245
    alt = EX["non_minimum_aberration_alternative"]
    s = alias_structure(fraction_matrix(8, _gens(alt["generators"])), L8)
    assert {w for w, _ in s.words} == {_letters(w) for w in alt["defining_relation"]}
    assert sum(len(w) == 4 for w, _ in s.words) == alt["n_length4_words"]


def test_pydoe3_fault_alias_listing_misses_negative_generators():
    # pyDOE3 1.6.2 fracfact_aliasing groups identical columns only, so D = -ABC gives
    # no alias chain for A; ours keeps the sign (I = -ABCD -> A = -BCD).
    x = fracfact("a b c -abc")
    theirs, _ = fracfact_aliasing(x)
    assert "a" in theirs  # pyDOE3: A listed alone, its alias -BCD lost
    s = alias_structure(x, "ABCD")
    assert s.defining_relation == ("I = -ABCD",)
    assert s.table.set_index("effect").loc["A", "aliases"] == "-BCD"
    assert s.table.set_index("effect").loc["AB", "aliases"] == "-CD"


def test_signs_of_mixed_generators():
    # D = -AB, E = AC: words -ABD, +ACE and their product -BCDE (I = -ABD = +ACE = -BCDE)
    s = alias_structure(fraction_matrix(5, ["D = -AB", "E = AC"]), "ABCDE")
    assert set(s.defining_relation) == {"I = -ABD", "I = +ACE", "I = -BCDE"}
    aliases = s.table.set_index("effect").loc["A", "aliases"].split(", ")
    assert aliases == ["-BD", "+CE"]  # A x (-ABD) = -BD; A x ACE = +CE; BCDE gives order 5


def test_full_factorial_has_no_words_and_no_resolution():
    x = fracfact("a b c")
    s = alias_structure(x, "ABC")
    assert s.words == () and s.resolution is None and s.regular
    assert (s.table.aliases == "").all()


def test_plackett_burman_12_partial_aliases_one_third():
    # 12-run Plackett–Burman: main effects partially aliased with two-factor
    # interactions, correlation +-1/3 (Lin & Draper 1992; from memory)
    s = alias_structure(pbdesign(11))
    assert not s.regular
    assert s.resolution == 3
    mains = s.partial[s.partial.effect.str.len() == 1]
    assert np.allclose(np.abs(mains.correlation), 1 / 3)
    # A is partially aliased with every 2fi not containing A: C(10, 2) = 45
    assert (mains.effect == "A").sum() == 45


def test_rejects_non_two_level_matrix():
    with pytest.raises(DesignError, match="only -1 and \\+1"):
        alias_structure(np.array([[0.0, 1.0], [1.0, -1.0]]))
    with pytest.raises(DesignError, match="one letter per column"):
        alias_structure(fracfact("a b"), "ABC")


def test_defining_words_of_a_resolution_iii_fraction():
    # 2^(7-4) of Table 3.17: 15 words, shortest of length 3
    x = fraction_matrix(7, ["D = AB", "E = AC", "F = BC", "G = ABC"])
    words = defining_words(x)
    assert len(words) == 15
    assert min(bin(m).count("1") for m, _ in words) == 3
