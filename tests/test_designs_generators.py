"""Published fractional factorial generators (NIST/SEMATECH e-Handbook Table 3.17)."""

import json
from pathlib import Path

import pytest

from trialkit.exceptions import DesignError
from trialkit.planning.designs.aliasing import alias_structure, roman
from trialkit.planning.designs.generators import (
    FRACTION_TABLE,
    TABLE_RESOLUTION,
    check_generator_set,
    choose_by_resolution,
    parse_generator,
)
from trialkit.planning.designs.twolevel import fraction_matrix
from trialkit.trial.factors import FACTOR_LETTERS

REF = json.loads((Path(__file__).parent / "reference" / "designs" /
                  "design_properties.json").read_text())
TABLE = REF["fractional_factorial_generators"]["designs"]


@pytest.mark.parametrize("name", sorted(TABLE))
def test_table_matches_ehandbook_table_3_17(name):
    # source: NIST/SEMATECH e-Handbook 5.3.3.4.7, Table 3.17 (reference file)
    row = TABLE[name]
    assert FRACTION_TABLE[(row["k"], row["p"])] == tuple(row["generators"])
    assert roman(TABLE_RESOLUTION[(row["k"], row["p"])]) == row["resolution"]


@pytest.mark.parametrize("name", sorted(TABLE))
def test_resolution_computed_from_matrix_matches_table(name):
    # source: e-Handbook Table 3.17 resolutions; computed here from the built matrix
    row = TABLE[name]
    x = fraction_matrix(row["k"], row["generators"])
    assert x.shape == (row["runs"], row["k"])
    s = alias_structure(x, FACTOR_LETTERS[:row["k"]])
    assert roman(s.resolution) == row["resolution"]
    assert len(s.words) == 2 ** row["p"] - 1


def test_table_covers_every_reference_row():
    # every (k, p) of the reference file is in the code table and vice versa
    assert {(r["k"], r["p"]) for r in TABLE.values()} == set(FRACTION_TABLE)


@pytest.mark.parametrize("k,res,runs", [
    # e-Handbook Table 3.17: smallest design of at least the resolution
    (5, 5, 16), (7, 3, 8), (7, 4, 16), (8, 5, 64), (6, 4, 16), (10, 5, 128), (9, 4, 32),
])
def test_choose_by_resolution_smallest_tabulated(k, res, runs):
    gens = choose_by_resolution(k, res)
    assert 2 ** (k - len(gens)) == runs


def test_choose_by_resolution_none_when_not_tabulated():
    assert choose_by_resolution(8, 6) is None  # Table 3.17 has no 8-factor design above V


def test_parse_generator_sign_and_letters():
    assert parse_generator("F = -ABC", "ABCDEF") == (5, -1, 0b111)
    assert parse_generator("k=+abcd", FACTOR_LETTERS[:10]) == (9, 1, 0b1111)


@pytest.mark.parametrize("text,fragment", [
    ("E ABCD", "form"), ("E = ABCI", "letter 'I'"), ("E = AAB", "repeats"),
    ("E = A", "single factor"), ("E = ABE", "from itself"),
])
def test_parse_generator_rejects(text, fragment):
    with pytest.raises(DesignError, match=fragment):
        parse_generator(text, "ABCDE")


def test_generator_set_must_define_last_factors_from_base():
    with pytest.raises(DesignError, match="last factors"):
        check_generator_set(["D = ABC"], "ABCDE")
    with pytest.raises(DesignError, match="added factor"):
        check_generator_set(["D = AB", "E = AD"], "ABCDE")
    # two added factors from one word are one column (or its negative): refused
    with pytest.raises(DesignError, match="'D = AB' and 'E = -BA' use the same word"):
        check_generator_set(["D = AB", "E = -BA"], "ABCDE")
