"""The trial-file reference lists exactly the keys the checkers accept (issue 17)."""

from __future__ import annotations

import re
from pathlib import Path

from trialkit.cli import main
from trialkit.commands.trial_reference import DOCS, accepted_keys, reference_markdown
from trialkit.trial.file import TOP_LEVEL

ROOT = Path(__file__).resolve().parents[1]


def test_every_accepted_key_is_described_and_nothing_else():
    accepted = accepted_keys()
    assert set(accepted) == set(DOCS)
    for section, keys in accepted.items():
        assert set(keys) == set(DOCS[section]), section


def test_every_top_level_section_has_a_reference():
    named = {re.sub(r"[\[\]]", "", s).split(".")[0] for s in DOCS}
    assert set(TOP_LEVEL) <= named


def test_the_published_reference_is_the_generated_one(capsys):
    text = reference_markdown()
    assert (ROOT / "docs" / "trial-file.md").read_text(encoding="utf-8").strip() == \
        text.strip(), "regenerate it: trialkit new --explain > docs/trial-file.md"
    assert main(["new", "--explain"]) == 0
    assert capsys.readouterr().out.strip() == text.strip()
    assert "`cannot_mix`" in text and "removal_pct" in text and "`adjust_with`" in text
