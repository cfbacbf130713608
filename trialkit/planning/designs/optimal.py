"""D- and I-optimal designs by coordinate exchange (Meyer & Nachtsheim 1995).

Each random start is a set of feasible runs; every coordinate of every free run is then
replaced in turn by the candidate value (a grid of levels, the levels of a categorical
factor, and the points where a linear constraint meets that coordinate) that most
improves the criterion, until a whole pass brings no gain.  The D criterion is compared
as a log-determinant and the search runs on ``X'X + eps I`` so that a singular start
never stalls it; the I criterion is the average prediction variance over the design
region.  Runs to keep and the runs of an earlier plan (runs done) stay put.
Replicated points are allowed.

Examples
--------
>>> from trialkit.trial.factors import Factor
>>> fs = (Factor.continuous("ph", 5, 8),)
>>> res = optimal_design(fs, 3, model="quadratic", seed=1)
>>> sorted(res.coded["ph"].round(6).tolist())
[-1.0, 0.0, 1.0]
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from trialkit.exceptions import DesignError, ModelSpecError
from trialkit.planning import power as pw
from trialkit.planning.designs.base import Design
from trialkit.planning.designs.constraints import parse_cannot_mix, parse_constraint
from trialkit.planning.designs.exchange import Region, coordinate_exchange
from trialkit.planning.designs.optimal_keys import (  # OPTION_DESCRIPTIONS: re-exported
    CRITERIA,
    OPTION_DESCRIPTIONS,  # noqa: F401
    OPTION_KEYS,
)
from trialkit.problems import ProblemReport, did_you_mean
from trialkit.trial.factors import Factor
from trialkit.trial.retired_names import retired_key_hint
from trialkit.trial.textsafe import unescape_text


@dataclass
class OptimalResult:
    """An optimal design and how it was found.

    Attributes
    ----------
    coded : DataFrame
        All runs (runs to keep and runs done first), coded units / level labels.
    new : numpy.ndarray of bool
        Which rows were chosen by the search (False for runs to keep and runs done).
    criterion : str
    log_det : float
        ``log det(X'X/n)`` of the whole design.
    d_efficiency, average_variance : float
    try_values : list of float
        Criterion reached from each try (log-determinant for D, average variance for I).
    """

    coded: pd.DataFrame
    new: np.ndarray
    criterion: str
    model: str
    log_det: float
    d_efficiency: float
    average_variance: float
    try_values: list[float] = field(default_factory=list)

    def to_dict(self) -> dict:
        return {"criterion": self.criterion, "model": self.model, "runs": len(self.coded),
                "new_runs": int(self.new.sum()), "log_det": self.log_det,
                "d_efficiency": self.d_efficiency,
                "average_variance": self.average_variance,
                "try_values": list(self.try_values)}

    def __repr__(self) -> str:
        return (f"OptimalResult({self.criterion}-optimal, {len(self.coded)} runs, model "
                f"{self.model!r}, D-efficiency {self.d_efficiency:.2f} %)")

    def _repr_html_(self) -> str:
        return f"<p>{self!r}</p>" + self.coded.to_html(index=False)


def optimal_design(factors: Sequence[Factor], runs: int, *, model="quadratic",
                   criterion: str = "D", constraints: Sequence[str] = (),
                   cannot_mix: Sequence[Mapping] = (), keep_runs: pd.DataFrame | None = None,
                   runs_done: pd.DataFrame | None = None, tries: int = 10, grid: int = 5,
                   max_passes: int = 50, seed: int = 0) -> OptimalResult:
    """Search a D- or I-optimal design of ``runs`` new runs.

    Parameters
    ----------
    factors : sequence of Factor
    runs : int
        Number of runs the search chooses (besides ``keep_runs`` and ``runs_done`` rows).
    model : str or sequence of str
        Model the design must estimate (``"main"``, ``"interactions"``, ``"quadratic"``,
        ``"a + b + a:b"``).
    criterion : {"D", "I"}
    constraints : sequence of str
        Linear constraints in natural units, e.g. ``"ph >= 4 + 0.2*chelator"``.
    cannot_mix : sequence of dict
        Combinations that cannot be mixed (see
        :class:`~trialkit.planning.designs.constraints.CannotMix`).
    keep_runs, runs_done : DataFrame, optional
        Runs that must stay in the design (coded units / labels): chosen in advance, or
        already run in an earlier plan.
    tries, grid, max_passes, seed : int
        Random starting designs, levels per continuous factor, passes per try, random seed.
    """
    factors = tuple(factors)
    criterion = str(criterion).upper()
    if criterion not in CRITERIA:
        raise DesignError(f"criterion must be one of {list(CRITERIA)}, got {criterion!r}")
    dm = pw.DesignModel.from_spec(model, factors)
    region = Region(factors, [parse_constraint(c, factors) for c in constraints],
                     [parse_cannot_mix(d, factors) for d in cannot_mix], int(grid))
    region.check_feasible()
    kept = [t for t in (runs_done, keep_runs) if t is not None and len(t)]
    U0 = np.vstack([dm.encode(t) for t in kept]) if kept else np.empty((0, len(factors)))
    if len(U0) and not region.feasible(U0).all():
        bad = np.flatnonzero(~region.feasible(U0)) + 1
        raise DesignError(f"runs to keep or runs done {bad.tolist()} lie outside the allowed "
                          "region (ranges, constraints, combinations that cannot be "
                          "mixed); correct "
                          "them or drop the constraint")
    n = len(U0) + int(runs)
    if n < dm.p:
        raise DesignError(f"model {model!r} has {dm.p} coefficients, so it needs at least "
                          f"{dm.p} runs in all; got {n}. Ask for more runs or a smaller "
                          "model")
    rng = np.random.default_rng(seed)
    pool = region.pool(rng)
    if len(pool) == 0:
        raise DesignError("no candidate point meets the constraints and the combinations "
                          "that cannot be mixed; relax them or use a finer grid")
    W = dm.moment_matrix() if criterion == "I" else None
    free = np.r_[np.zeros(len(U0), bool), np.ones(int(runs), bool)]
    tables = [dm.factor_columns(j, region.values[j]) for j in range(len(factors))]
    best_U, best_val, values = None, None, []
    for _ in range(max(1, int(tries))):
        U = np.vstack([U0, pool[rng.integers(0, len(pool), int(runs))]])
        U = coordinate_exchange(dm, region, U, free, criterion, W, rng, max_passes, tables)
        X = dm.expand(U)
        ld = pw.log_det_information(X)
        val = ld if criterion == "D" else (pw.average_variance(X, W) if np.isfinite(ld)
                                           else np.inf)
        values.append(float(val))
        better = best_val is None or (val > best_val if criterion == "D" else val < best_val)
        if np.isfinite(ld) and better:
            best_U, best_val = U.copy(), val
    if best_U is None or np.linalg.matrix_rank(dm.expand(best_U)) < dm.p:
        raise DesignError(f"no try gave a design that can estimate model {model!r} "
                          f"({dm.p} coefficients) within the allowed region; add runs, "
                          "use a smaller model or relax the constraints")
    X = dm.expand(best_U)
    coded = dm.decode(best_U)
    return OptimalResult(coded, free, criterion, model if isinstance(model, str)
                         else " + ".join(model), pw.log_det_information(X),
                         pw.d_efficiency(X), pw.average_variance(X, dm.moment_matrix()),
                         values)


# -- trial-file face ----------------------------------------------------------------
def _natural_rows(rows: Sequence[Mapping], factors, what: str) -> pd.DataFrame:
    """Tables of natural values (all factors) -> coded DataFrame."""
    out = []
    for r, row in enumerate(rows, 1):
        rec = {}
        for f in factors:
            if f.name not in row:
                raise DesignError(f"{what} run {r} has no value for {f.name!r}; give every "
                                  "factor")
            v = row[f.name]
            rec[f.name] = f.to_coded(float(v)) if f.is_continuous else str(v)
        out.append(rec)
    return pd.DataFrame(out, columns=[f.name for f in factors])


def _read_existing(path: Path, factors) -> pd.DataFrame:
    table = pd.read_csv(path)
    for c in table.columns:  # text written formula-safe (trial.textsafe) comes back as it was
        if table[c].dtype == object or pd.api.types.is_string_dtype(table[c]):
            table[c] = table[c].map(lambda v: unescape_text(v) if isinstance(v, str) else v)
    if "bath" in table:
        table = table.drop_duplicates("bath")
    if "point" in table:
        table = table[~table.point.isin(("control", "reference"))]
    missing = [f.name for f in factors if f.name not in table]
    if missing:
        raise DesignError(f"earlier plan {path} has no column for {missing}; runs_done needs "
                          "a plan.csv of a trial with the same factors")
    table = table.dropna(subset=[f.name for f in factors])
    return _natural_rows(table.to_dict("records"), factors, f"earlier plan {path.name}")


def check_optimal_options(factors: Sequence[Factor], options: Mapping,
                          problems: ProblemReport, where: str = "design") -> None:
    """Add a problem for every unusable option of ``kind = "optimal"``."""
    factors = tuple(factors)

    def bad(key, msg, value, fix, check):
        problems.add(f"{where}.{key}", msg, value=value, fix=fix, check=check)

    for key in options:
        if key not in OPTION_KEYS:
            bad(key, f"unknown option {key!r} for an optimal design", key,
                retired_key_hint("optimal", key) or did_you_mean(key, list(OPTION_KEYS)),
                "unknown_option")
    ints = {"runs": (1, 10_000), "tries": (1, 1000), "grid": (2, 21), "max_passes": (1, 1000)}
    for key, (lo, hi) in ints.items():
        if key in options:
            v = options[key]
            if isinstance(v, bool) or not isinstance(v, int) or not lo <= v <= hi:
                bad(key, f"{key} must be a whole number from {lo} to {hi}", v,
                    f"write e.g. {key} = {max(lo, 5)}", "bad_integer")
    if "runs" not in options:
        bad("runs", "an optimal design needs the number of runs", "",
            "add runs = 12 (at least the number of model coefficients)", "missing_runs")
    if str(options.get("criterion", "D")).upper() not in CRITERIA:
        bad("criterion", "criterion must be D or I", options.get("criterion"),
            "write criterion = \"D\"", "bad_criterion")
    p = None
    try:
        p = pw.DesignModel.from_spec(options.get("model", "quadratic"), factors).p
    except ModelSpecError as exc:
        bad("model", str(exc), options.get("model"), "main, interactions, quadratic or "
            "'a + b + a:b'", "bad_model")
    for key, parse in (("constraints", parse_constraint), ("cannot_mix", parse_cannot_mix)):
        items = options.get(key, [])
        if not isinstance(items, list):
            bad(key, f"{key} must be a list", items, f"write {key} = [ ... ]", "not_list")
            continue
        for i, item in enumerate(items):
            try:
                parse(item, factors)
            except DesignError as exc:
                problems.add(f"{where}.{key}[{i}]", str(exc), value=item,
                             check=f"bad_{key}", fix="see the message")
    n_fixed = 0
    keep = options.get("keep_runs", [])
    if not isinstance(keep, list) or not all(isinstance(r, Mapping) for r in keep):
        bad("keep_runs", "keep_runs must be a list of tables {factor = value}", keep,
            "write keep_runs = [{chelator = 4, ph = 6}]", "not_list")
    else:
        try:
            n_fixed = len(_natural_rows(keep, factors, "run to keep"))
        except (DesignError, ValueError, KeyError, TypeError) as exc:
            bad("keep_runs", str(exc), keep, "give every factor a value in its range",
                "bad_keep_runs")
    if "runs_done" in options and not isinstance(options["runs_done"], str):
        bad("runs_done", "runs_done must be the path of an earlier plan.csv",
            options["runs_done"], "write runs_done = \"../first-trial/plan.csv\"",
            "bad_runs_done")
    runs = options.get("runs")
    if p is not None and isinstance(runs, int) and "runs_done" not in options \
            and runs + n_fixed < p:
        bad("runs", f"the model has {p} coefficients, so at least {p} runs are needed",
            runs, f"write runs = {p - n_fixed} or more, or use a smaller model",
            "too_few_runs")


def build_optimal(factors: Sequence[Factor], options: Mapping, *, seed: int,
                  folder: str | Path | None = None) -> Design:
    """The ``kind = "optimal"`` design builder (point type ``"optimal"``).

    Runs to keep are part of the design; runs of an earlier plan (``runs_done``) are not
    repeated: the design holds only the new runs, chosen to complement them.
    """
    factors = tuple(factors)
    problems = ProblemReport("design options")
    check_optimal_options(factors, options, problems)
    problems.raise_if_any(DesignError, "the optimal design options have problems")
    keep = options.get("keep_runs", [])
    keep_df = _natural_rows(keep, factors, "run to keep") if keep else None
    existing = None
    if "runs_done" in options:
        path = Path(options["runs_done"])
        if not path.is_absolute() and folder is not None:
            path = Path(folder) / path
        if not path.exists():
            raise DesignError(f"runs_done: earlier plan {path} not found; give the path of "
                              "its plan.csv, relative to the trial folder")
        existing = _read_existing(path, factors)
    res = optimal_design(
        factors, options["runs"], model=options.get("model", "quadratic"),
        criterion=options.get("criterion", "D"), constraints=options.get("constraints", ()),
        cannot_mix=options.get("cannot_mix", ()), keep_runs=keep_df, runs_done=existing,
        tries=options.get("tries", 10), grid=options.get("grid", 5),
        max_passes=options.get("max_passes", 50), seed=seed)
    n_old = 0 if existing is None else len(existing)
    coded = res.coded.iloc[n_old:].reset_index(drop=True)
    notes = [f"{res.criterion}-optimal design for model {res.model!r} by coordinate "
             f"exchange, best of {len(res.try_values)} seeded tries; D-efficiency "
             f"{res.d_efficiency:.1f} %"]
    if keep_df is not None:
        notes.append(f"{len(keep_df)} run(s) to keep are included")
    if existing is not None:
        notes.append(f"chosen to complement {n_old} run(s) of an earlier plan, which are "
                     "not repeated here")
    if options.get("constraints"):
        notes.append("constraints met by every run: " + "; ".join(options["constraints"]))
    return Design(kind="optimal", factors=factors, coded=coded,
                  point=("optimal",) * len(coded),
                  has_center=all(f.is_continuous for f in factors), notes=notes)
