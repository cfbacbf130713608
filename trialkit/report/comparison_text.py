"""Sentences and tables for the comparisons of a trial: levels of categorical factors
(Tukey) and treatments against the untreated and reference baths (Dunnett).

Written from the numbers of :class:`~trialkit.analysis.trial_data.TrialAnalysis`
(``comparisons``, ``versus_controls``); nothing is computed here but the wording.
"""

from __future__ import annotations

import pandas as pd

from trialkit.numbers import p_phrase, readable_interval, readable_unit, spoken, spoken_capitalised
from trialkit.report.document import Block


def _unit(unit: str) -> str:
    unit = readable_unit(unit)
    return {"%": " points"}.get(unit, f" {unit}" if unit else "")


def level_sentences(rows: list[dict], unit: str, aim: str) -> list[str]:
    """One sentence per clearly different pair of levels (adjusted p < 0.05), in words:
    ``"salt = sodium citrate gave 18 points less removal than tetrasodium EDTA
    (simultaneous 95 % CI 11 to 25; Tukey-adjusted p = 0.002)"``, the difference written to
    its interval's digits; pairs whose interval spans zero are summed up in one sentence.

    >>> print(level_sentences([{"factor": "agitation", "response": "rust_removed",
    ...     "level_a": "periodic", "level_b": "none", "difference": 10.93, "low": 0.739,
    ...     "high": 21.1, "p_adjusted": 0.037}], "g/m**2", "higher")[0])
    ... # doctest: +NORMALIZE_WHITESPACE
    agitation = periodic gave 11 g/m² more rust removed than none
    (simultaneous 95 % CI 1 to 21; Tukey-adjusted p = 0.037)
    """
    said, alike = [], []
    for r in sorted(rows, key=lambda r: -abs(r["difference"])):
        a, b, d = r["level_a"], r["level_b"], r["difference"]
        if r["p_adjusted"] < 0.05:
            better, worse = (a, b) if (d > 0) == (aim != "lower") else (b, a)
            lo, hi = sorted((abs(r["low"]), abs(r["high"])))
            size, lo_text, hi_text = readable_interval(abs(d), lo, hi)
            word = "more" if (aim != "lower") else "less"
            said.append(f"{spoken(r['factor'])} = {better} gave {size}{_unit(unit)} "
                        f"{word} {spoken(r['response'])} than {worse} (simultaneous 95 % CI "
                        f"{lo_text} to {hi_text}; Tukey-adjusted {p_phrase(r['p_adjusted'])})")
        else:
            alike.append(f"{a} and {b}")
    if alike:
        said.append("Not told apart by this trial (Tukey-adjusted p ≥ 0.05): "
                    + "; ".join(alike) + ".")
    return said


def comparison_blocks(data, name: str) -> list[Block]:
    """The level comparisons and the comparisons with the controls for one response."""
    blocks = []
    spec = data.specs[name]
    rows = [c for c in data.comparisons if c["response"] == name]
    for factor in dict.fromkeys(r["factor"] for r in rows):
        mine = [r for r in rows if r["factor"] == factor]
        blocks.append(Block.bullets(level_sentences(mine, data.unit(name), spec.aim),
                                    f"{spoken_capitalised(name)}: the levels of {spoken(factor)} "
                                    "compared"))
    vs = [v for v in data.versus_controls if v["response"] == name]
    if vs:
        table = pd.DataFrame(vs)[["treatment", "control", "difference", "low", "high",
                                  "p_adjusted"]]
        blocks.append(Block.frame(table, f"{spoken_capitalised(name)}: each treatment "
                                         "against the untreated and reference baths "
                                         "(Dunnett, simultaneous 95 % intervals of the "
                                         "difference)"))
    return blocks
