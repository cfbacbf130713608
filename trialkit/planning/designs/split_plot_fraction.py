"""Two-level fractional factorials laid out as split plots: minimum aberration among the
fractions whose whole plots can be run.

The hard-to-change (whole-plot, WP) factors are set per tank and the easy-to-change
(subplot, SP) factors per bath.  A regular fraction is defined by generators; it can be
run as a split plot only when

* every added WP factor is generated from WP factors alone (else one tank would need two
  settings of it), and
* no word of the defining relation holds exactly one SP letter (else that SP factor would
  be constant within each tank, i.e. it would be a whole-plot factor in disguise)
  (Huang, Chen & Voelkel 1998, *Technometrics* 40, 314–326; Bingham & Sitter 1999,
  *Technometrics* 41, 62–70 — conditions stated from memory).

trialkit also keeps every WP main effect clear of the two-factor interactions that hold a
SP factor (no defining word of length 3 with one WP letter and two SP letters), so a
whole-plot effect is never confused with a subplot effect.  Among the admissible fractions
with the fewest runs that reach the asked resolution it takes the one of minimum aberration
(the word-length pattern A3, A4, ... smallest in lexicographic order; ties go to more whole
plots, then to the first found).  The generators chosen are stated in the design's notes.

Examples
--------
>>> from trialkit.trial.factors import Factor
>>> names = ("temp", "agit", "chel", "ph", "surf", "soak")
>>> fs = [Factor.continuous(n, 0, 1) for n in names]
>>> d = split_plot_fraction(fs, ["temp", "agit"], resolution=3)
>>> d.n_points, d.resolution, d.generators
(16, 4, ('E = ABC', 'F = ABD'))
"""

from __future__ import annotations

import itertools
from collections.abc import Sequence

import numpy as np

from trialkit.exceptions import DesignError
from trialkit.planning.designs._common import two_level_frame
from trialkit.planning.designs.aliasing import alias_structure, defining_words, roman
from trialkit.planning.designs.base import Design
from trialkit.trial.factors import FACTOR_LETTERS, Factor

#: Most candidate generator sets examined for one run size (the search is exhaustive below).
MAX_CANDIDATES = 200_000


def _bits(mask: int) -> list[int]:
    return [i for i in range(mask.bit_length()) if mask >> i & 1]


def defining_group(words: Sequence[int]) -> list[int]:
    """Every non-empty product of the generator words (bit masks over the factors)."""
    out = []
    for r in range(1, len(words) + 1):
        for combo in itertools.combinations(words, r):
            m = 0
            for w in combo:
                m ^= w
            out.append(m)
    return out


def split_plot_problem(group: Sequence[int], whole: int) -> str:
    """Why a defining relation cannot be run as a split plot ('' when it can).

    ``whole`` is the bit mask of the WP factors.
    """
    for w in group:
        sp = bin(w & ~whole).count("1")
        wp = bin(w & whole).count("1")
        if sp == 1:
            return "a subplot factor would be constant within every tank"
        if bin(w).count("1") == 3 and wp == 1 and sp == 2:
            return "a whole-plot main effect would be aliased with a subplot interaction"
    return ""


def _wlp(group: Sequence[int], k: int) -> tuple[int, ...]:
    counts = [0] * (k + 1)
    for w in group:
        counts[bin(w).count("1")] += 1
    return tuple(counts[3:])


def _candidates(k: int, wp: list[int], sp: list[int], p: int):
    """Yield (generator words, texts, n whole-plot base factors) for run size 2^(k-p)."""
    n1, n2 = len(wp), len(sp)
    for k1 in range(0, min(p, n1 - 1) + 1):
        k2 = p - k1
        if n2 - k2 < 1:
            continue
        base = wp[:n1 - k1] + sp[:n2 - k2]
        base_wp = sum(1 << i for i in wp[:n1 - k1])
        added_wp, added_sp = wp[n1 - k1:], sp[n2 - k2:]
        masks = [sum(1 << base[j] for j in range(len(base)) if r >> j & 1)
                 for r in range(1, 1 << len(base))]
        masks = [m for m in masks if bin(m).count("1") >= 2]
        wp_words = [m for m in masks if m & ~base_wp == 0]
        sp_words = [m for m in masks if m & ~base_wp]
        for wp_set in itertools.combinations(wp_words, k1):
            for sp_set in itertools.combinations(sp_words, k2):
                words = [m | 1 << t for m, t in zip(wp_set + sp_set, added_wp + added_sp,
                                                    strict=True)]
                texts = [_text(t, m) for m, t in zip(wp_set + sp_set, added_wp + added_sp,
                                                     strict=True)]
                yield words, texts, n1 - k1, base, dict(zip(added_wp + added_sp,
                                                            wp_set + sp_set, strict=True))


def _text(target: int, mask: int) -> str:
    return f"{FACTOR_LETTERS[target]} = {''.join(FACTOR_LETTERS[i] for i in _bits(mask))}"


def choose_split_plot_generators(k: int, whole_plot: Sequence[int], resolution: int
                                 ) -> tuple[tuple[str, ...], int, dict[int, int], list[int]]:
    """The minimum-aberration admissible split-plot fraction with the fewest runs.

    Returns ``(generator texts, p, {added factor: base word}, base factors)``.

    Raises
    ------
    DesignError
        No admissible fraction reaches the resolution (then the full factorial is the
        only choice).
    """
    wp = sorted(whole_plot)
    sp = [i for i in range(k) if i not in wp]
    whole = sum(1 << i for i in wp)
    for p in range(k - 2, 0, -1):
        best = None
        seen = 0
        for words, texts, n_wp_base, base, gens in _candidates(k, wp, sp, p):
            seen += 1
            if seen > MAX_CANDIDATES:
                raise DesignError(f"too many candidate fractions of {k} factors to search; "
                                  "give generators = [...] in [design]")
            group = defining_group(words)
            if min(bin(w).count("1") for w in group) < resolution:
                continue
            if split_plot_problem(group, whole):
                continue
            key = (_wlp(group, k), -n_wp_base)
            if best is None or key < best[0]:
                best = (key, tuple(texts), gens, base)
        if best is not None:
            return best[1], p, best[2], best[3]
    raise DesignError(f"no two-level fraction of these {k} factors reaches resolution "
                      f"{roman(resolution)} and can be run as a split plot; use kind = "
                      "'full-factorial' or a lower resolution")


def _matrix(k: int, base: list[int], gens: dict[int, int]) -> np.ndarray:
    """+-1 matrix: a full factorial in the base factors (first changing fastest)."""
    n = 1 << len(base)
    x = np.ones((n, k))
    for j, b in enumerate(base):
        x[:, b] = np.where((np.arange(n) >> j) & 1, 1.0, -1.0)
    for t, mask in gens.items():
        x[:, t] = np.prod(x[:, _bits(mask)], axis=1)
    return x


def split_plot_fraction(factors: Sequence[Factor], whole_plot_names: Sequence[str], *,
                        resolution: int | None = None,
                        generators: Sequence[str] | None = None) -> Design:
    """A two-level fraction that can be run as a split plot (see the module docstring).

    With ``generators`` (the trial file's, lettered A, B, C ... in factor order, the last
    factors generated) the fraction is checked; with ``resolution`` it is searched for.

    Raises
    ------
    DesignError
        The generators make a fraction that cannot be run as a split plot, or none reaches
        the resolution.
    """
    from trialkit.planning.designs.twolevel import fraction_matrix, normal_generator

    k = len(factors)
    letters = FACTOR_LETTERS[:k]
    names = [f.name for f in factors]
    wp = [names.index(n) for n in whole_plot_names]
    whole = sum(1 << i for i in wp)
    notes = []
    if generators:
        gens = tuple(normal_generator(g, letters) for g in generators)
        x = fraction_matrix(k, gens)
        for g in gens:
            target = letters.index(g[0])
            word = {letters.index(ch) for ch in g.split("=")[1].strip().lstrip("-")}
            if target in wp and any(i not in wp for i in word):
                raise DesignError(f"generator {g!r} sets the hard-to-change factor "
                                  f"{names[target]} from easy-to-change factors, so one tank "
                                  "would need two settings of it; generate it from "
                                  "hard-to-change factors only")
        s = alias_structure(x, letters)
        group = [m for m, _ in defining_words(x)]
        why = split_plot_problem(group, whole)
        if why:
            raise DesignError(f"the generators {', '.join(gens)} cannot be run as a split "
                              f"plot: {why}; choose other generators or drop them to let "
                              "trialkit search")
        notes.append(f"split-plot fraction from the generators given: {', '.join(gens)}")
    else:
        wanted = int(resolution or 3)
        gens, p, chosen, base = choose_split_plot_generators(k, wp, wanted)
        x = _matrix(k, base, chosen)
        s = alias_structure(x, letters)
        notes.append(f"2^({k}-{p}) split-plot fraction of minimum aberration among those "
                     f"that can be run with {', '.join(whole_plot_names)} per tank "
                     f"(resolution {roman(s.resolution)}"
                     + (f", above the {roman(wanted)} asked for: no smaller fraction keeps "
                        "the whole-plot main effects clear of subplot effects"
                        if s.resolution > wanted else "")
                     + f", {len(x)} runs): generators "
                     f"{', '.join(gens)}")
    design = Design("fractional-factorial", tuple(factors), two_level_frame(factors, x),
                    ("factorial",) * len(x), has_center=any(f.is_continuous for f in factors),
                    generators=tuple(gens), notes=notes)
    design.resolution = s.resolution
    design.defining_relation = s.defining_relation
    design.aliases = s.table
    return design


def whole_plot_fraction_size(trial, settings) -> int:
    """Whole plots in one replicate of the trial's split-plot fraction (0 if it fails)."""
    try:
        design = trial_split_plot_fraction(trial, settings)
    except DesignError:
        return 0
    return int(design.coded[list(settings.hard_to_change)].drop_duplicates().shape[0])


def trial_split_plot_fraction(trial, settings) -> Design:
    """The split-plot fraction a trial's ``[design]`` and ``[whole_plots]`` ask for."""
    opts = trial.design.options
    return split_plot_fraction(trial.factors, settings.hard_to_change,
                               resolution=opts.get("resolution"),
                               generators=opts.get("generators"))


def check_split_plot_fraction(trial, settings, where: str, problems) -> bool:
    """Add a problem when the trial's fraction cannot be run as a split plot."""
    try:
        trial_split_plot_fraction(trial, settings)
    except DesignError as exc:
        problems.add(f"{where}.hard_to_change", str(exc), value=", ".join(
            settings.hard_to_change), check="split_plot_fraction",
            fix="change the generators or the resolution in [design], or use a full "
                "factorial")
        return False
    return True
