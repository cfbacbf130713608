"""Model specifications: a small grammar over validated factor names, and model matrices.

Text that names a model (from a trial file or the command line) is parsed here by our own
tokenizer and never handed to anything that evaluates Python (formula libraries execute
code placed in a formula string).

Contract
--------
``parse_model(spec, factors) -> ModelSpec``
    ``spec`` is one of the keywords

    * ``"main"`` (alias ``"linear"``): every factor's main effect;
    * ``"interactions"``: main effects and all two-factor interactions;
    * ``"quadratic"``: interactions plus the square of every continuous factor;

    or explicit terms joined by ``+``, for example ``chelator + ph + chelator:ph +
    chelator^2``.  A term is a factor name, names joined by ``:`` (interaction), or a
    continuous factor's name followed by ``^2`` (square).  Keywords may be mixed with
    terms (``main + chelator^2``).  Whitespace is free.  Anything else raises
    :class:`~trialkit.exceptions.ModelSpecError` naming the position and the token, with
    the nearest factor names suggested.  The intercept is always included.
``ModelSpec``
    ``.terms`` (tuple of :class:`Term`, each with ``.factors`` (tuple of names, in factor
    order), ``.power`` (1, or 2 for a square) and ``.name`` (``"chelator:ph"``,
    ``"chelator^2"``)), ``.factors`` (the :class:`~trialkit.trial.factors.Factor` objects),
    ``.to_text()`` (a spec string that parses back to the same model).
``model_matrix(spec, data, *, coding="sum") -> ModelMatrix``
    ``data`` holds one column per factor: coded units (-1..1) for continuous factors,
    labels for categorical/ordinal ones.  Categorical factors expand to sum-to-zero
    (deviation) contrast columns, or treatment (dummy) columns with
    ``coding="treatment"``.  ``ModelMatrix.X`` has the intercept column first;
    ``.columns`` names every column; ``.term_columns`` maps each term name (and
    ``"intercept"``) to its slice of columns.
``coded_frame(data_natural, factors) -> DataFrame``
    natural units -> coded units for continuous factors; labels as text otherwise.

Examples
--------
>>> from trialkit.trial.factors import Factor
>>> fs = [Factor.continuous("chelator", 2, 10), Factor.continuous("ph", 5.5, 7.5),
...       Factor.categorical("surfactant", ["none", "added"])]
>>> m = parse_model("chelator + ph + chelator:ph + chelator^2", fs)
>>> [t.name for t in m.terms]
['chelator', 'ph', 'chelator:ph', 'chelator^2']
>>> parse_model("quadratic", fs[:2]).to_text()
'chelator + ph + chelator:ph + chelator^2 + ph^2'
>>> import pandas as pd
>>> data = pd.DataFrame({"chelator": [-1.0, 1.0, 0.0], "ph": [1.0, -1.0, 0.0],
...                      "surfactant": ["none", "added", "none"]})
>>> from trialkit.trial.model_matrix import model_matrix
>>> mm = model_matrix(parse_model("chelator + surfactant", fs), data)
>>> mm.columns
('intercept', 'chelator', 'surfactant = none')
>>> mm.X[:, 2].tolist()
[1.0, -1.0, 1.0]
"""

from __future__ import annotations

import itertools
import re
from collections.abc import Sequence
from dataclasses import dataclass, field

from trialkit.exceptions import ModelSpecError
from trialkit.problems import nearest
from trialkit.trial.factors import Factor

KEYWORDS = {"main": "main", "linear": "main", "interactions": "interactions",
            "quadratic": "quadratic"}
CODINGS = ("sum", "treatment")
INTERCEPT = "intercept"

_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_.]*")


@dataclass(frozen=True)
class Term:
    """One model term: a main effect, an interaction or a square.

    Attributes
    ----------
    factors : tuple of str
        Factor names, in the order the factors are declared.
    power : int
        1 for main effects and interactions, 2 for the square of a continuous factor.
    """

    factors: tuple[str, ...]
    power: int = 1

    @property
    def name(self) -> str:
        """``"chelator"``, ``"chelator:ph"`` or ``"chelator^2"``."""
        if self.power == 2:
            return f"{self.factors[0]}^2"
        return ":".join(self.factors)

    @property
    def order(self) -> int:
        """Number of factors in the term times the power (1 main, 2 two-factor/square)."""
        return len(self.factors) * self.power

    def parents(self) -> tuple[Term, ...]:
        """Terms that must stay in a hierarchical model while this one is in."""
        if self.power == 2:
            return (Term(self.factors, 1),)
        if len(self.factors) == 1:
            return ()
        out = []
        for k in range(1, len(self.factors)):
            out.extend(Term(c) for c in itertools.combinations(self.factors, k))
        return tuple(out)

    def __str__(self) -> str:
        return self.name


@dataclass(frozen=True)
class ModelSpec:
    """A validated linear model: terms over known factors (intercept implied).

    Attributes
    ----------
    terms : tuple of Term
        In the order given (the order matters for sequential, type I, sums of squares).
    factors : tuple of Factor
        Every factor the model may use (not only those in terms).
    """

    terms: tuple[Term, ...]
    factors: tuple[Factor, ...] = field(repr=False)

    def to_text(self) -> str:
        """The model as spec text that :func:`parse_model` reads back unchanged."""
        return " + ".join(t.name for t in self.terms)

    @property
    def term_names(self) -> tuple[str, ...]:
        return tuple(t.name for t in self.terms)

    @property
    def used_factors(self) -> tuple[Factor, ...]:
        """Factors that appear in at least one term, in declaration order."""
        used = {n for t in self.terms for n in t.factors}
        return tuple(f for f in self.factors if f.name in used)

    def factor(self, name: str) -> Factor:
        """The Factor called ``name``."""
        for f in self.factors:
            if f.name == name:
                return f
        raise ModelSpecError(f"no factor {name!r} in this model; factors: "
                             + ", ".join(f.name for f in self.factors))

    def is_hierarchical(self) -> bool:
        """True when every term's parents are in the model."""
        have = set(self.terms)
        return all(p in have for t in self.terms for p in t.parents())

    def with_terms(self, terms: Sequence[Term]) -> ModelSpec:
        """A model over the same factors with other terms (duplicates dropped)."""
        return ModelSpec(tuple(dict.fromkeys(terms)), self.factors)

    def without(self, term: Term | str) -> ModelSpec:
        """This model minus one term (given as Term or name)."""
        name = term if isinstance(term, str) else term.name
        if name not in self.term_names:
            raise ModelSpecError(f"term {name!r} is not in the model {self.to_text()!r}")
        return ModelSpec(tuple(t for t in self.terms if t.name != name), self.factors)

    def __str__(self) -> str:
        return self.to_text()


# -- parsing ------------------------------------------------------------------------------
def _keyword_terms(keyword: str, factors: Sequence[Factor]) -> list[Term]:
    names = [f.name for f in factors]
    terms = [Term((n,)) for n in names]
    if keyword in ("interactions", "quadratic"):
        terms += [Term(c) for c in itertools.combinations(names, 2)]
    if keyword == "quadratic":
        terms += [Term((f.name,), 2) for f in factors if f.is_continuous]
    return terms


def _tokenize(spec: str, names: Sequence[str]) -> list[tuple[int, str, str]]:
    """Tokens as (position, kind, text); kinds: name, plus, colon, square."""
    tokens = []
    i, n = 0, len(spec)
    by_length = sorted(names, key=len, reverse=True)
    while i < n:
        ch = spec[i]
        if ch.isspace():
            i += 1
            continue
        if ch == "+":
            tokens.append((i, "plus", "+"))
            i += 1
            continue
        if ch == ":":
            tokens.append((i, "colon", ":"))
            i += 1
            continue
        if spec.startswith("^2", i):
            tokens.append((i, "square", "^2"))
            i += 2
            continue
        hit = next((nm for nm in by_length if spec.startswith(nm, i)
                    and not _continues_name(spec, i + len(nm))), None)
        if hit is not None:
            tokens.append((i, "name", hit))
            i += len(hit)
            continue
        m = _NAME.match(spec, i)
        if m:
            tokens.append((i, "name", m.group(0)))
            i = m.end()
            continue
        # an unknown character: report it and the rest of the word around it
        j = i + 1
        while j < n and not spec[j].isspace() and spec[j] not in "+:":
            j += 1
        raise ModelSpecError(
            f"model {spec!r}: unexpected {spec[i:j]!r} at position {i + 1}; a model is "
            "'main', 'linear', 'interactions', 'quadratic' or terms joined by '+', where a "
            "term is a factor name, names joined by ':' or a continuous factor name with "
            "'^2'. Factors: " + ", ".join(names))
    return tokens


def _continues_name(spec: str, j: int) -> bool:
    return j < len(spec) and (spec[j].isalnum() or spec[j] in "_.")


def parse_model(spec: str, factors: Sequence[Factor]) -> ModelSpec:
    """Parse a model specification over the given factors.

    Parameters
    ----------
    spec : str
        ``"main"``, ``"linear"``, ``"interactions"``, ``"quadratic"`` or terms joined by
        ``+`` (see the module docstring).
    factors : sequence of Factor

    Returns
    -------
    ModelSpec

    Raises
    ------
    ModelSpecError
        Empty spec, unknown factor or token, square of a categorical factor, a factor
        repeated inside one interaction, a dangling operator.

    Examples
    --------
    >>> from trialkit.trial.factors import Factor
    >>> fs = [Factor.continuous("chelator", 2, 10), Factor.continuous("ph", 5.5, 7.5)]
    >>> parse_model("ph:chelator + chelator", fs).to_text()
    'chelator:ph + chelator'
    >>> try:
    ...     parse_model("chelatr", fs)
    ... except ModelSpecError as exc:
    ...     print(str(exc).split(" Factors")[0])
    model 'chelatr': unknown factor 'chelatr' at position 1; did you mean 'chelator'?
    """
    if not isinstance(spec, str):
        raise ModelSpecError(f"a model must be text, got {type(spec).__name__} {spec!r}")
    factors = tuple(factors)
    if not factors:
        raise ModelSpecError("a model needs at least one factor; none were given")
    names = [f.name for f in factors]
    by_name = {f.name: f for f in factors}
    order = {n: i for i, n in enumerate(names)}
    text = spec.strip()
    if not text:
        raise ModelSpecError("the model is empty; give 'main', 'interactions', 'quadratic' "
                             "or terms such as " + " + ".join(names[:2]))
    tokens = _tokenize(text, names)
    terms: list[Term] = []
    pos = 0

    def fail(i: int, message: str, fix: str = "") -> None:
        raise ModelSpecError(f"model {text!r}: {message} at position {i + 1}"
                             + (f"; {fix}" if fix else "")
                             + (" " if fix.endswith("?") else ". ")
                             + "Factors: " + ", ".join(names))

    while True:
        if pos >= len(tokens):
            fail(len(text) - 1, "a term is missing after the last '+'")
        p0, kind, tok = tokens[pos]
        if kind != "name":
            fail(p0, f"expected a factor name or keyword, found {tok!r}")
        group = [(p0, tok)]
        pos += 1
        square = False
        while pos < len(tokens) and tokens[pos][1] in ("colon", "square"):
            p1, k1, t1 = tokens[pos]
            if k1 == "square":
                square = True
                pos += 1
                break
            if pos + 1 >= len(tokens) or tokens[pos + 1][1] != "name":
                fail(p1, "':' must be followed by a factor name")
            group.append((tokens[pos + 1][0], tokens[pos + 1][2]))
            pos += 2
        # validate names
        for gp, g in group:
            if g in by_name:
                continue
            if g.lower() in KEYWORDS and len(group) == 1 and not square:
                continue
            hits = nearest(g, names)
            fail(gp, f"unknown factor {g!r}",
                 ("did you mean " + " or ".join(repr(h) for h in hits) + "?") if hits else "")
        if len(group) == 1 and not square and group[0][1] not in by_name:
            terms.extend(_keyword_terms(KEYWORDS[group[0][1].lower()], factors))
        elif square:
            if len(group) != 1:
                fail(group[0][0], "'^2' applies to a single factor, not an interaction",
                     "write each square as its own term")
            f = by_name[group[0][1]]
            if not f.is_continuous:
                fail(group[0][0], f"factor {f.name!r} is {f.kind}; only continuous factors "
                     "can be squared")
            terms.append(Term((f.name,), 2))
        else:
            gnames = [g for _, g in group]
            if len(set(gnames)) != len(gnames):
                dup = next(g for g in gnames if gnames.count(g) > 1)
                fail(group[0][0], f"factor {dup!r} appears twice in one interaction",
                     f"write {dup}^2 for a square")
            terms.append(Term(tuple(sorted(gnames, key=order.__getitem__))))
        if pos >= len(tokens):
            break
        p2, k2, t2 = tokens[pos]
        if k2 != "plus":
            fail(p2, f"expected '+' between terms, found {t2!r}")
        pos += 1
    return ModelSpec(tuple(dict.fromkeys(terms)), factors)


