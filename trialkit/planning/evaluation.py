"""Design evaluation of a plan: know before you soak whether it can detect what matters.

:func:`evaluate_plan` evaluates the factor baths of a :class:`trialkit.planning.plan.Plan`
with :func:`trialkit.planning.design_evaluation.evaluate_design` (power of every model
term, detectable effects, D- and I-efficiency, VIF, variance profile), taking what the call
does not give from the trial's ``[evaluation]`` section and the design it was built with.
:func:`trialkit.planning.comparison.compare_plans` puts several plans side by side.
"""

from __future__ import annotations

from trialkit.exceptions import PlanError
from trialkit.planning.design_evaluation import Evaluation, evaluate_design, plain
from trialkit.planning.evaluation_config import EvaluationSettings, parse_evaluation_section

__all__ = ["Evaluation", "EvaluationSettings", "design_model", "evaluate_design",
           "evaluate_plan", "limits_effect", "parse_evaluation_section", "plain"]

NON_FACTOR_POINTS = ("control", "reference")


def _plan_parts(plan):
    """(factors, coded points, blocks, coupons, design) of the factor baths of a plan."""
    trial = getattr(plan, "trial", None)
    design = getattr(plan, "design", None)
    factors = tuple(getattr(trial, "factors", None) or getattr(design, "factors", ()))
    if not factors:
        raise PlanError("the plan has no factors to evaluate")
    baths = plan.baths.reset_index(drop=True)
    names = [f.name for f in factors]
    coded = plan.coded
    if "bath" in baths and coded.index.name == "bath":
        coded = coded.loc[baths["bath"]]
    coded = coded.reset_index(drop=True)
    keep = ~baths["point"].isin(NON_FACTOR_POINTS).to_numpy()
    keep &= coded[names].notna().all(axis=1).to_numpy()
    coded = coded.loc[keep, names].reset_index(drop=True)
    blocks = baths.loc[keep, "block"].to_numpy() if "block" in baths else None
    coupons = None
    table = getattr(plan, "table", None)
    if table is not None and "coupon_kind" in table:
        kept = set(baths.loc[keep, "bath"]) if "bath" in baths else None
        rusted = table[table.coupon_kind == "rusted"]
        coupons = int(rusted.bath.isin(kept).sum() if kept is not None else len(rusted))
    return factors, coded, blocks, coupons, design


def _settings(plan) -> EvaluationSettings:
    sections = getattr(getattr(plan, "trial", None), "sections", None) or {}
    s = sections.get("evaluation")
    return s if isinstance(s, EvaluationSettings) else EvaluationSettings()


#: The model a design kind is built to estimate, when neither the command line nor the
#: trial's ``[evaluation]`` section names one (surface designs: the full quadratic).
MODEL_FOR_DESIGN = {"central-composite": "quadratic", "box-behnken": "quadratic",
                    "sweep": "quadratic"}


def design_model(plan) -> str:
    """The model ``plan``'s design was built for (``"main"`` for screening designs).

    An optimal design is evaluated for the model it was searched for.
    """
    spec = getattr(getattr(plan, "trial", None), "design", None)
    kind = getattr(spec, "kind", "")
    if kind == "optimal":
        return str((getattr(spec, "options", None) or {}).get("model", "quadratic"))
    return MODEL_FOR_DESIGN.get(kind, "main")


def limits_effect(spec) -> float | None:
    """The difference a response's limits call decisive, or ``None`` without limits.

    For an aim of higher or lower, the distance from the unacceptable value to the fully
    satisfactory one; on target, the distance from the ideal to the nearer unacceptable
    value.

    Examples
    --------
    >>> from trialkit.trial.spec import ResponseSpec
    >>> limits_effect(ResponseSpec("removal", aim="higher", unacceptable=50,
    ...                            satisfactory=95))
    45.0
    """
    if not (spec.is_wanted and spec.has_limits):
        return None
    if spec.aim == "on-target":
        lo, hi = spec.unacceptable
        return float(min(spec.ideal - lo, hi - spec.ideal))
    return float(abs(spec.satisfactory - spec.unacceptable))


def _effects_and_source(plan, given, s: EvaluationSettings, sd_known: bool):
    """(effects, source) by precedence: argument, ``[evaluation]``, response limits."""
    if given is not None:
        return given, "stated"
    if s.effects is not None:
        return s.effects, "from the trial file's [evaluation] effects"
    if not sd_known:
        return None, None
    responses = getattr(getattr(plan, "trial", None), "responses", ()) or ()
    chosen = [r for r in responses if r.name == s.response] if s.response else \
        [r for r in responses if limits_effect(r) is not None][:1]
    if chosen and (size := limits_effect(chosen[0])) is not None:
        r = chosen[0]
        unit = f" {r.unit}" if r.unit else ""
        ends = (f"ideal {r.ideal:g} to the nearer unacceptable value"
                if r.aim == "on-target"
                else f"unacceptable {r.unacceptable:g} to satisfactory {r.satisfactory:g}")
        return size, (f"{size:g}{unit} for every term, from the limits of response "
                      f"{r.name!r} ({ends})")
    return None, None


def evaluate_plan(plan, *, model=None, sd: float | None = None, effects=None,
                  alpha: float | None = None, target_power: float | None = None
                  ) -> Evaluation:
    """Evaluate a :class:`trialkit.planning.plan.Plan` (see :func:`evaluate_design`).

    Arguments left at ``None`` come from the trial's ``[evaluation]`` section, then
    defaults: the model the design was built for (see :func:`design_model`), alpha 0.05,
    target power 0.8.  The effect size is the one stated, else ``[evaluation]
    effects``, else, when the residual SD is known, the span of the limits of the
    ``[evaluation] response`` (by default the first response with limits; see
    :func:`limits_effect`); with none of these, power is not computed.  The output says
    which (``Evaluation.effect_source``).
    """
    s = _settings(plan)
    factors, coded, blocks, coupons, design = _plan_parts(plan)
    aliases = []
    table = getattr(design, "aliases", None)
    if table is not None and len(table):
        aliases = [f"{r.effect} = {r.aliases}" for r in table.itertuples() if r.aliases]
    def pick(given, from_file, default):
        return given if given is not None else (from_file if from_file is not None
                                                else default)

    sd = pick(sd, s.sd, None)
    effects, source = _effects_and_source(plan, effects, s, sd is not None)
    return evaluate_design(
        coded, factors, model=pick(model, s.model, design_model(plan)), sd=sd,
        effects=effects, effect_source=source, alpha=pick(alpha, s.alpha, 0.05),
        target_power=pick(target_power, s.target_power, 0.8), blocks=blocks,
        coupons=coupons, resolution=getattr(design, "resolution", None), aliases=aliases)
