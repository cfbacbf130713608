"""Collect every problem with an input before failing, and report them as one table.

Trial-file validation and sheet ingest both use :class:`ProblemReport`: each check adds a
:class:`Problem` instead of raising, and the caller raises once at the end with the whole
list, so a user fixes everything in one pass.

Examples
--------
>>> report = ProblemReport("trial.toml")
>>> report.add("factor[1].low", "low must be below high", value="10 >= 2",
...            fix="swap low and high", check="low_below_high")
>>> len(report)
1
>>> print(report.table().loc[0, "check"])
low_below_high
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import asdict, dataclass

import pandas as pd


@dataclass(frozen=True)
class Problem:
    """One problem with one place in one input file.

    Attributes
    ----------
    source : str
        File the problem is in (or a description such as ``"<command line>"``).
    where : str
        Key path (``"factor[2].unit"``) or ``"row 7"``; for sheets the sheet name.
    column : str
        Column heading for tabular inputs; ``""`` for keyed files.
    row : int or None
        1-based row number as a spreadsheet program shows it, where it applies.
    value : str
        The offending value as text (``""`` when the value is missing).
    check : str
        Short snake_case reason code, stable for tests and scripts.
    message : str
        What is wrong, in words.
    fix : str
        What to do about it.
    """

    source: str
    where: str
    column: str
    row: int | None
    value: str
    check: str
    message: str
    fix: str

    def __str__(self) -> str:
        place = self.where
        if self.row is not None:
            place = f"{place} row {self.row}" if place else f"row {self.row}"
        if self.column:
            place = f"{place}, column {self.column!r}"
        value = f" (got {self.value})" if self.value != "" else ""
        fix = f" -> {self.fix}" if self.fix else ""
        return f"{self.source}: {place}: {self.message}{value}{fix}"


class ProblemReport:
    """An ordered collection of :class:`Problem` for one input.

    Parameters
    ----------
    source : str
        The file (or other input) being checked; used for every problem added.
    """

    COLUMNS = ("source", "where", "row", "column", "value", "check", "message", "fix")

    def __init__(self, source: str):
        self.source = str(source)
        self._problems: list[Problem] = []

    def add(
        self,
        where: str,
        message: str,
        *,
        value: object = "",
        fix: str = "",
        check: str = "invalid",
        column: str = "",
        row: int | None = None,
    ) -> None:
        """Record one problem."""
        self._problems.append(
            Problem(self.source, where, column, row, _as_text(value), check, message, fix)
        )

    def extend(self, other: ProblemReport) -> None:
        """Append every problem of ``other``."""
        self._problems.extend(other._problems)

    def __len__(self) -> int:
        return len(self._problems)

    def __iter__(self) -> Iterator[Problem]:
        return iter(self._problems)

    def __bool__(self) -> bool:
        return bool(self._problems)

    def checks(self) -> list[str]:
        """The reason codes, in order (handy in tests)."""
        return [p.check for p in self._problems]

    def table(self) -> pd.DataFrame:
        """All problems as a DataFrame with columns :attr:`COLUMNS`."""
        rows = [asdict(p) for p in self._problems]
        return pd.DataFrame(rows, columns=list(self.COLUMNS))

    def to_dict(self) -> dict:
        """Plain-data form for JSON."""
        return {"source": self.source, "problems": [asdict(p) for p in self._problems]}

    def __str__(self) -> str:
        n = len(self._problems)
        head = f"{n} problem{'s' if n != 1 else ''} in {self.source}:"
        return "\n".join([head, *(f"  - {p}" for p in self._problems)])

    def __repr__(self) -> str:
        return f"ProblemReport({self.source!r}, {len(self)} problems)"

    def _repr_html_(self) -> str:
        return self.table().to_html(index=False, escape=True)

    def raise_if_any(self, error_class: type[Exception], what: str = "") -> None:
        """Raise ``error_class`` with every problem if there is at least one."""
        if self._problems:
            text = str(self)
            if what:
                text = f"{what}\n{text}"
            raise error_class(text, self)


#: Longest offending value quoted in a problem; longer input is cut to a prefix.
MAX_VALUE_CHARS = 120


def _as_text(value: object) -> str:
    if value is None:
        return ""
    if isinstance(value, str):
        text = value
    else:
        text = repr(value) if not isinstance(value, (int, float)) else str(value)
    if len(text) > MAX_VALUE_CHARS:
        return f"{text[:MAX_VALUE_CHARS - 20]}... ({len(text):,} characters)"
    return text


def nearest(word: str, choices: list[str] | tuple[str, ...], n: int = 3) -> list[str]:
    """Return up to ``n`` entries of ``choices`` that look most like ``word``.

    Matching is case-insensitive; used for "did you mean" suggestions.

    Examples
    --------
    >>> nearest("replicate", ["replicates", "blocks", "controls"])
    ['replicates']
    """
    import difflib

    lowered = {c.lower(): c for c in choices}
    hits = difflib.get_close_matches(word.lower(), list(lowered), n=n, cutoff=0.5)
    return [lowered[h] for h in hits]


def did_you_mean(word: str, choices: list[str] | tuple[str, ...]) -> str:
    """A ready-made fix text: ``"did you mean 'x'?"`` or the list of allowed values."""
    hits = nearest(word, choices)
    if hits:
        return "did you mean " + " or ".join(repr(h) for h in hits) + "?"
    return "allowed: " + ", ".join(repr(c) for c in choices)
