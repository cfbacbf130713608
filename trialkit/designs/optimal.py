"""D- and I-optimal designs by coordinate exchange (Meyer & Nachtsheim 1995).

Each random start is a set of feasible runs; every coordinate of every free run is then
replaced in turn by the candidate value (a grid of levels, the levels of a categorical
factor, and the points where a linear constraint meets that coordinate) that most
improves the criterion, until a whole pass brings no gain.  The D criterion is compared
as a log-determinant and the search runs on ``X'X + eps I`` so that a singular start
never stalls it; the I criterion is the average prediction variance over the design
region.  Runs fixed in advance and the runs of an earlier plan (augmentation) stay put.
Replicated points are allowed.

Examples
--------
>>> from trialkit.factors import Factor
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

from trialkit import power as pw
from trialkit.designs.base import Design
from trialkit.designs.constraints import (
    Disallowed,
    LinearConstraint,
    parse_constraint,
    parse_disallowed,
)
from trialkit.exceptions import DesignError, ModelSpecError
from trialkit.factors import Factor
from trialkit.problems import ProblemReport, did_you_mean

CRITERIA = ("D", "I")
OPTION_KEYS = ("runs", "model", "criterion", "starts", "grid", "constraints", "disallow",
               "fixed", "augment", "max_passes")
_RIDGE = 1e-7
_GAIN = 1e-10


@dataclass
class OptimalResult:
    """An optimal design and how it was found.

    Attributes
    ----------
    coded : DataFrame
        All runs (fixed and earlier runs first), coded units / level labels.
    new : numpy.ndarray of bool
        Which rows were chosen by the search (False for fixed and earlier runs).
    criterion : str
    log_det : float
        ``log det(X'X/n)`` of the whole design.
    d_efficiency, average_variance : float
    start_values : list of float
        Criterion reached from each start (log-determinant for D, average variance for I).
    """

    coded: pd.DataFrame
    new: np.ndarray
    criterion: str
    model: str
    log_det: float
    d_efficiency: float
    average_variance: float
    start_values: list[float] = field(default_factory=list)

    def to_dict(self) -> dict:
        return {"criterion": self.criterion, "model": self.model, "runs": len(self.coded),
                "new_runs": int(self.new.sum()), "log_det": self.log_det,
                "d_efficiency": self.d_efficiency,
                "average_variance": self.average_variance,
                "start_values": list(self.start_values)}

    def __repr__(self) -> str:
        return (f"OptimalResult({self.criterion}-optimal, {len(self.coded)} runs, model "
                f"{self.model!r}, D-efficiency {self.d_efficiency:.2f} %)")

    def _repr_html_(self) -> str:
        return f"<p>{self!r}</p>" + self.coded.to_html(index=False)


class _Region:
    """Feasibility and coordinate candidates of the design region."""

    def __init__(self, factors, constraints: Sequence[LinearConstraint],
                 disallowed: Sequence[Disallowed], grid: int):
        self.factors = tuple(factors)
        self.constraints = tuple(constraints)
        self.disallowed = tuple(disallowed)
        self.values = []
        for f in self.factors:
            if f.is_categorical:
                self.values.append(np.arange(f.n_levels, dtype=float))
            else:
                self.values.append(np.linspace(-1.0, 1.0, grid))
        self.cont = np.array([f.is_continuous for f in self.factors], dtype=bool)
        # coordinates whose candidates are always the plain level list (no checks needed)
        touched = set()
        for c in self.constraints:
            touched |= set(np.flatnonzero(np.abs(c.coefficients) > 1e-12))
        for d in self.disallowed:
            touched |= {i for i, f in enumerate(self.factors) if f.name in d.spec}
        self.simple = [i not in touched for i in range(len(self.factors))]

    def feasible(self, U) -> np.ndarray:
        U = np.atleast_2d(U)
        ok = np.all(np.abs(U[:, self.cont]) <= 1 + 1e-9, axis=1)
        for c in self.constraints:
            ok &= c.satisfied(U)
        for d in self.disallowed:
            ok &= ~d.matches(U, self.factors)
        return ok

    def candidates(self, row: np.ndarray, j: int) -> np.ndarray:
        vals = self.values[j]
        if self.cont[j] and self.constraints:
            extra = []
            for c in self.constraints:
                a = c.coefficients[j]
                if abs(a) > 1e-12:
                    rest = c.coefficients @ row - a * row[j]
                    v = (c.bound - rest) / a
                    if -1 < v < 1:
                        extra.append(v)
            if extra:
                vals = np.concatenate([vals, extra])
        U = np.repeat(row[None, :], len(vals), axis=0)
        U[:, j] = vals
        return U[self.feasible(U)]

    def pool(self, rng, size: int = 4000) -> np.ndarray:
        """Feasible starting points: random grid points and random vertices."""
        k = len(self.factors)
        U = np.column_stack([rng.choice(v, size) for v in self.values]) if k else \
            np.empty((size, 0))
        pts = [U[self.feasible(U)]]
        if self.constraints and self.cont.any():
            pts.append(self._vertices(rng, 60))
        P = np.vstack(pts)
        return P

    def _vertices(self, rng, n) -> np.ndarray:
        from scipy.optimize import linprog

        k = len(self.factors)
        ci = np.flatnonzero(self.cont)
        A = np.array([c.coefficients[ci] for c in self.constraints])
        b = np.array([c.bound for c in self.constraints])
        out = []
        for _ in range(n):
            cats = np.array([rng.choice(v) for v in self.values])
            res = linprog(rng.standard_normal(len(ci)), A_ub=A,
                          b_ub=b - A @ np.zeros(len(ci)) - 1e-7, bounds=[(-1, 1)] * len(ci),
                          method="highs")
            if res.status == 0:
                row = cats.copy()
                row[ci] = res.x
                out.append(row)
        return np.array(out).reshape(-1, k)

    def check_feasible(self) -> None:
        """Raise DesignError naming the constraints when no point meets them all."""
        if self.constraints and self.cont.any():
            from scipy.optimize import linprog

            ci = np.flatnonzero(self.cont)
            A = np.array([c.coefficients[ci] for c in self.constraints])
            b = np.array([c.bound for c in self.constraints])
            res = linprog(np.zeros(len(ci)), A_ub=A, b_ub=b, bounds=[(-1, 1)] * len(ci),
                          method="highs")
            if res.status != 0:
                texts = "; ".join(c.text for c in self.constraints)
                raise DesignError(
                    f"no combination of factor levels inside their ranges meets all the "
                    f"constraints ({texts}); widen the factor ranges or relax a constraint")


def _search(model: pw.DesignModel, region: _Region, U: np.ndarray, free: np.ndarray,
            criterion: str, W: np.ndarray | None, rng, max_passes: int,
            tables: list[np.ndarray]) -> np.ndarray:
    """Coordinate exchange from start ``U`` (rows ``free`` may move); returns ``U``."""
    X = model.expand(U)
    n, k = U.shape
    p = model.p
    A = np.linalg.inv(X.T @ X + _RIDGE * np.eye(p))
    rows = np.flatnonzero(free)
    simple = region.simple
    others = [np.array([f for f in range(k) if f != j], dtype=int) for j in range(k)]
    eye = _RIDGE * np.eye(p)
    for _ in range(max_passes):
        improved = False
        for i in rng.permutation(rows):
            G = np.empty((p, k))
            for f in range(k):
                G[:, f] = model.factor_columns(f, U[i, f])[0]
            for j in range(k):
                rest = G[:, others[j]].prod(axis=1)
                if simple[j]:
                    vals = region.values[j]
                    Y = tables[j] * rest
                else:
                    cand = region.candidates(U[i], j)
                    if len(cand) == 0:
                        continue
                    vals = cand[:, j]
                    Y = model.factor_columns(j, vals) * rest
                x = X[i]
                Ax = A @ x
                d1 = 1.0 - x @ Ax
                if d1 <= 1e-12:
                    continue
                A1 = A + (Ax[:, None] * Ax[None, :]) / d1
                YA = Y @ A1
                q = 1.0 + np.einsum("ij,ij->i", YA, Y)
                if criterion == "D":
                    gain = d1 * q                      # det ratio new/old
                    best = int(np.argmax(gain))
                    ok = gain[best] > 1.0 + _GAIN
                else:
                    t0 = np.trace(W @ A)
                    t1 = t0 + (Ax @ W @ Ax) / d1
                    t2 = t1 - np.einsum("ij,jk,ik->i", YA, W, YA) / q
                    best = int(np.argmin(t2))
                    ok = t2[best] < t0 * (1.0 - _GAIN)
                if ok:
                    Ay = YA[best]
                    A = A1 - (Ay[:, None] * Ay[None, :]) / q[best]
                    U[i, j] = vals[best]
                    X[i] = Y[best]
                    G[:, j] = Y[best] / rest if simple[j] and np.all(rest != 0) else \
                        model.factor_columns(j, vals[best])[0]
                    improved = True
        A = np.linalg.inv(X.T @ X + eye)
        if not improved:
            break
    return U


def optimal_design(factors: Sequence[Factor], runs: int, *, model="quadratic",
                   criterion: str = "D", constraints: Sequence[str] = (),
                   disallow: Sequence[Mapping] = (), fixed: pd.DataFrame | None = None,
                   existing: pd.DataFrame | None = None, starts: int = 10, grid: int = 5,
                   max_passes: int = 50, seed: int = 0) -> OptimalResult:
    """Search a D- or I-optimal design of ``runs`` new runs.

    Parameters
    ----------
    factors : sequence of Factor
    runs : int
        Number of runs the search chooses (besides ``fixed`` and ``existing`` rows).
    model : str or sequence of str
        Model the design must estimate (``"main"``, ``"interactions"``, ``"quadratic"``,
        ``"a + b + a:b"``).
    criterion : {"D", "I"}
    constraints : sequence of str
        Linear constraints in natural units, e.g. ``"ph >= 4 + 0.2*chelator"``.
    disallow : sequence of dict
        Combinations that cannot be mixed (see :class:`~trialkit.designs.constraints.Disallowed`).
    fixed, existing : DataFrame, optional
        Runs that must stay in the design (coded units / labels): fixed in advance or
        already run in an earlier plan.
    starts, grid, max_passes, seed : int
        Random starts, levels per continuous factor, passes per start, random seed.
    """
    factors = tuple(factors)
    criterion = str(criterion).upper()
    if criterion not in CRITERIA:
        raise DesignError(f"criterion must be one of {list(CRITERIA)}, got {criterion!r}")
    dm = pw.DesignModel.from_spec(model, factors)
    region = _Region(factors, [parse_constraint(c, factors) for c in constraints],
                     [parse_disallowed(d, factors) for d in disallow], int(grid))
    region.check_feasible()
    kept = [t for t in (existing, fixed) if t is not None and len(t)]
    U0 = np.vstack([dm.encode(t) for t in kept]) if kept else np.empty((0, len(factors)))
    if len(U0) and not region.feasible(U0).all():
        bad = np.flatnonzero(~region.feasible(U0)) + 1
        raise DesignError(f"fixed or earlier runs {bad.tolist()} lie outside the allowed "
                          "region (ranges, constraints, disallowed combinations); correct "
                          "them or drop the constraint")
    n = len(U0) + int(runs)
    if n < dm.p:
        raise DesignError(f"model {model!r} has {dm.p} coefficients, so it needs at least "
                          f"{dm.p} runs in all; got {n}. Ask for more runs or a smaller "
                          "model")
    rng = np.random.default_rng(seed)
    pool = region.pool(rng)
    if len(pool) == 0:
        raise DesignError("no candidate point meets the constraints and disallowed "
                          "combinations; relax them or use a finer grid")
    W = dm.moment_matrix() if criterion == "I" else None
    free = np.r_[np.zeros(len(U0), bool), np.ones(int(runs), bool)]
    tables = [dm.factor_columns(j, region.values[j]) for j in range(len(factors))]
    best_U, best_val, values = None, None, []
    for _ in range(max(1, int(starts))):
        U = np.vstack([U0, pool[rng.integers(0, len(pool), int(runs))]])
        U = _search(dm, region, U, free, criterion, W, rng, max_passes, tables)
        X = dm.expand(U)
        ld = pw.log_det_information(X)
        val = ld if criterion == "D" else (pw.average_variance(X, W) if np.isfinite(ld)
                                           else np.inf)
        values.append(float(val))
        better = best_val is None or (val > best_val if criterion == "D" else val < best_val)
        if np.isfinite(ld) and better:
            best_U, best_val = U.copy(), val
    if best_U is None or np.linalg.matrix_rank(dm.expand(best_U)) < dm.p:
        raise DesignError(f"no start gave a design that can estimate model {model!r} "
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
    if "bath" in table:
        table = table.drop_duplicates("bath")
    if "point" in table:
        table = table[~table.point.isin(("control", "reference"))]
    missing = [f.name for f in factors if f.name not in table]
    if missing:
        raise DesignError(f"earlier plan {path} has no column for {missing}; augment needs "
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
                did_you_mean(key, list(OPTION_KEYS)), "unknown_option")
    ints = {"runs": (1, 10_000), "starts": (1, 1000), "grid": (2, 21), "max_passes": (1, 1000)}
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
    for key, parse in (("constraints", parse_constraint), ("disallow", parse_disallowed)):
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
    fixed = options.get("fixed", [])
    if not isinstance(fixed, list) or not all(isinstance(r, Mapping) for r in fixed):
        bad("fixed", "fixed must be a list of tables {factor = value}", fixed,
            "write fixed = [{chelator = 4, ph = 6}]", "not_list")
    else:
        try:
            n_fixed = len(_natural_rows(fixed, factors, "fixed"))
        except (DesignError, ValueError, KeyError, TypeError) as exc:
            bad("fixed", str(exc), fixed, "give every factor a value in its range",
                "bad_fixed")
    if "augment" in options and not isinstance(options["augment"], str):
        bad("augment", "augment must be the path of an earlier plan.csv", options["augment"],
            "write augment = \"../first-trial/plan.csv\"", "bad_augment")
    runs = options.get("runs")
    if p is not None and isinstance(runs, int) and "augment" not in options \
            and runs + n_fixed < p:
        bad("runs", f"the model has {p} coefficients, so at least {p} runs are needed",
            runs, f"write runs = {p - n_fixed} or more, or use a smaller model",
            "too_few_runs")


def build_optimal(factors: Sequence[Factor], options: Mapping, *, seed: int,
                  folder: str | Path | None = None) -> Design:
    """The ``kind = "optimal"`` design builder (point type ``"optimal"``).

    Fixed runs are part of the design; runs of an earlier plan (``augment``) are not
    repeated: the design holds only the new runs, chosen to complement them.
    """
    factors = tuple(factors)
    problems = ProblemReport("design options")
    check_optimal_options(factors, options, problems)
    problems.raise_if_any(DesignError, "the optimal design options have problems")
    fixed = options.get("fixed", [])
    fixed_df = _natural_rows(fixed, factors, "fixed") if fixed else None
    existing = None
    if "augment" in options:
        path = Path(options["augment"])
        if not path.is_absolute() and folder is not None:
            path = Path(folder) / path
        if not path.exists():
            raise DesignError(f"augment: earlier plan {path} not found; give the path of "
                              "its plan.csv, relative to the trial folder")
        existing = _read_existing(path, factors)
    res = optimal_design(
        factors, options["runs"], model=options.get("model", "quadratic"),
        criterion=options.get("criterion", "D"), constraints=options.get("constraints", ()),
        disallow=options.get("disallow", ()), fixed=fixed_df, existing=existing,
        starts=options.get("starts", 10), grid=options.get("grid", 5),
        max_passes=options.get("max_passes", 50), seed=seed)
    n_old = 0 if existing is None else len(existing)
    coded = res.coded.iloc[n_old:].reset_index(drop=True)
    notes = [f"{res.criterion}-optimal design for model {res.model!r} by coordinate "
             f"exchange, best of {len(res.start_values)} seeded starts; D-efficiency "
             f"{res.d_efficiency:.1f} %"]
    if fixed_df is not None:
        notes.append(f"{len(fixed_df)} run(s) fixed in advance are included")
    if existing is not None:
        notes.append(f"chosen to complement {n_old} run(s) of an earlier plan, which are "
                     "not repeated here")
    if options.get("constraints"):
        notes.append("constraints met by every run: " + "; ".join(options["constraints"]))
    return Design(kind="optimal", factors=factors, coded=coded,
                  point=("optimal",) * len(coded),
                  has_center=all(f.is_continuous for f in factors), notes=notes)
