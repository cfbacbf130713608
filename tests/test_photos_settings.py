"""The trial file's [photos] section: every key checked, problems collected."""

from __future__ import annotations

import pytest

from trialkit.photos.settings import PhotoSettings, parse_photos_section, photo_settings
from trialkit.problems import ProblemReport
from trialkit.trial.file import parse_trial_text

BASE = """
[trial]
title = "Invented photo settings test"
seed = 3
[[factor]]
name = "chelator"
unit = "% w/v"
low = 2.0
high = 10.0
[design]
kind = "sweep"
"""


def _parse(raw):
    rep = ProblemReport("trial.toml")
    return parse_photos_section(raw, None, rep, "photos"), rep.checks()


def test_defaults_and_accepted_keys():
    s, checks = _parse({"coverage_from": "photo", "region": [1, 2, 30, 40], "card": "auto",
                        "threshold": "marked", "rust_pixels": [[5, 6]],
                        "steel_pixels": [[7, 8]], "min_separation": 10, "rust_cut": 20.5,
                        "smoothing": 0})
    assert checks == []
    assert (s.coverage_from, s.region, s.card, s.rust_pixels, s.rust_cut, s.smoothing) == (
        "photo", (1, 2, 30, 40), "auto", ((5, 6),), 20.5, 0.0)
    assert _parse({})[0] == PhotoSettings()
    assert s.to_dict()["region"] == [1, 2, 30, 40]


@pytest.mark.parametrize("raw, check", [
    ({"colour": 1}, "unknown_key"),
    ({"coverage_from": "eye"}, "unknown_choice"),
    ({"threshold": "li"}, "unknown_choice"),
    ({"region": [0, 0, 10]}, "bad_box"),
    ({"card": [10, 0, 5, 5]}, "bad_box"),
    ({"card": "manual"}, "bad_box"),
    ({"rust_pixels": [[1, -2]]}, "bad_pixels"),
    ({"threshold": "marked", "rust_pixels": [[1, 2]]}, "missing_pixels"),
    ({"min_separation": -1}, "out_of_range"),
    ({"smoothing": float("inf")}, "out_of_range"),
    ({"rust_cut": True}, "out_of_range"),
])
def test_each_problem_has_its_check(raw, check):
    assert _parse(raw)[1] == [check]


def test_section_reaches_the_trial():
    trial = parse_trial_text(BASE + '[photos]\ncoverage_from = "photo"\ncard = "auto"\n')
    assert photo_settings(trial).coverage_from == "photo"
    assert photo_settings(parse_trial_text(BASE)) == PhotoSettings()
