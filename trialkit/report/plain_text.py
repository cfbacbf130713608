"""Report sections as plain text for a terminal (the command line's answer).

The same blocks the HTML page shows, wrapped to a width; tables through
:meth:`Block.table_rows`, so the numbers follow the one formatting rule of
:mod:`trialkit.numbers`.  Figures are named, not drawn.

Examples
--------
>>> from trialkit.report.document import Block, Section
>>> s = Section("answer", "The answer", [Block.para("Recommended: chelator 4 % w/v."),
...     Block.bullets(["Chelator matters.", "pH does not."], "What matters")])
>>> print(section_text(s))
The answer
==========
Recommended: chelator 4 % w/v.
<BLANKLINE>
What matters:
  - Chelator matters.
  - pH does not.
"""

from __future__ import annotations

import textwrap

from trialkit.report.document import Section

WIDTH = 88


def _wrap(text: str, indent: str = "", first: str | None = None, width: int = WIDTH) -> list[str]:
    return textwrap.wrap(text, width=width, initial_indent=indent if first is None else first,
                         subsequent_indent=indent, break_on_hyphens=False) or [""]


def section_text(section: Section, width: int = WIDTH) -> str:
    """``section`` as plain text: its title underlined, then each block."""
    lines = [section.title, "=" * len(section.title)]
    for b in section.blocks:
        if lines[-1] != "=" * len(section.title):
            lines.append("")
        if b.kind == "text":
            lines += _wrap(b.text, width=width)
        elif b.kind == "note":
            lines += _wrap(f"Not available: {b.text}", "  ", "", width)
        elif b.kind == "list":
            if b.text:
                lines.append(f"{b.text}:")
            for item in b.items:
                lines += _wrap(item, "    ", "  - ", width)
        elif b.kind == "pairs":
            if b.text:
                lines.append(f"{b.text}:")
            for k, v in b.items:
                lines += _wrap(f"{k}: {v}", "    ", "  ", width)
        elif b.kind == "table":
            head, rows = b.table_rows()
            if b.text:
                lines.append(f"{b.text}:")
            w = [max(len(r[i]) for r in [head, *rows]) for i in range(len(head))]
            lines += ["  " + "  ".join(c.ljust(n) for c, n in zip(r, w, strict=True)).rstrip()
                      for r in [head, *rows]]
        elif b.kind == "figure":
            lines.append(f"[figure: {b.text}, in the HTML report]")
    return "\n".join(lines)
