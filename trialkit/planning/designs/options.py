"""Design kinds, the options each accepts, and their validation.

:func:`check_design_options` adds one :class:`~trialkit.problems.Problem` per fault to a
:class:`~trialkit.problems.ProblemReport` and never raises, so the trial-file validator
can report every problem at once.  Each problem carries a stable ``check`` code:

=========================  ============================================================
check                      meaning
=========================  ============================================================
unknown_design_kind        kind is not one of :data:`DESIGN_KINDS`
unknown_design_option      an option key the kind does not accept
option_type                an option of the wrong type (text for a number ...)
missing_design_option      a required option is missing
conflicting_options        two options that exclude each other
too_few_factors            the kind needs more factors (of the right sort)
too_many_factors           the kind cannot take that many factors
too_many_runs              a full factorial (or a fraction from generators) beyond
                           :data:`MAX_FULL_FACTORIAL_RUNS` points
over_limit                 a count above its limit (levels, sweep count, Latin hypercube
                           runs, iterations; see :mod:`trialkit.trial.limits`)
categorical_not_two_level  a two-level kind got a categorical factor without 2 levels
resolution_out_of_range    resolution outside 3..8
resolution_unreachable     no fraction of this many factors reaches the resolution
resolution_not_met         the given generators give less than the given resolution
no_tabulated_design        resolution asked for more than 10 factors (beyond Table 3.17)
generators_invalid         a generator that cannot be parsed or does not fit the factors
levels_invalid             full-factorial ``levels`` not a whole number >= 2
alpha_invalid              alpha not rotatable/face/inscribed or a number > 0
sweep_no_continuous        a sweep without any continuous factor
sweep_factor_ambiguous     several continuous factors and no ``factor`` option
sweep_factor_unknown       ``factor`` names no continuous factor
sweep_levels_range         a sweep level outside low..high
sweep_levels_order         sweep levels not strictly increasing
sweep_count_invalid        ``count`` not a whole number >= 2
spacing_invalid            ``spacing`` not linear or geometric
geometric_nonpositive      geometric spacing with low <= 0
runs_invalid               Latin hypercube ``runs`` not a whole number >= 2
spread_invalid             unknown Latin hypercube spread
=========================  ============================================================

Examples
--------
>>> from trialkit.trial.factors import Factor
>>> from trialkit.problems import ProblemReport
>>> r = ProblemReport("trial.toml")
>>> fs = [Factor.continuous(n, 0, 1) for n in "abcd"]
>>> check_design_options(fs, "fractional-factorial", {"resolutoin": 4}, r)
>>> r.checks()
['unknown_design_option', 'missing_design_option']
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

from trialkit.exceptions import DesignError
from trialkit.planning.designs.aliasing import alias_structure, roman
from trialkit.planning.designs.generators import check_generator_set
from trialkit.planning.designs.optimal_keys import OPTION_DESCRIPTIONS as OPTIMAL_OPTIONS
from trialkit.planning.designs.space import LHS_SPREADS
from trialkit.planning.designs.twolevel import fraction_matrix
from trialkit.problems import ProblemReport, did_you_mean
from trialkit.trial import limits
from trialkit.trial.factors import FACTOR_LETTERS, Factor
from trialkit.trial.retired_names import retired_key_hint, retired_value_hint
from trialkit.trial.spec import DesignSpec

DESIGN_KINDS = ("full-factorial", "fractional-factorial", "plackett-burman",
                "central-composite", "box-behnken", "sweep", "latin-hypercube", "optimal")

#: kind -> option key -> description.
DESIGN_OPTIONS: dict[str, dict[str, str]] = {
    "full-factorial": {
        "levels": "whole number >= 2: equally spaced levels for every continuous factor "
                  "without its own levels (default 2: low and high)",
    },
    "fractional-factorial": {
        "resolution": "3..8: the smallest published fraction of at least this resolution",
        "generators": "list such as [\"E = ABCD\", \"F = -ABC\"] (letters A B C ... skip I); "
                      "with resolution too, the generators must reach it",
    },
    "plackett-burman": {},
    "central-composite": {
        "alpha": "\"rotatable\" (default), \"face\", \"inscribed\" or a number > 0 "
                 "(axial distance in coded units)",
    },
    "box-behnken": {},
    "sweep": {
        "factor": "name of the continuous factor to sweep (default: the only one)",
        "levels": "list of natural values, strictly increasing, within low..high",
        "count": "whole number >= 2 of levels from low to high (default: the factor's "
                 "own levels, else 5)",
        "spacing": "\"linear\" (default) or \"geometric\" (constant ratio; low > 0)",
    },
    "latin-hypercube": {
        "runs": "whole number >= 2 of points (default 10 per continuous factor)",
        "spread": "\"cell-centres\", \"widest-gaps\", \"centred-gaps\" or "
                  "\"least-correlated\" (default: plain random points in their cells)",
        "iterations": "whole number >= 1 of random hypercubes to choose the spread from "
                      "(default 5)",
    },
    "optimal": OPTIMAL_OPTIONS,
}

MAX_FULL_FACTORIAL_RUNS = 4096
MAX_TWO_LEVEL_FACTORS = len(FACTOR_LETTERS)
MAX_PB_FACTORS = 47
MAX_TABULATED_FACTORS = 10


def _is_int(v) -> bool:
    return isinstance(v, int) and not isinstance(v, bool)


def _is_num(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def check_design_options(factors: Sequence[Factor], kind: str, options: Mapping,
                         problems: ProblemReport, where: str = "design") -> None:
    """Add a Problem to ``problems`` for every fault of ``kind`` + ``options``."""
    add = problems.add
    if kind not in DESIGN_KINDS:
        add(f"{where}.kind", f"unknown design kind {kind!r}", value=kind,
            fix=did_you_mean(str(kind), DESIGN_KINDS), check="unknown_design_kind")
        return
    allowed = DESIGN_OPTIONS[kind]
    for key in options:
        if key not in allowed:
            fix = (retired_key_hint(kind, str(key))
                   or (did_you_mean(str(key), tuple(allowed)) if allowed
                       else f"{kind} takes no options; remove it"))
            add(f"{where}.{key}", f"{kind} does not take option {key!r}", value=key,
                fix=fix, check="unknown_design_option")
    opts = {k: v for k, v in options.items() if k in allowed}
    cont = [f for f in factors if f.is_continuous]
    cats = [f for f in factors if not f.is_continuous]
    if any(not (_is_num(f.low) and _is_num(f.high) and f.low < f.high) for f in cont) or \
            any(len(f.levels) < 2 for f in cats):
        return  # the factors themselves are faulty; the trial-file checks report that
    _CHECKERS[kind](factors, cont, cats, opts, problems, where)


def check_design_section(table: Mapping, factors: Sequence[Factor],
                         problems: ProblemReport) -> DesignSpec | None:
    """Check a trial file's ``[design]`` table; its :class:`DesignSpec`, or ``None``.

    Called by the trial-file reader (:data:`trialkit.trial.file.DESIGN_CHECKER`).
    """
    kind = table.get("kind")
    if kind not in DESIGN_KINDS:
        problems.add("design.kind", f"unknown design kind {kind!r}", value=kind,
                     check="bad_design_kind", fix=did_you_mean(str(kind), list(DESIGN_KINDS)))
        return None
    options = {k: v for k, v in table.items() if k != "kind"}
    if factors:
        check_design_options(factors, kind, options, problems, where="design")
    return DesignSpec(kind, options)


def _within(value, limit, where, what, problems) -> bool:
    """False (and an ``over_limit`` problem) when ``value`` is above ``limit``."""
    if value > limit:
        problems.add(where, f"{what} is limited to {limit:,} (set well above any real "
                     "trial)", value=value, check="over_limit",
                     fix=f"use {limit:,} or fewer")
        return False
    return True


def _two_level_cats(cats, kind, problems, where):
    for f in cats:
        if len(f.levels) != 2:
            problems.add(f"{where}.kind", f"{kind} takes categorical factors with exactly 2 "
                         f"levels; {f.name!r} has {len(f.levels)}", value=len(f.levels),
                         fix="use kind = 'full-factorial', or make the factor two-level",
                         check="categorical_not_two_level")


def _check_full(factors, cont, cats, opts, problems, where):
    if not factors:
        problems.add(f"{where}.kind", "a full factorial needs at least one factor",
                     check="too_few_factors", fix="add [[factor]] entries")
        return
    n = opts.get("levels")
    if n is not None and not (_is_int(n) and n >= 2):
        problems.add(f"{where}.levels", "levels must be a whole number >= 2", value=n,
                     fix="e.g. levels = 3", check="levels_invalid")
        n = None
    elif n is not None and not _within(n, limits.MAX_LEVELS, f"{where}.levels", "levels",
                                       problems):
        return
    runs = 1
    for f in factors:
        runs *= len(f.levels) if f.levels else (n or 2)
    if runs > MAX_FULL_FACTORIAL_RUNS:
        problems.add(f"{where}.kind", f"the full factorial has {runs} points, more than "
                     f"{MAX_FULL_FACTORIAL_RUNS}", value=runs, check="too_many_runs",
                     fix="use a fractional-factorial or plackett-burman design")


def _check_fractional(factors, cont, cats, opts, problems, where):
    k = len(factors)
    _two_level_cats(cats, "fractional-factorial", problems, where)
    if k < 3:
        problems.add(f"{where}.kind", f"a fractional factorial needs 3 or more factors; got "
                     f"{k}", value=k, check="too_few_factors",
                     fix="use kind = 'full-factorial'")
        return
    if k > MAX_TWO_LEVEL_FACTORS:
        problems.add(f"{where}.kind", f"at most {MAX_TWO_LEVEL_FACTORS} factors can be "
                     "lettered", value=k, check="too_many_factors",
                     fix="use kind = 'plackett-burman'")
        return
    res, gens = opts.get("resolution"), opts.get("generators")
    if res is None and gens is None:
        problems.add(f"{where}", "a fractional factorial needs resolution or generators",
                     check="missing_design_option",
                     fix="add e.g. resolution = 4, or generators = [\"D = ABC\"]")
    if res is not None:
        if not _is_int(res):
            problems.add(f"{where}.resolution", "resolution must be a whole number",
                         value=res, fix="e.g. resolution = 4", check="option_type")
        elif not 3 <= res <= 8:
            problems.add(f"{where}.resolution", "resolution must be 3 to 8", value=res,
                         fix="3: main effects clear of each other; 4: clear of two-factor "
                             "interactions; 5: two-factor interactions clear of each other",
                         check="resolution_out_of_range")
        elif res > k:
            problems.add(f"{where}.resolution", f"no fraction of {k} factors reaches "
                         f"resolution {roman(res)} (the half fraction is {roman(k)})",
                         value=res, check="resolution_unreachable",
                         fix=f"lower the resolution to {k} or less, or use kind = "
                             "'full-factorial'")
        elif gens is None and k > MAX_TABULATED_FACTORS:
            problems.add(f"{where}.resolution", f"the published table of fractions goes to "
                         f"{MAX_TABULATED_FACTORS} factors; got {k}", value=res,
                         check="no_tabulated_design",
                         fix="give generators = [...] explicitly, or use kind = "
                             "'plackett-burman' for screening")
    if gens is not None:
        if not (isinstance(gens, (list, tuple)) and all(isinstance(g, str) for g in gens)):
            problems.add(f"{where}.generators", "generators must be a list of text such as "
                         "\"E = ABCD\"", value=gens, check="option_type",
                         fix="generators = [\"E = ABCD\"]")
        else:
            try:
                check_generator_set(list(gens), FACTOR_LETTERS[:k])
            except DesignError as exc:
                problems.add(f"{where}.generators", str(exc), value=", ".join(gens),
                             check="generators_invalid",
                             fix=f"factors are lettered {' '.join(FACTOR_LETTERS[:k])}")
                return
            runs = 2 ** (k - len(gens))
            if runs > MAX_FULL_FACTORIAL_RUNS:
                problems.add(f"{where}.generators", f"{len(gens)} generator(s) for {k} "
                             f"factors give {runs:,} runs, more than "
                             f"{MAX_FULL_FACTORIAL_RUNS}", value=", ".join(gens),
                             check="too_many_runs",
                             fix="add generators (a smaller fraction) or use kind = "
                                 "'plackett-burman'")
                return
            if _is_int(res) and 3 <= res <= k:
                got = alias_structure(fraction_matrix(k, gens)).resolution
                if got < res:
                    problems.add(f"{where}.generators", f"these generators give resolution "
                                 f"{roman(got)}, below the resolution {roman(res)} asked for",
                                 value=", ".join(gens), check="resolution_not_met",
                                 fix="change the generators, or drop them and let the "
                                     "resolution choose a published design")


def _check_pb(factors, cont, cats, opts, problems, where):
    k = len(factors)
    _two_level_cats(cats, "plackett-burman", problems, where)
    if k < 2:
        problems.add(f"{where}.kind", f"a Plackett–Burman design needs 2 or more factors; "
                     f"got {k}", value=k, check="too_few_factors",
                     fix="use kind = 'full-factorial'")
    elif k > MAX_PB_FACTORS:
        problems.add(f"{where}.kind", f"at most {MAX_PB_FACTORS} factors", value=k,
                     check="too_many_factors", fix="screen the factors in two trials")


def _check_ccd(factors, cont, cats, opts, problems, where):
    if len(cont) < 2:
        problems.add(f"{where}.kind", f"a central composite design needs 2 or more "
                     f"continuous factors; got {len(cont)}", value=len(cont),
                     check="too_few_factors",
                     fix="add continuous factors, or use kind = 'full-factorial'")
    elif len(cont) > 10:
        problems.add(f"{where}.kind", f"a central composite with a full factorial portion "
                     f"of {len(cont)} factors has {2 ** len(cont)} factorial points",
                     value=len(cont), check="too_many_factors",
                     fix="screen first with a fractional-factorial design")
    a = opts.get("alpha")
    if a is not None and not (a in ("rotatable", "face", "inscribed")
                              or (_is_num(a) and a > 0)):
        problems.add(f"{where}.alpha", "alpha must be 'rotatable', 'face', 'inscribed' or "
                     "a number > 0", value=a, check="alpha_invalid",
                     fix=did_you_mean(str(a), ("rotatable", "face", "inscribed"))
                     if isinstance(a, str) else "e.g. alpha = 1.5")


def _check_bbd(factors, cont, cats, opts, problems, where):
    if len(cont) < 3:
        problems.add(f"{where}.kind", f"a Box–Behnken design needs 3 to 7 continuous "
                     f"factors; got {len(cont)}", value=len(cont), check="too_few_factors",
                     fix="use kind = 'central-composite' for 2 factors")
    elif len(cont) > 7:
        problems.add(f"{where}.kind", f"a Box–Behnken design needs 3 to 7 continuous "
                     f"factors; got {len(cont)}", value=len(cont), check="too_many_factors",
                     fix="screen first with a fractional-factorial design")


def _check_sweep(factors, cont, cats, opts, problems, where):
    if not cont:
        problems.add(f"{where}.kind", "a sweep needs one continuous factor; there is none",
                     check="sweep_no_continuous", fix="give a factor low and high values")
        return
    name = opts.get("factor")
    f = None
    if name is None:
        if len(cont) > 1:
            problems.add(f"{where}.factor", f"{len(cont)} continuous factors: say which to "
                         "sweep", value=", ".join(c.name for c in cont),
                         check="sweep_factor_ambiguous",
                         fix=f"add factor = {cont[0].name!r} (the others are held at "
                             "mid-range)")
        else:
            f = cont[0]
    else:
        hits = [c for c in cont if c.name == name]
        if hits:
            f = hits[0]
        else:
            problems.add(f"{where}.factor", f"{name!r} is not a continuous factor", value=name,
                         check="sweep_factor_unknown",
                         fix=did_you_mean(str(name), tuple(c.name for c in cont)))
    levels, count, spacing = opts.get("levels"), opts.get("count"), opts.get("spacing")
    if levels is not None and (count is not None or spacing is not None):
        problems.add(f"{where}.levels", "give either levels or count (+ spacing), not both",
                     check="conflicting_options", fix="remove levels or count/spacing")
    if levels is not None:
        if not (isinstance(levels, (list, tuple)) and len(levels) >= 2
                and all(_is_num(v) for v in levels)):
            problems.add(f"{where}.levels", "levels must be a list of 2 or more numbers",
                         value=levels, check="option_type", fix="e.g. levels = [2, 4, 8]")
        elif not _within(len(levels), limits.MAX_LEVELS, f"{where}.levels",
                         "the number of sweep levels", problems):
            pass
        else:
            if any(b <= a for a, b in zip(levels, levels[1:], strict=False)):
                problems.add(f"{where}.levels", "sweep levels must be strictly increasing",
                             value=levels, check="sweep_levels_order",
                             fix="sort the levels and remove repeats")
            if f is not None:
                out = [v for v in levels if v < f.low or v > f.high]
                if out:
                    problems.add(f"{where}.levels", f"levels outside {f.name}'s range "
                                 f"{f.low:g}..{f.high:g}", value=out,
                                 check="sweep_levels_range",
                                 fix="widen low/high of the factor or drop those levels")
    if count is not None and not (_is_int(count) and count >= 2):
        problems.add(f"{where}.count", "count must be a whole number >= 2", value=count,
                     check="sweep_count_invalid", fix="e.g. count = 5")
    elif count is not None:
        _within(count, limits.MAX_LEVELS, f"{where}.count", "count", problems)
    if spacing is not None:
        if spacing not in ("linear", "geometric"):
            problems.add(f"{where}.spacing", "spacing must be 'linear' or 'geometric'",
                         value=spacing, check="spacing_invalid",
                         fix=did_you_mean(str(spacing), ("linear", "geometric")))
        elif spacing == "geometric" and f is not None and f.low <= 0:
            problems.add(f"{where}.spacing", f"geometric spacing needs low > 0; {f.name} "
                         f"starts at {f.low:g}", value=f.low, check="geometric_nonpositive",
                         fix="raise low above 0 or use spacing = 'linear'")
        if count is None and spacing is not None:
            problems.add(f"{where}.count", "spacing needs count", check="missing_design_option",
                         fix="add e.g. count = 5")


def _check_lhs(factors, cont, cats, opts, problems, where):
    if not cont:
        problems.add(f"{where}.kind", "a Latin hypercube needs at least one continuous "
                     "factor", check="too_few_factors", fix="give a factor low and high")
    runs = opts.get("runs")
    if runs is not None and not (_is_int(runs) and runs >= 2):
        problems.add(f"{where}.runs", "runs must be a whole number >= 2", value=runs,
                     check="runs_invalid", fix="e.g. runs = 20")
    elif runs is not None:
        _within(runs, limits.MAX_DESIGN_POINTS, f"{where}.runs", "runs", problems)
    spread = opts.get("spread")
    if spread is not None and spread not in LHS_SPREADS:
        problems.add(f"{where}.spread", "unknown spread", value=spread,
                     check="spread_invalid",
                     fix=(retired_value_hint("design.spread", spread)
                          or did_you_mean(str(spread), list(LHS_SPREADS))))
    it = opts.get("iterations")
    if it is not None and not (_is_int(it) and it >= 1):
        problems.add(f"{where}.iterations", "iterations must be a whole number >= 1",
                     value=it, check="option_type", fix="e.g. iterations = 10")
    elif it is not None:
        _within(it, limits.MAX_SEARCH, f"{where}.iterations", "iterations", problems)


def _check_optimal(factors, cont, cats, opts, problems, where):
    # imported here: the search and its power computations load only for optimal designs
    from trialkit.planning.designs.optimal import check_optimal_options

    check_optimal_options(factors, opts, problems, where)


_CHECKERS = {
    "full-factorial": _check_full,
    "fractional-factorial": _check_fractional,
    "plackett-burman": _check_pb,
    "central-composite": _check_ccd,
    "box-behnken": _check_bbd,
    "sweep": _check_sweep,
    "latin-hypercube": _check_lhs,
    "optimal": _check_optimal,
}
