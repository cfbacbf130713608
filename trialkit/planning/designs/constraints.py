"""Linear constraints between factors and combinations that cannot be mixed, for optimal designs.

A constraint is a text such as ``"ph >= 4 + 0.2*chelator"`` or
``"chelator + 2*surfactant <= 12"``: sums of numbers and number-times-factor products on
each side of one of ``<=``, ``>=``, ``<``, ``>``, in the factors' natural units.  It is
read by a small tokenizer over the trial's validated factor names (nothing is evaluated
as Python) and turned into ``a . u <= b`` in coded units.

Examples
--------
>>> from trialkit.trial.factors import Factor
>>> fs = (Factor.continuous("chelator", 0, 10), Factor.continuous("ph", 4, 8))
>>> c = parse_constraint("ph >= 4 + 0.2*chelator", fs)
>>> c.coefficients.tolist(), c.bound
([0.5, -1.0], 0.5)
>>> bool(c.satisfied([[1.0, 1.0]])[0]), bool(c.satisfied([[1.0, -1.0]])[0])
(True, False)
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from trialkit.exceptions import DesignError
from trialkit.trial.factors import Factor

_TOKEN = re.compile(r"\s*(?:(<=|>=|=<|=>|<|>)|(\d+\.?\d*(?:[eE][+-]?\d+)?|\.\d+(?:[eE][+-]?\d+)?)"
                    r"|([A-Za-z_][A-Za-z0-9_]*)|([-+*/]))")
#: Tolerance, in coded units, within which a run counts as meeting a constraint.
TOLERANCE = 1e-9


@dataclass(frozen=True)
class LinearConstraint:
    """``coefficients . u <= bound`` in coded units (``text`` as written)."""

    text: str
    coefficients: np.ndarray
    bound: float

    def satisfied(self, U) -> np.ndarray:
        """Which rows of coded points ``U`` (n x k) meet the constraint."""
        U = np.atleast_2d(np.asarray(U, dtype=float))
        return U @ self.coefficients <= self.bound + TOLERANCE


def _tokens(text: str) -> list[tuple[str, str]]:
    out, pos = [], 0
    text = text.strip()
    while pos < len(text):
        m = _TOKEN.match(text, pos)
        if not m or m.end() == pos:
            raise DesignError(
                f"constraint {text!r}: cannot read {text[pos:]!r}; write sums of "
                "numbers and number*factor products compared with <= or >=, e.g. "
                "'ph >= 4 + 0.2*chelator'")
        kind = ("cmp", "num", "name", "op")[[g is not None for g in m.groups()].index(True)]
        out.append((kind, m.group(m.lastindex)))
        pos = m.end()
    return out


def _side(tokens, text, index, k) -> tuple[np.ndarray, float]:
    """A sum of terms -> (natural-unit coefficients, one per factor; constant)."""
    coefs = np.zeros(k)
    const = 0.0
    pos = 0
    sign = 1.0
    expect_term = True
    while pos < len(tokens):
        kind, val = tokens[pos]
        if expect_term and kind == "op" and val in "+-":
            sign *= -1.0 if val == "-" else 1.0
            pos += 1
            continue
        if not expect_term:
            if kind == "op" and val in "+-":
                sign = -1.0 if val == "-" else 1.0
                expect_term = True
                pos += 1
                continue
            raise DesignError(f"constraint {text!r}: expected '+' or '-' before {val!r}")
        # one term: factor (('*'|'/') factor)*
        number, name = sign, None
        first = True
        while pos < len(tokens):
            kind, val = tokens[pos]
            op = "*"
            if not first:
                if kind != "op" or val not in "*/":
                    break
                op = val
                pos += 1
                if pos >= len(tokens):
                    raise DesignError(f"constraint {text!r} ends after {val!r}")
                kind, val = tokens[pos]
            if kind == "num":
                number = number * float(val) if op == "*" else number / float(val)
            elif kind == "name" and op == "*":
                if val not in index:
                    raise DesignError(
                        f"constraint {text!r}: {val!r} is not a continuous factor; "
                        f"continuous factors are {list(index)}")
                if name is not None:
                    raise DesignError(f"constraint {text!r}: {name}*{val} is not linear; "
                                      "constraints must be linear in the factors")
                name = val
            else:
                raise DesignError(f"constraint {text!r}: unexpected {val!r}; only a number "
                                  "may follow '/'")
            first = False
            pos += 1
        if name is None:
            const += number
        else:
            coefs[index[name]] += number
        expect_term = False
    if expect_term:
        raise DesignError(f"constraint {text!r}: a side of the comparison is empty")
    return coefs, const


def parse_constraint(text: str, factors: Sequence[Factor]) -> LinearConstraint:
    """Read one linear constraint (natural units) into coded form."""
    if not isinstance(text, str):
        raise DesignError(f"a constraint must be a text such as 'ph >= 4 + 0.2*chelator', "
                          f"got {text!r}")
    factors = tuple(factors)
    cont = [f.name for f in factors if f.is_continuous]
    index = {n: i for i, n in enumerate(f.name for f in factors) if n in cont}
    toks = _tokens(text)
    cmps = [i for i, t in enumerate(toks) if t[0] == "cmp"]
    if len(cmps) != 1:
        raise DesignError(f"constraint {text!r}: needs exactly one of <=, >=, <, > "
                          f"(found {len(cmps)})")
    at = cmps[0]
    op = toks[at][1]
    k = len(factors)
    lc, l0 = _side(toks[:at], text, index, k)
    rc, r0 = _side(toks[at + 1:], text, index, k)
    a, a0 = (lc - rc, l0 - r0) if op in ("<=", "=<", "<") else (rc - lc, r0 - l0)
    if not np.any(a):
        raise DesignError(f"constraint {text!r} names no factor")
    centre = np.array([f.center if f.is_continuous else 0.0 for f in factors])
    half = np.array([f.half_range if f.is_continuous else 0.0 for f in factors])
    coef = np.zeros(k)
    coef[:] = a * half
    bound = -(a0 + float(a @ centre))
    scale = float(np.max(np.abs(coef)))
    return LinearConstraint(text, coef / scale, bound / scale)


@dataclass(frozen=True)
class CannotMix:
    """A combination that cannot be mixed: level labels for categorical/ordinal factors,
    an exact value or an inclusive ``[low, high]`` range (natural units) for continuous."""

    spec: dict

    def matches(self, U, factors: Sequence[Factor]) -> np.ndarray:
        U = np.atleast_2d(np.asarray(U, dtype=float))
        hit = np.ones(len(U), dtype=bool)
        for i, f in enumerate(factors):
            if f.name not in self.spec:
                continue
            v = self.spec[f.name]
            if f.is_categorical:
                hit &= np.rint(U[:, i]) == f.levels.index(str(v))
            else:
                nat = f.to_natural(U[:, i])
                if isinstance(v, (list, tuple)):
                    lo, hi = sorted(float(x) for x in v)
                    hit &= (nat >= lo - 1e-9) & (nat <= hi + 1e-9)
                else:
                    hit &= np.isclose(nat, float(v), rtol=0, atol=1e-9 * (1 + abs(float(v))))
        return hit


def parse_cannot_mix(spec: Mapping, factors: Sequence[Factor]) -> CannotMix:
    """Check one combination that cannot be mixed (``{factor = value}``) against the factors."""
    by_name = {f.name: f for f in factors}
    if not isinstance(spec, Mapping) or not spec:
        raise DesignError(f"a combination that cannot be mixed must be a table such as "
                          f"{{surfactant = 'added', temperature = [50, 60]}}, got {spec!r}")
    for name, v in spec.items():
        f = by_name.get(name)
        if f is None:
            raise DesignError(f"cannot_mix {dict(spec)}: {name!r} is not a "
                              f"factor; factors are {list(by_name)}")
        if f.is_continuous:
            ok = (isinstance(v, (int, float)) and not isinstance(v, bool)) or (
                isinstance(v, (list, tuple)) and len(v) == 2
                and all(isinstance(x, (int, float)) and not isinstance(x, bool) for x in v))
            if not ok:
                raise DesignError(f"cannot_mix {dict(spec)}: {name!r} needs a "
                                  f"number or a [low, high] range in {f.unit or 'its unit'}")
        elif str(v) not in f.levels:
            raise DesignError(f"cannot_mix {dict(spec)}: {v!r} is not a level "
                              f"of {name!r}; levels are {list(f.levels)}")
    return CannotMix(dict(spec))
