"""Generators of two-level fractional factorial designs: the published table and parsing.

:data:`FRACTION_TABLE` holds the generators of the useful 2^(k-p) designs of the
NIST/SEMATECH e-Handbook of Statistical Methods, section 5.3.3.4.7, Table 3.17
(https://www.itl.nist.gov/div898/handbook/pri/section3/pri3347.htm), for 3 to 10
factors.  Every design built from it is checked against its own matrix before use.

Examples
--------
>>> parse_generator("F = -ABC", "ABCDEF")
(5, -1, 7)
>>> choose_by_resolution(5, 5)
('E = ABCD',)
"""

from __future__ import annotations

import re

from trialkit.exceptions import DesignError

#: (k, p) -> generators, NIST/SEMATECH e-Handbook Table 3.17 (letters skip I).
FRACTION_TABLE: dict[tuple[int, int], tuple[str, ...]] = {
    (3, 1): ("C = AB",),
    (4, 1): ("D = ABC",),
    (5, 1): ("E = ABCD",),
    (5, 2): ("D = AB", "E = AC"),
    (6, 1): ("F = ABCDE",),
    (6, 2): ("E = ABC", "F = BCD"),
    (6, 3): ("D = AB", "E = AC", "F = BC"),
    (7, 1): ("G = ABCDEF",),
    (7, 2): ("F = ABCD", "G = ABDE"),
    (7, 3): ("E = ABC", "F = BCD", "G = ACD"),
    (7, 4): ("D = AB", "E = AC", "F = BC", "G = ABC"),
    (8, 2): ("G = ABCD", "H = ABEF"),
    (8, 3): ("F = ABC", "G = ABD", "H = BCDE"),
    (8, 4): ("E = BCD", "F = ACD", "G = ABC", "H = ABD"),
    (9, 2): ("H = ACDFG", "J = BCEFG"),
    (9, 3): ("G = ABCD", "H = ACEF", "J = CDEF"),
    (9, 4): ("F = BCDE", "G = ACDE", "H = ABDE", "J = ABCE"),
    (9, 5): ("E = ABC", "F = BCD", "G = ACD", "H = ABD", "J = ABCD"),
    (10, 3): ("H = ABCG", "J = BCDE", "K = ACDF"),
    (10, 4): ("G = BCDF", "H = ACDF", "J = ABDE", "K = ABCE"),
    (10, 5): ("F = ABCD", "G = ABCE", "H = ABDE", "J = ACDE", "K = BCDE"),
    (10, 6): ("E = ABC", "F = BCD", "G = ACD", "H = ABD", "J = ABCD", "K = AB"),
}

#: Resolution of each table design as printed in Table 3.17 (checked in the tests
#: against the resolution computed from the built matrix).
TABLE_RESOLUTION: dict[tuple[int, int], int] = {
    (3, 1): 3, (4, 1): 4, (5, 1): 5, (5, 2): 3, (6, 1): 6, (6, 2): 4, (6, 3): 3,
    (7, 1): 7, (7, 2): 4, (7, 3): 4, (7, 4): 3, (8, 2): 5, (8, 3): 4, (8, 4): 4,
    (9, 2): 6, (9, 3): 4, (9, 4): 4, (9, 5): 3, (10, 3): 5, (10, 4): 4, (10, 5): 4,
    (10, 6): 3,
}

_GEN = re.compile(r"^\s*([A-Za-z])\s*=\s*([+-]?)\s*([A-Za-z]+)\s*$")


def parse_generator(text: str, letters: str) -> tuple[int, int, int]:
    """Parse ``"F = -ABC"`` into (index of F, sign, bit mask of A B C).

    Raises :class:`DesignError` naming the problem; ``letters`` are the factor letters
    in order.
    """
    m = _GEN.match(str(text))
    if not m:
        raise DesignError(f"generator {text!r} is not of the form 'E = ABCD' or 'F = -ABC'; "
                          "write one factor letter, '=', an optional sign and a word")
    target, sign, word = m.group(1).upper(), m.group(2), m.group(3).upper()
    for ch in target + word:
        if ch not in letters:
            raise DesignError(f"generator {text!r} uses letter {ch!r}; the factors are "
                              f"lettered {' '.join(letters)} (I is skipped)")
    if len(set(word)) != len(word):
        raise DesignError(f"generator {text!r} repeats a letter in {word!r}")
    if len(word) < 2:
        raise DesignError(f"generator {text!r} sets a factor equal to a single factor; "
                          "a generator's word needs two or more letters")
    if target in word:
        raise DesignError(f"generator {text!r} defines {target} from itself")
    mask = 0
    for ch in word:
        mask |= 1 << letters.index(ch)
    return letters.index(target), (-1 if sign == "-" else 1), mask


def check_generator_set(generators, letters: str) -> list[tuple[int, int, int]]:
    """Parse a full set of generators for ``len(letters)`` factors.

    With p generators the first k-p factors are the base factors; the generators must
    define each of the last p factors once, from base factors only, and no two from the
    same word (they would be the same column, or its negative).
    """
    k, p = len(letters), len(generators)
    if p < 1 or p >= k - 1:
        raise DesignError(f"{p} generators for {k} factors: give 1 to {k - 2} generators "
                          "(each adds one factor to a full factorial in the others)")
    parsed = [parse_generator(g, letters) for g in generators]
    base = k - p
    targets = sorted(t for t, _, _ in parsed)
    if targets != list(range(base, k)):
        want = " ".join(letters[base:])
        got = " ".join(letters[t] for t, _, _ in parsed)
        raise DesignError(f"generators define {got}; with {p} generators for {k} factors "
                          f"they must define the last factors {want}, once each")
    for g, (_, _, mask) in zip(generators, parsed, strict=True):
        if mask >> base:
            raise DesignError(f"generator {g!r} uses an added factor; words may use only "
                              f"the base factors {' '.join(letters[:base])}")
    first_of: dict[int, str] = {}
    for g, (_, _, mask) in zip(generators, parsed, strict=True):
        if mask in first_of:
            raise DesignError(f"generators {first_of[mask]!r} and {g!r} use the same word, "
                              "so those two factors could never be told apart; give each "
                              "added factor a word of its own")
        first_of[mask] = g
    return parsed


def choose_by_resolution(k: int, resolution: int) -> tuple[str, ...] | None:
    """Generators of the smallest tabulated 2^(k-p) design of at least ``resolution``.

    Returns ``None`` when the table has none (the caller falls back).
    """
    best = None
    for (kk, p), gens in FRACTION_TABLE.items():
        if kk == k and TABLE_RESOLUTION[(kk, p)] >= resolution and (best is None or p > best[0]):
            best = (p, gens)
    return None if best is None else best[1]
