"""The report as plain data: sections made of blocks, rendered to HTML or Markdown.

A :class:`Report` holds :class:`Section` objects; each section is a list of
:class:`Block` objects (a paragraph, a list, a table, a figure, or a note saying plainly
why something is not available).  The same blocks feed the HTML page
(``templates/report.html.j2``, jinja2 with autoescape on) and the Markdown export, so the
two never disagree.

Examples
--------
>>> r = Report("A <b>trial</b>", [Section("brief", "The trial in brief",
...            [Block.para("Hello & welcome.")])])
>>> "&lt;b&gt;trial&lt;/b&gt;" in r.to_html(), "Hello &amp; welcome." in r.to_html()
(True, True)
>>> print(r.to_markdown().splitlines()[0])
# A \\<b\\>trial\\</b\\>
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from trialkit.exceptions import TrialkitError
from trialkit.numbers import readable_frame

TEMPLATE = "report.html.j2"


class ReportError(TrialkitError):
    """A report could not be built or written."""


@dataclass
class Block:
    """One piece of a section.

    Attributes
    ----------
    kind : {"text", "list", "table", "figure", "note", "pairs"}
    text : str
        Paragraph text, table caption, figure title, or the note.
    items : list
        List items (str), or (label, value) pairs.
    table : DataFrame or None
    png_base64 : str
        The figure as base64 PNG.
    alt : str
        Text alternative of a figure.
    """

    kind: str
    text: str = ""
    items: list = field(default_factory=list)
    table: pd.DataFrame | None = None
    png_base64: str = ""
    alt: str = ""

    @classmethod
    def para(cls, text: str) -> Block:
        """A paragraph."""
        return cls("text", text)

    @classmethod
    def bullets(cls, items, title: str = "") -> Block:
        return cls("list", title, [str(i) for i in items])

    @classmethod
    def note(cls, text: str) -> Block:
        """A plain statement that something is not available, and why."""
        return cls("note", text)

    @classmethod
    def pairs(cls, pairs, title: str = "") -> Block:
        return cls("pairs", title, [(str(k), str(v)) for k, v in pairs])

    @classmethod
    def frame(cls, table: pd.DataFrame, caption: str = "") -> Block:
        return cls("table", caption, table=table)

    @classmethod
    def figure(cls, png_base64: str, title: str, alt: str = "") -> Block:
        return cls("figure", title, png_base64=png_base64, alt=alt or title)

    def table_rows(self, digits: int = 4) -> tuple[list[str], list[list[str]]]:
        """Header and rows of the table as text (:mod:`trialkit.numbers`: ``digits``
        significant, plain notation, p-values as ``< 0.001``)."""
        df = self.table if self.table is not None else pd.DataFrame()
        text = readable_frame(df, digits)  # estimates beside intervals to their digits
        return ([str(c) for c in df.columns],
                [[str(v) for v in row] for row in text.itertuples(index=False)])


@dataclass
class Section:
    """A titled part of the report (``key`` is the HTML id)."""

    key: str
    title: str
    blocks: list[Block] = field(default_factory=list)
    folded: bool = False  # shown closed (HTML <details>) for readers who want it

    @property
    def available(self) -> bool:
        return any(b.kind != "note" for b in self.blocks)


@dataclass
class Report:
    """A whole trial report.

    Attributes
    ----------
    title : str
    sections : list of Section
    subtitle : str
    data : dict
        The numbers behind the report (findings, optimum, hashes) for JSON.
    """

    title: str
    sections: list[Section]
    subtitle: str = ""
    data: dict = field(default_factory=dict)

    def section(self, key: str) -> Section:
        for s in self.sections:
            if s.key == key:
                return s
        raise KeyError(f"no section {key!r}; sections: {[s.key for s in self.sections]}")

    @property
    def findings(self) -> list:
        return list(self.data.get("findings", []))

    def to_html(self, *, fragment: bool = False) -> str:
        """The report as one self-contained HTML page (or a fragment for Jupyter)."""
        import jinja2

        env = jinja2.Environment(loader=jinja2.PackageLoader("trialkit.report", "templates"),
                                 autoescape=True, trim_blocks=True, lstrip_blocks=True,
                                 undefined=jinja2.StrictUndefined)
        return env.get_template(TEMPLATE).render(report=self, fragment=fragment)

    def to_markdown(self, **kw) -> str:
        """The same report as Markdown (see :func:`trialkit.report.markdown.to_markdown`)."""
        from trialkit.report.markdown import to_markdown

        return to_markdown(self, **kw)

    def write(self, path: str | Path, *, markdown: str | Path | None = None) -> Path:
        """Write the HTML page to ``path`` (and the Markdown to ``markdown``, if given).

        A path ending in ``.md`` gets the Markdown export instead of HTML.
        """
        path = Path(path)
        if path.suffix.lower() in (".md", ".markdown"):
            from trialkit.report.markdown import write_markdown

            return write_markdown(self, path)
        if path.suffix.lower() not in (".html", ".htm"):
            raise ReportError(f"a report is written as .html or .md; got {path.name!r}. "
                              "Use e.g. --out report.html")
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(self.to_html(), encoding="utf-8")
        if markdown is not None:
            from trialkit.report.markdown import write_markdown

            write_markdown(self, Path(markdown))
        return path

    def to_dict(self) -> dict:
        return {"title": self.title, "subtitle": self.subtitle,
                "sections": [{"key": s.key, "title": s.title, "available": s.available,
                              "notes": [b.text for b in s.blocks if b.kind == "note"]}
                             for s in self.sections], **self.data}

    def __repr__(self) -> str:
        parts = ", ".join(f"{s.key}{'' if s.available else ' (not available)'}"
                          for s in self.sections)
        return f"Report({self.title!r}: {parts})"

    def _repr_html_(self) -> str:
        return self.to_html(fragment=True)
