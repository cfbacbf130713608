"""Formula-injection escaping of user text (OWASP "CSV Injection" guidance: cells starting
with = + - @ tab or carriage return are formulas to a spreadsheet program)."""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st

from trialkit.records.sheets.textsafe import (
    FORMULA_STARTS,
    escape_text,
    needs_escape,
    unescape_text,
)


@pytest.mark.parametrize("text", ["=1+2", "+33 1 23", "-pitted", "@SUM(A1)", "\tx", "\rx",
                                  "'=already quoted"])
def test_dangerous_text_is_escaped(text):
    escaped = escape_text(text)
    assert escaped == "'" + text
    assert escaped[0] not in FORMULA_STARTS
    assert unescape_text(escaped) == text


@pytest.mark.parametrize("text", ["plain", "", "12.5", "'quoted but harmless", "a=b"])
def test_harmless_text_is_unchanged(text):
    assert not needs_escape(text)
    assert escape_text(text) == text
    assert unescape_text(text) == text


@given(st.text(max_size=30))
def test_round_trip_for_every_string(text):
    escaped = escape_text(text)
    assert unescape_text(escaped) == text
    assert escaped[:1] not in FORMULA_STARTS


@given(st.text(alphabet="'=+-@ab", max_size=8))
def test_round_trip_on_apostrophe_heavy_strings(text):
    assert unescape_text(escape_text(text)) == text
