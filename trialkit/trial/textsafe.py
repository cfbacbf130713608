"""Keep text that came from a user from being read as a formula by a spreadsheet.

A spreadsheet program treats a cell that starts with ``=``, ``+``, ``-`` or ``@`` (and,
in some programs, a tab or carriage return) as a formula, so a note such as
``=HYPERLINK(...)`` or ``-3 spots`` could run or break.  In CSV files such text is written
with a leading apostrophe, which spreadsheet programs show as "this is text"; ingest takes
exactly that apostrophe off again, so the text comes back unchanged.  In XLSX files text
cells are written with an explicit string type and the quote-prefix style instead, so
nothing is added to the text at all.

Examples
--------
>>> escape_text("=1+2")
"'=1+2"
>>> unescape_text(escape_text("=1+2"))
'=1+2'
>>> escape_text("plain note")
'plain note'
"""

from __future__ import annotations

#: First characters that make a spreadsheet treat a cell as a formula (OWASP, "CSV
#: Injection"; common practice).
FORMULA_STARTS: tuple[str, ...] = ("=", "+", "-", "@", "\t", "\r")


def needs_escape(text: str) -> bool:
    """True when ``text`` would be read as a formula, or already looks escaped.

    Text that starts with an apostrophe followed by something that needs escaping is
    escaped again, so that :func:`unescape_text` can always take exactly one apostrophe.
    """
    if not text:
        return False
    if text[0] in FORMULA_STARTS:
        return True
    return text[0] == "'" and needs_escape(text[1:])


def escape_text(text: str) -> str:
    """Return ``text`` made safe for a CSV cell (a leading apostrophe where needed)."""
    text = str(text)
    return "'" + text if needs_escape(text) else text


def unescape_text(text: str) -> str:
    """Undo :func:`escape_text`: the inverse for every string."""
    text = str(text)
    if text.startswith("'") and needs_escape(text[1:]):
        return text[1:]
    return text
