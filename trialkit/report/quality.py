"""Data quality of a trial's readings: what the record log holds, what is still missing,
which values were corrected after first entry and which were flagged.
"""

from __future__ import annotations

import re

import pandas as pd

from trialkit.analysis.censored_times import CENSORED_LEVELS
from trialkit.analysis.trial_data import TrialAnalysis
from trialkit.numbers import spoken
from trialkit.report.document import Block
from trialkit.report.photo_quality import photo_blocks

ENTRY_ALL = ("mass_initial_g", "mass_final_g", "immersion_start", "immersion_end")
ENTRY_RUSTED = ("coverage_before_pct", "coverage_after_pct")
ENTRY_RUSTED_PHOTO = ("coverage_before_photo_pct", "coverage_after_photo_pct")


#: What a note says about a time beyond the readings: dropped, not quoted as a number.
_BEYOND = re.compile(r"; the model would reach it at [^;]*;")
_WHO = re.compile(r"^(?P<who>[A-Za-z0-9_.-]+): (?P<what>.*)$", re.S)


def grouped_notes(notes: list[str]) -> pd.DataFrame:
    """One row per kind of note with the baths or coupons it concerns.

    Notes of the form ``"B06: 90 % removal not reached ..."`` are grouped by what they
    say; a time the model would reach beyond the readings is not quoted (it is an
    extrapolation, not a result).

    Examples
    --------
    >>> grouped_notes(["B06: 90 % removal not reached within the readings (last at 72 h); "
    ...                "the model would reach it at 4.1e+03 h; not reported as a result.",
    ...                "B13: 90 % removal not reached within the readings (last at 72 h); "
    ...                "the model would reach it at 2.7e+03 h; not reported as a result."]
    ...               ).to_dict("records")  # doctest: +NORMALIZE_WHITESPACE
    [{'note': '90 % removal not reached within the readings (last at 72 h); not reported
    as a result.', 'concerns': 'B06, B13'}]
    """
    groups: dict[str, list[str]] = {}
    for text in notes:
        m = _WHO.match(text)
        who, what = (m.group("who"), m.group("what")) if m else ("", text)
        what = _BEYOND.sub(";", what)
        groups.setdefault(what, [])
        if who:
            groups[what].append(who)
    return pd.DataFrame([{"note": k, "concerns": ", ".join(dict.fromkeys(v))}
                         for k, v in groups.items()], columns=["note", "concerns"])


def readings_blocks(data: TrialAnalysis) -> list[Block]:
    """How complete the readings are: counts, missing readings, revisions, flags."""
    if data.log is None:
        if data.baths is not None and data.responses is None:
            return [Block.note("the readings were given as a table of bath results, not "
                               "through the record log, so missing readings and revisions "
                               "cannot be checked")]
        return ([Block.note(t) for t in data.notes.get("readings", [])]
                + _response_notes(data))
    return _log_blocks(data) + photo_blocks(data) + _response_notes(data) + [
        Block.note(t) for k in ("readings", "responses") for t in data.notes.get(k, [])]


def _log_blocks(data: TrialAnalysis) -> list[Block]:
    """Counts, missing readings and corrections from the record log."""
    blocks: list[Block] = []
    hist, cur = data.history, data.current
    n_rev = int((hist.revision > 1).sum()) if len(hist) else 0
    blocks.append(Block.pairs([
        ("Values in the record log", _sources(hist)),
        ("Coupons in the plan", f"{len(cur)}"),
        ("Corrections since first entry", f"{n_rev}")]))
    table = cur[~cur.get("point", pd.Series("", index=cur.index)).isin(["control"])] \
        if "point" in cur else cur
    rows = []
    rusted = ENTRY_RUSTED if getattr(data, "coverage_source", "hand") != "photo" else \
        ENTRY_RUSTED_PHOTO
    for fname in ENTRY_ALL + rusted:
        sub = table if fname in ENTRY_ALL or "coupon_kind" not in table else \
            table[table.coupon_kind == "rusted"]
        if fname not in sub:
            missing = list(sub.coupon)
        else:
            missing = list(sub.coupon[sub[fname].isna()])
        if missing:
            rows.append({"reading": fname, "coupons missing it": len(missing),
                         "first few": ", ".join(map(str, missing[:6]))
                         + (" ..." if len(missing) > 6 else "")})
    if rows:
        blocks.append(Block.frame(pd.DataFrame(rows), "Readings still missing"))
    else:
        blocks.append(Block.para("Every planned coupon has its masses, coverages and "
                                 "immersion times recorded."))
    if n_rev:
        rev = hist[hist.coupon.isin(hist[hist.revision > 1].coupon)]
        rev = rev[rev.set_index(["coupon", "inspection", "field"]).index.isin(
            hist[hist.revision > 1].set_index(["coupon", "inspection", "field"]).index)]
        blocks.append(Block.frame(rev[["coupon", "field", "value", "revision", "source"]]
                                  .head(40).reset_index(drop=True),
                                  "Values corrected after first entry (every revision kept)"))
    return blocks


def _sources(hist: pd.DataFrame) -> str:
    """How many values from how many sheets (and photos, whose source starts "photo ")."""
    sources = hist.source.astype(str).drop_duplicates() if len(hist) else pd.Series([], dtype=str)
    photos = int(sources.str.startswith("photo ").sum())
    text = f"{len(hist)} from {len(sources) - photos} sheet(s)"
    return text + (f" and {photos} photo(s)" if photos else "")


def _censored_levels(data: TrialAnalysis) -> dict[int, tuple[str, set]]:
    """Removal level (%) -> the time response whose censored model counts the baths that
    did not reach it, and those baths."""
    out = {}
    for name, censoring in (getattr(data, "censoring", {}) or {}).items():
        spec = data.specs.get(name)
        level = CENSORED_LEVELS.get(getattr(spec, "measure", None) or name)
        if level is not None:
            out[int(level)] = (name, set(censoring.get("censored_baths", [])))
    return out


def _censoring_said(note: str, data: TrialAnalysis) -> str:
    """A bath's "level not reached" note, told that a censored time model counts it.

    Without a time model for that level (or for a bath the model leaves out, such as an
    untreated control) the bath's time is simply not reported; with one, the bath is not
    dropped: it counts as lasting at least its last inspection.
    """
    m = _WHO.match(note)
    for level, (name, baths) in _censored_levels(data).items():
        if (m and m.group("who") in baths
                and f"{level} % removal not reached within the readings" in note):
            return note.replace("; not reported as a result.",
                                f"; no time is quoted for it, and the model of "
                                f"{spoken(name)} counts it as lasting at least that long "
                                "(right-censored).")
    return note


def _response_notes(data: TrialAnalysis) -> list[Block]:
    """Bath conditions off the plan, values the responses left out, and notes worth a
    look, grouped."""
    blocks: list[Block] = []
    if data.bench is not None and len(data.bench):
        blocks.append(Block.frame(data.bench, "Bath conditions off the plan (recorded at "
                                              "the bench against the planned value; the "
                                              "analysis uses the planned settings)"))
    probs = list(getattr(data.responses, "problems", []) or [])
    if probs:
        blocks.append(Block.frame(pd.DataFrame([{"where": p.where, "reading": p.column,
                                                 "value": p.value, "problem": p.message}
                                                for p in probs][:40]),
                                  "Flagged values (left out of the results)"))
    warns = [_censoring_said(w, data) for w in
             list(getattr(data.responses, "warnings", []) or [])]
    if warns:
        blocks.append(Block.frame(grouped_notes(warns), "Worth a look: one row per kind of "
                                                        "note, with the baths it concerns"))
    return blocks
