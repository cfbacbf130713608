"""The optional ``[analysis]`` section of a trial file.

Keys (all optional)::

    [analysis]
    model = "quadratic"          # main | linear | interactions | quadratic | terms with +
    alpha = 0.05                 # 1 - confidence level of intervals
    anova_type = 2               # 1, 2 or 3
    reduce = "p"                 # none | p | aic | bic (hierarchical backward reduction)
    threshold = 0.05             # p-value threshold for reduce = "p"
    sweep = "chelator"           # factor of a concentration sweep
    tolerance = 2.0              # lean-level tolerance in response units (else relative)
    relative_tolerance = 0.05    # lean-level tolerance as a fraction of the best
    bootstrap = 2000             # resamples for bootstrap intervals (0 = none)

    [analysis.response.removal_percent]
    model = "chelator + ph + chelator^2"   # a model for one response

Examples
--------
>>> from trialkit.problems import ProblemReport
>>> from trialkit.trial.factors import Factor
>>> class T:  # a stand-in trial with factors
...     factors = (Factor.continuous("chelator", 2, 10), Factor.continuous("ph", 5.5, 7.5))
>>> rep = ProblemReport("trial.toml")
>>> cfg = parse_analysis_section({"model": "chelator + ph^2", "alpha": 0.1}, T(), rep,
...                              "analysis")
>>> len(rep), cfg.alpha
(0, 0.1)
>>> _ = parse_analysis_section({"model": "chelatr", "alpha": 2}, T(), rep, "analysis")
>>> rep.checks()
['model_syntax', 'out_of_range']
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field

from trialkit.exceptions import ModelSpecError
from trialkit.problems import ProblemReport, did_you_mean

KEYS = ("model", "alpha", "anova_type", "reduce", "threshold", "sweep", "tolerance",
        "relative_tolerance", "bootstrap", "response", "ph_tolerance",
        "temperature_tolerance")
REDUCE = ("none", "p", "aic", "bic")


@dataclass(frozen=True)
class AnalysisConfig:
    """Parsed ``[analysis]`` options (defaults where a key is absent)."""

    model: str | None = None
    alpha: float = 0.05
    anova_type: int = 2
    reduce: str = "none"
    threshold: float = 0.05
    sweep: str | None = None
    tolerance: float | None = None
    relative_tolerance: float = 0.05
    bootstrap: int = 2000
    response_models: dict = field(default_factory=dict)
    ph_tolerance: float = 0.3
    temperature_tolerance: float = 2.0

    def model_for(self, response: str) -> str | None:
        """The model text for ``response`` (its own, else the section's)."""
        return self.response_models.get(response, self.model)

    def to_dict(self) -> dict:
        return asdict(self)


def _number(raw, key, problems, where, lo, hi, default, integer=False):
    if key not in raw:
        return default
    v = raw[key]
    ok_type = isinstance(v, int) if integer else isinstance(v, (int, float))
    if isinstance(v, bool) or not ok_type:
        problems.add(f"{where}.{key}", f"{key} must be {'an integer' if integer else 'a number'}",
                     value=v, fix=f"give a value between {lo} and {hi}", check="wrong_type")
        return default
    if not lo <= v <= hi:
        problems.add(f"{where}.{key}", f"{key} must be between {lo} and {hi}", value=v,
                     fix=f"give a value between {lo} and {hi}", check="out_of_range")
        return default
    return v


def _check_model(text, factors, problems, where):
    if not isinstance(text, str):
        problems.add(where, "a model must be text", value=text, check="wrong_type",
                     fix="write e.g. model = \"quadratic\"")
        return None
    if factors:
        from trialkit.trial.model_grammar import parse_model

        try:
            parse_model(text, factors)
        except ModelSpecError as exc:
            problems.add(where, str(exc), value=text, check="model_syntax",
                         fix="use main, interactions, quadratic or factor terms joined by +")
            return None
    return text


def parse_analysis_section(raw, trial, problems: ProblemReport, where: str) -> AnalysisConfig:
    """Parse and check the ``[analysis]`` table; problems are added, never raised."""
    if not isinstance(raw, dict):
        problems.add(where, "[analysis] must be a table of keys", value=raw, check="wrong_type")
        return AnalysisConfig()
    factors = tuple(getattr(trial, "factors", ()) or ())
    names = [f.name for f in factors]
    for key in raw:
        if key not in KEYS:
            problems.add(f"{where}.{key}", f"unknown key {key!r}", value=key,
                         fix=did_you_mean(key, list(KEYS)), check="unknown_key")
    model = _check_model(raw["model"], factors, problems, f"{where}.model") \
        if "model" in raw else None
    alpha = _number(raw, "alpha", problems, where, 0.001, 0.5, 0.05)
    typ = _number(raw, "anova_type", problems, where, 1, 3, 2, integer=True)
    threshold = _number(raw, "threshold", problems, where, 0.0001, 0.9999, 0.05)
    rel = _number(raw, "relative_tolerance", problems, where, 0.0, 1.0, 0.05)
    tol = _number(raw, "tolerance", problems, where, 0.0, float("inf"), None)
    boot = _number(raw, "bootstrap", problems, where, 0, 100_000, 2000, integer=True)
    ph_tol = _number(raw, "ph_tolerance", problems, where, 0.0, 14.0, 0.3)
    t_tol = _number(raw, "temperature_tolerance", problems, where, 0.0, 100.0, 2.0)
    reduce = raw.get("reduce", "none")
    if reduce not in REDUCE:
        problems.add(f"{where}.reduce", "reduce must be one of " + ", ".join(REDUCE),
                     value=reduce, fix=did_you_mean(str(reduce), list(REDUCE)),
                     check="not_allowed")
        reduce = "none"
    sweep = raw.get("sweep")
    if sweep is not None:
        fac = next((f for f in factors if f.name == sweep), None)
        if factors and fac is None:
            problems.add(f"{where}.sweep", f"no factor named {sweep!r}", value=sweep,
                         fix=did_you_mean(str(sweep), names), check="unknown_factor")
            sweep = None
        elif fac is not None and not fac.is_continuous:
            problems.add(f"{where}.sweep", f"sweep factor {sweep!r} must be continuous",
                         value=sweep, check="not_continuous")
            sweep = None
    models = {}
    per = raw.get("response", {})
    if not isinstance(per, dict):
        problems.add(f"{where}.response", "must be a table of response tables", value=per,
                     check="wrong_type")
        per = {}
    for name, opts in per.items():
        w = f"{where}.response.{name}"
        if not isinstance(opts, dict) or set(opts) - {"model"}:
            problems.add(w, "a response table may only set 'model'", value=opts,
                         check="unknown_key", fix="write model = \"...\"")
            continue
        if "model" in opts:
            m = _check_model(opts["model"], factors, problems, f"{w}.model")
            if m is not None:
                models[name] = m
    return AnalysisConfig(model, float(alpha), int(typ), reduce, float(threshold), sweep,
                          None if tol is None else float(tol), float(rel), int(boot), models,
                          float(ph_tol), float(t_tol))
