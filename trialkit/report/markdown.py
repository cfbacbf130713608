"""Markdown export of a :class:`~trialkit.report.document.Report` (for lab notebooks).

Figures are written as PNG files beside the Markdown file (``<name>_figures/``) and
linked, or embedded as data URIs with ``embed=True``.  Text from users is escaped so that
Markdown and HTML in a title stay visible as text.

Examples
--------
>>> from trialkit.report.document import Block, Report, Section
>>> r = Report("Bath *trial*", [Section("brief", "The trial in brief",
...            [Block.pairs([("Seed", 7)])])])
>>> print(to_markdown(r))  # doctest: +NORMALIZE_WHITESPACE
# Bath \\*trial\\*
<BLANKLINE>
## The trial in brief
<BLANKLINE>
- **Seed:** 7
<BLANKLINE>
"""

from __future__ import annotations

import base64
import re
from pathlib import Path

_SPECIAL = re.compile(r"([\\`*_{}\[\]<>#|])")


def escape(text: str) -> str:
    """Backslash-escape Markdown and HTML punctuation."""
    return _SPECIAL.sub(r"\\\1", str(text))


def _table(block) -> list[str]:
    head, rows = block.table_rows()
    out = []
    if block.text:
        out.append(f"*{escape(block.text)}*")
        out.append("")
    out.append("| " + " | ".join(escape(h) for h in head) + " |")
    out.append("|" + "|".join(" --- " for _ in head) + "|")
    out += ["| " + " | ".join(escape(c) for c in r) + " |" for r in rows]
    return out


def to_markdown(report, *, figure_dir: str | None = None, embed: bool = False) -> str:
    """Markdown text of ``report``.

    Parameters
    ----------
    figure_dir : str, optional
        Relative folder the figure files are (to be) written in; figures are linked there.
    embed : bool
        Embed figures as ``data:`` URIs instead (one self-contained file).
    """
    lines = [f"# {escape(report.title)}", ""]
    if report.subtitle:
        lines += [escape(report.subtitle), ""]
    n = 0
    for s in report.sections:
        lines += [f"## {escape(s.title)}", ""]
        for b in s.blocks:
            if b.kind == "text":
                lines += [escape(b.text), ""]
            elif b.kind == "note":
                lines += [f"> **Not available:** {escape(b.text)}", ""]
            elif b.kind == "list":
                if b.text:
                    lines += [f"### {escape(b.text)}", ""]
                lines += [f"- {escape(i)}" for i in b.items] + [""]
            elif b.kind == "pairs":
                if b.text:
                    lines += [f"### {escape(b.text)}", ""]
                lines += [f"- **{escape(k)}:** {escape(v)}" for k, v in b.items] + [""]
            elif b.kind == "table":
                lines += _table(b) + [""]
            elif b.kind == "figure":
                n += 1
                if embed or figure_dir is None:
                    src = "data:image/png;base64," + b.png_base64
                else:
                    src = f"{figure_dir}/figure-{n:02d}.png"
                lines += [f"![{escape(b.alt)}]({src})", "", f"*{escape(b.text)}*", ""]
    return "\n".join(lines)


def write_markdown(report, path: str | Path, *, embed: bool = False) -> Path:
    """Write ``report`` as Markdown to ``path``; figure PNGs go to ``<stem>_figures/``."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    folder = f"{path.stem}_figures"
    if not embed:
        figs = [b for s in report.sections for b in s.blocks if b.kind == "figure"]
        if figs:
            (path.parent / folder).mkdir(exist_ok=True)
        for i, b in enumerate(figs, start=1):
            (path.parent / folder / f"figure-{i:02d}.png").write_bytes(
                base64.b64decode(b.png_base64))
    path.write_text(to_markdown(report, figure_dir=None if embed else folder, embed=embed),
                    encoding="utf-8")
    return path
