"""Several responses at once: Derringer–Suich (1980) desirability.

Each response gets an individual desirability ``d`` in [0, 1] from its aim:

* ``"higher"``: 0 at or below the ``unacceptable`` value, 1 at or above the
  ``satisfactory`` one, ``((y - unacceptable) / (satisfactory - unacceptable)) ** shape``
  between;
* ``"lower"``: the mirror image (1 at or below ``satisfactory``, 0 at or above
  ``unacceptable``);
* ``"on-target"``: 1 at the ``ideal`` value, falling to 0 at the two unacceptable values
  below and above it, with exponent ``shape`` on the way up and ``shape_above`` on the
  way down.

The overall desirability is the priority-weighted geometric mean
``D = (prod d_i ** r_i) ** (1 / sum r_i)``.  The best compromise is searched over the
design region (coded units) from a grid and several seeded starts (Nelder–Mead).

Examples
--------
>>> a = Aim("removal", "higher", unacceptable=50, satisfactory=90)
>>> float(a.desirability(70.0)), float(a.desirability(95.0))
(0.5, 1.0)
>>> round(float(Aim("attack", "lower", unacceptable=0.5, satisfactory=0.1).desirability(0.2)), 12)
0.75
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import optimize

from trialkit.analysis.data import finite
from trialkit.analysis.surface import continuous_factors, quadratic_operators
from trialkit.exceptions import AnalysisError

#: Aims a response can have in a compromise.
AIM_KINDS = ("higher", "lower", "on-target")


@dataclass(frozen=True)
class Aim:
    """What is wanted of one response.

    Attributes
    ----------
    response : str
    aim : {"higher", "lower", "on-target"}
    unacceptable : float or (float, float)
        The value at which the response stops being of any use (d = 0); for "on-target",
        the pair of unacceptable values below and above the ideal.
    satisfactory : float, optional
        The value from which the response is fully satisfactory (d = 1); not used by
        "on-target", whose ideal is the fully satisfactory value.
    ideal : float, optional
        Required for "on-target".
    shape, shape_above : float
        Exponents of the curve (``s`` and, for on-target above the ideal, ``t`` of
        Derringer–Suich): 1 is a straight line, above 1 demands more, below 1 less.
    priority : float
        Relative weight ``r`` in the geometric mean.
    """

    response: str
    aim: str
    unacceptable: float | tuple[float, float]
    satisfactory: float | None = None
    ideal: float | None = None
    shape: float = 1.0
    shape_above: float = 1.0
    priority: float = 1.0

    def __post_init__(self):
        if self.aim not in AIM_KINDS:
            raise AnalysisError(f"aim of {self.response!r} must be one of {AIM_KINDS}, "
                                f"got {self.aim!r}")
        if self.aim == "on-target":
            pair = np.atleast_1d(np.asarray(self.unacceptable, dtype=float))
            if (pair.size != 2 or self.ideal is None
                    or not pair[0] < float(self.ideal) < pair[1]):
                raise AnalysisError(
                    f"{self.response!r}: an on-target aim needs an ideal between two "
                    f"unacceptable values, got ideal = {self.ideal}, unacceptable = "
                    f"{self.unacceptable}")
        else:
            if self.satisfactory is None or np.ndim(self.unacceptable) != 0:
                raise AnalysisError(f"{self.response!r}: give one unacceptable and one "
                                    "satisfactory value")
            lo, hi = self.span
            if not lo < hi:
                side = "below" if self.aim == "higher" else "above"
                raise AnalysisError(
                    f"{self.response!r}: for aim {self.aim!r} the unacceptable value "
                    f"({self.unacceptable}) must lie {side} the satisfactory one "
                    f"({self.satisfactory})")
        if min(self.shape, self.shape_above, self.priority) <= 0:
            raise AnalysisError(f"{self.response!r}: shape and priority must be > 0")

    @property
    def span(self) -> tuple[float, float]:
        """(low end, high end) of the scale in response units."""
        if self.aim == "on-target":
            lo, hi = (float(v) for v in self.unacceptable)
        elif self.aim == "higher":
            lo, hi = float(self.unacceptable), float(self.satisfactory)
        else:
            lo, hi = float(self.satisfactory), float(self.unacceptable)
        return lo, hi

    def desirability(self, y):
        """Individual desirability of value(s) ``y``."""
        y = np.asarray(y, dtype=float)
        lo, hi = self.span
        if self.aim == "higher":
            return np.clip((y - lo) / (hi - lo), 0, 1) ** self.shape
        if self.aim == "lower":
            return np.clip((hi - y) / (hi - lo), 0, 1) ** self.shape
        t = float(self.ideal)
        up = np.clip((y - lo) / (t - lo), 0, 1) ** self.shape
        down = np.clip((hi - y) / (hi - t), 0, 1) ** self.shape_above
        return np.where(y <= t, up, down)


def aim_from_spec(spec, response: str | None = None, observed=None) -> Aim:
    """The :class:`Aim` of a trial file's response, limits missing from it taken from data.

    Parameters
    ----------
    spec : ResponseSpec
    response : str, optional
        Name to give the aim (default ``spec.name``), e.g. the table column analysed.
    observed : array-like, optional
        Values of the response; a missing limit is the worst (unacceptable) or best
        (satisfactory) value observed.

    Examples
    --------
    >>> from trialkit.trial.spec import ResponseSpec
    >>> aim_from_spec(ResponseSpec("attack", aim="lower"), observed=[0.1, 0.4]).span
    (0.1, 0.4)
    """
    name = response or spec.name
    if spec.aim not in AIM_KINDS:
        raise AnalysisError(f"{spec.name!r} is recorded only (aim {spec.aim!r}); it takes "
                            "no part in a compromise")
    vals = np.asarray([] if observed is None else observed, dtype=float)
    vals = vals[np.isfinite(vals)]

    def seen(which):
        if vals.size == 0:
            raise AnalysisError(f"{spec.name!r}: give the unacceptable and satisfactory "
                                "values in the trial file, or readings to take them from")
        return float(which(vals))

    if spec.aim == "on-target":
        pair = spec.unacceptable
        if pair is None:
            pair = (seen(np.min), seen(np.max))
        return Aim(name, spec.aim, tuple(float(v) for v in pair), ideal=spec.ideal,
                   shape=spec.shape, shape_above=spec.shape, priority=spec.priority)
    worst, best = (np.min, np.max) if spec.aim == "higher" else (np.max, np.min)
    bad = spec.unacceptable if spec.unacceptable is not None else seen(worst)
    good = spec.satisfactory if spec.satisfactory is not None else seen(best)
    if bad == good and (spec.unacceptable is None or spec.satisfactory is None):
        good = bad + (1e-12 if spec.aim == "higher" else -1e-12) * max(1.0, abs(bad))
    return Aim(name, spec.aim, float(bad), float(good), shape=spec.shape,
               priority=spec.priority)


@dataclass
class DesirabilityResult:
    """The best compromise of several responses.

    Attributes
    ----------
    settings : dict
        Factor settings (natural units) of the best compromise.
    coded : ndarray
    overall : float
        Overall desirability D there.
    summary : DataFrame
        response, aim, predicted, ci_low, ci_high, pi_low, pi_high, desirability,
        priority.
    aims : tuple of Aim
    """

    settings: dict
    coded: np.ndarray
    overall: float
    summary: pd.DataFrame
    aims: tuple
    _fits: Mapping = None
    _region: np.ndarray = None

    def grid(self, x: str, y: str, *, n: int = 41) -> pd.DataFrame:
        """Overall desirability over two factors (others at the best compromise)."""
        fit0 = next(iter(self._fits.values()))
        cont = [f.name for f in continuous_factors(fit0)]
        for v in (x, y):
            if v not in cont:
                raise AnalysisError(f"{v!r} is not a continuous factor; choose from {cont}")
        ix, iy = cont.index(x), cont.index(y)
        ax = np.linspace(*self._region[ix], n)
        ay = np.linspace(*self._region[iy], n)
        mx, my = np.meshgrid(ax, ay, indexing="ij")
        pts = np.repeat(self.coded[None, :], mx.size, axis=0)
        pts[:, ix], pts[:, iy] = mx.ravel(), my.ravel()
        D = _overall(self._fits, self.aims, pts, self._fixed())
        fs = {f.name: f for f in continuous_factors(fit0)}
        return pd.DataFrame({x: fs[x].to_natural(pts[:, ix]), y: fs[y].to_natural(pts[:, iy]),
                             "desirability": D})

    def _fixed(self):
        return {k: v for k, v in self.settings.items() if isinstance(v, str)}

    def to_dict(self) -> dict:
        rows = [{k: (finite(v) if isinstance(v, (float, np.floating)) else v)
                 for k, v in r.items()} for r in self.summary.to_dict("records")]
        return {"settings": self.settings, "overall_desirability": finite(self.overall),
                "responses": rows}

    def __repr__(self) -> str:
        return (f"DesirabilityResult(D={self.overall:.4f} at {self.settings})\n"
                f"{self.summary.to_string(index=False)}")

    def _repr_html_(self) -> str:
        return f"<p>D = {self.overall:.4f} at {self.settings}</p>" + \
            self.summary.to_html(index=False)


def _quadratic(fit, fixed):
    """(c, b, B) of the fitted surface in coded units (exact for order <= 2)."""
    key = ("quadratic", tuple(sorted((fixed or {}).items())))
    if key not in fit._cache:
        Lc, Lb, LB = quadratic_operators(fit, fixed)
        beta = fit.ls.beta
        fit._cache[key] = (float(Lc @ beta) + float(fit.shift), Lb @ beta, LB @ beta)
    return fit._cache[key]


def _predict_coded(fit, pts, fixed):
    c, b, B = _quadratic(fit, fixed)
    return c + pts @ b + np.einsum("gi,ij,gj->g", pts, B, pts)


def _overall(fits, aims, pts, fixed) -> np.ndarray:
    pts = np.atleast_2d(pts)
    logs = np.zeros(len(pts))
    total = 0.0
    for a in aims:
        d = a.desirability(_predict_coded(fits[a.response], pts, fixed))
        with np.errstate(divide="ignore"):
            logs = logs + a.priority * np.log(d)
        total += a.priority
    return np.exp(logs / total)


def optimize_desirability(fits: Mapping[str, object], aims: Sequence[Aim], *,
                          region: np.ndarray | None = None,
                          fixed: Mapping[str, str] | None = None, n_tries: int = 20,
                          seed: int = 0) -> DesirabilityResult:
    """Find the settings of highest overall desirability.

    Parameters
    ----------
    fits : mapping response name -> ModelFit
        Every fit must use the same continuous factors (they may differ in terms).
    aims : sequence of Aim
    region : array (k, 2), optional
        Coded bounds (default: the cube [-1, 1] for each continuous factor).
    fixed : mapping, optional
        Levels of categorical factors.
    n_tries : int
        Random starting points of the search, besides the 8 best grid points.
    """
    aims = tuple(aims)
    missing = [a.response for a in aims if a.response not in fits]
    if missing:
        raise AnalysisError(f"no fitted model for response(s) {missing}; fitted: "
                            f"{list(fits)}")
    fit0 = fits[aims[0].response]
    names = [f.name for f in continuous_factors(fit0)]
    for a in aims:
        other = [f.name for f in continuous_factors(fits[a.response])]
        if other != names:
            raise AnalysisError(f"model of {a.response!r} uses factors {other}, the first "
                                f"uses {names}; fit every response on the same factors")
    k = len(names)
    region = np.tile([-1.0, 1.0], (k, 1)) if region is None else np.asarray(region, float)
    steps = 11 if k <= 3 else 5
    grid = np.stack(np.meshgrid(*[np.linspace(lo, hi, steps) for lo, hi in region],
                                indexing="ij"), -1).reshape(-1, k)
    Dg = _overall(fits, aims, grid, fixed)
    rng = np.random.default_rng(seed)
    starts = list(grid[np.argsort(-Dg)[:8]])
    starts += list(rng.uniform(region[:, 0], region[:, 1], size=(n_tries, k)))

    def neg(x):
        return -_overall(fits, aims, np.clip(x, region[:, 0], region[:, 1])[None, :],
                         fixed)[0]

    best_x, best_v = grid[int(np.argmax(Dg))], float(Dg.max())
    for s in starts:
        r = optimize.minimize(neg, s, method="Nelder-Mead",
                              options={"xatol": 1e-7, "fatol": 1e-10, "maxiter": 4000})
        x = np.clip(r.x, region[:, 0], region[:, 1])
        if -r.fun > best_v:
            best_x, best_v = x, -r.fun
    if best_v <= 0:
        raise AnalysisError("no setting in the region gives every response a desirability "
                            "above zero; widen the limits or check the aims")
    settings = {n: float(f.to_natural(v)) for n, f, v in
                zip(names, continuous_factors(fit0), best_x, strict=True)}
    settings.update(dict(fixed or {}))
    rows = []
    for a in aims:
        fit = fits[a.response]
        p = fit.predict(pd.DataFrame([settings])).iloc[0]
        rows.append({"response": a.response, "aim": a.aim, "predicted": float(p.predicted),
                     "ci_low": float(p.ci_low), "ci_high": float(p.ci_high),
                     "pi_low": float(p.pi_low), "pi_high": float(p.pi_high),
                     "desirability": float(a.desirability(p.predicted)),
                     "priority": a.priority})
    return DesirabilityResult(settings, best_x, best_v, pd.DataFrame(rows), aims, fits,
                              region)


