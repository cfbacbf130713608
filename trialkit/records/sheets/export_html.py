"""A printable bench sheet (A4 or Letter) and coupon labels, as one HTML page.

The page prints the plan columns and empty boxes for the readings, the title, seed and
plan fingerprint on every page, then a page of coupon labels (coupon id, bath, run,
block) to cut out.  Everything is rendered through jinja2 with autoescaping, so user text
cannot inject markup.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from trialkit.records.config import PAPER_SIZES, SheetConfig, sheet_config
from trialkit.records.sheets.layout import (
    cell_text,
    layouts,
    plan_rows,
    sheet_metadata,
    visible_stamp,
)

_TEMPLATE = """<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8">
<title>{{ title }} - bench sheet</title>
<style>
@page { size: {{ page_size }}; margin: 12mm; }
body { font-family: sans-serif; font-size: 9pt; }
h1 { font-size: 13pt; margin: 0 0 2mm 0; }
.stamp { color: #444; margin-bottom: 3mm; }
table.sheet { border-collapse: collapse; width: 100%; page-break-after: always; }
table.sheet th, table.sheet td { border: 0.3mm solid #555; padding: 1mm; }
table.sheet th { font-size: 7.5pt; vertical-align: bottom; }
td.plan { background: #eee; }
td.entry { min-width: 12mm; height: 7mm; }
.labels { display: flex; flex-wrap: wrap; gap: 2mm; }
.label { border: 0.3mm dashed #555; width: 44mm; height: 20mm; padding: 1.5mm;
         box-sizing: border-box; page-break-inside: avoid; }
.label .id { font-size: 14pt; font-weight: bold; }
.caution { font-size: 7.5pt; color: #444; margin-top: 2mm; }
</style></head><body>
{% for tab in tabs %}
<section class="page">
<h1>{{ title }} &mdash; {{ tab.name }}</h1>
<div class="stamp">{{ stamp }}</div>
<table class="sheet"><thead><tr>
{% for h in tab.headings %}<th>{{ h }}</th>{% endfor %}
</tr></thead><tbody>
{% for row in tab.rows %}<tr>
{% for cell in row %}{% if cell.plan %}<td class="plan">{{ cell.text }}</td>
{%- else %}<td class="entry"></td>{% endif %}{% endfor %}
</tr>{% endfor %}
</tbody></table>
</section>
{% endfor %}
<section class="page">
<h1>{{ title }} &mdash; coupon labels</h1>
<div class="stamp">{{ stamp }}</div>
<div class="labels">
{% for lab in labels %}<div class="label"><div class="id">{{ lab.coupon }}</div>
bath {{ lab.bath }} &middot; run {{ lab.run }} &middot; block {{ lab.block }}</div>
{% endfor %}
</div>
<p class="caution">{{ caution }}</p>
</section>
</body></html>
"""

_CAUTION = ("Wear eye and skin protection with alkaline or acidic solids and baths; acid on "
            "steel gives hydrogen, so never close a container on a working bath; ventilate; "
            "dispose of spent baths with dissolved metals as local regulations require. The "
            "safety data sheets and local codes come first.")


def html_text(plan: Any, *, config: SheetConfig | None = None, paper: str | None = None) -> str:
    """The bench sheet and labels of ``plan`` as an HTML page.

    Parameters
    ----------
    paper : str, optional
        ``"A4"`` or ``"Letter"``; default from the trial's ``[sheet]`` section.
    """
    config = config or sheet_config(plan.trial)
    paper = paper or config.paper
    if paper not in PAPER_SIZES:
        from trialkit.exceptions import SheetError

        raise SheetError(f"paper {paper!r} is not known; use one of {', '.join(PAPER_SIZES)}")
    tabs = []
    for lay in layouts(plan, config):
        rows = plan_rows(plan, lay, config)
        tabs.append({
            "name": lay.tab,
            "headings": [c.heading for c in lay.columns],
            "rows": [[{"plan": c.role == "plan", "text": cell_text(rec.get(c.name))}
                      for c in lay.columns] for rec in rows.to_dict("records")],
        })
    table = plan.table.sort_values(["run", "coupon"], kind="stable")
    labels = [{"coupon": r["coupon"], "bath": r["bath"], "run": int(r["run"]),
               "block": int(r["block"])} for r in table.to_dict("records")]
    meta = sheet_metadata(plan, layouts(plan, config)[0])
    from jinja2 import Environment

    env = Environment(autoescape=True)
    size = "A4 landscape" if paper == "A4" else "letter landscape"
    return env.from_string(_TEMPLATE).render(title=meta["title"], stamp=visible_stamp(meta),
                                             tabs=tabs, labels=labels, page_size=size,
                                             caution=_CAUTION)


def export_html(plan: Any, path: str | Path, *, config: SheetConfig | None = None,
                paper: str | None = None) -> Path:
    """Write the printable bench sheet and labels to ``path``; returns the path."""
    path = Path(path)
    path.write_text(html_text(plan, config=config, paper=paper), encoding="utf-8")
    return path
