"""Sentences and tables for the comparisons of a trial: levels of categorical factors
(Tukey) and treatments against the untreated and reference baths (Dunnett).

Written from the numbers of :class:`~trialkit.analysis.trial_data.TrialAnalysis`
(``comparisons``, ``versus_controls``); nothing is computed here but the wording.
"""

from __future__ import annotations

import pandas as pd

from trialkit.numbers import readable, readable_p
from trialkit.report.document import Block


def _unit(unit: str) -> str:
    return {"%": " points"}.get(unit, f" {unit}" if unit else "")


def level_sentences(rows: list[dict], unit: str, aim: str) -> list[str]:
    """One sentence per clearly different pair of levels (adjusted p < 0.05), in words:
    ``"sodium citrate removed 18 points less than tetrasodium EDTA (95 % CI 11 to 25)"``;
    pairs whose interval spans zero are summed up in one sentence."""
    said, alike = [], []
    for r in sorted(rows, key=lambda r: -abs(r["difference"])):
        a, b, d = r["level_a"], r["level_b"], r["difference"]
        if r["p_adjusted"] < 0.05:
            better, worse = (a, b) if (d > 0) == (aim != "lower") else (b, a)
            size = abs(d)
            lo, hi = sorted((abs(r["low"]), abs(r["high"])))
            word = "more" if (aim != "lower") else "less"
            p_text = readable_p(r["p_adjusted"])
            p_text = p_text if p_text.startswith("<") else f"= {p_text}"
            said.append(f"{r['factor']} = {better} gave {readable(size, 3)}{_unit(unit)} "
                        f"{word} {r['response']} than {worse} (simultaneous 95 % CI "
                        f"{readable(lo, 3)} to {readable(hi, 3)}; Tukey-adjusted p {p_text})")
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
                                    f"{name}: the levels of {factor} compared"))
    vs = [v for v in data.versus_controls if v["response"] == name]
    if vs:
        table = pd.DataFrame(vs)[["treatment", "control", "difference", "low", "high",
                                  "p_adjusted"]]
        blocks.append(Block.frame(table, f"{name}: each treatment against the untreated "
                                         "and reference baths (Dunnett, simultaneous 95 % "
                                         "intervals of the difference)"))
    return blocks
