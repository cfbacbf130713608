"""The report's figures: drawn by :mod:`trialkit.figures.plots`, embedded as base64 PNG.

Each figure is drawn, turned into PNG bytes and closed at once; a figure that cannot be
drawn becomes a note saying why.
"""

from __future__ import annotations

import base64

from trialkit.numbers import spoken, spoken_capitalised
from trialkit.report.document import Block

DPI = 100


def embed(draw, title: str, alt: str = "") -> Block:
    """Run ``draw()`` (returns Axes or Figure), embed the PNG, close the figure."""
    from trialkit.figures import plots

    try:
        obj = draw()
    except Exception as exc:  # a figure must never stop the report
        plots.close()
        first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        return Block.note(f"figure '{title}' could not be drawn: {first}")
    try:
        png = plots.to_png(obj, dpi=DPI)
    finally:
        plots.close(obj)
    return Block.figure(base64.b64encode(png).decode("ascii"), title, alt)


def _best_interaction(fit):
    pvals = {r.term: r.p for r in fit.anova(2).summary.itertuples()}
    inter = [t for t in fit.spec.terms if t.order == 2 and t.power == 1]
    if not inter:
        return None
    return min(inter, key=lambda t: pvals.get(t.name, 1.0) if pvals.get(t.name) == pvals.get(
        t.name) else 1.0)


def effect_figures(data, name: str) -> list[Block]:
    """Figures of what matters for one response."""
    from trialkit.figures import plots
    from trialkit.figures import surface_views as surfaces
    fit, unit = data.fits[name], data.unit(name)
    said = spoken(name)
    out = []
    if name in data.sweeps:
        sw = surfaces.from_sweep(data.sweeps[name], unit=unit)
        out.append(embed(lambda: plots.sweep(sw),
                         f"{spoken_capitalised(name)} across the {spoken(sw.factor)} sweep: "
                         "fitted curve with 95 % band, "
                         "bath means, best level and practical lean level"))
        return out
    out.append(embed(lambda: plots.main_effects(fit, unit=unit),
                     f"Main effects on {said}: predicted along each factor, others at their "
                     "middle; points are the baths"))
    term = _best_interaction(fit)
    if term is not None:
        a, b = term.factors
        out.append(embed(lambda: plots.interaction(fit, a, b, unit=unit),
                         f"Interaction of {spoken(a)} and {spoken(b)} on {said}"))
    if name in data.effects:
        eff = data.effects[name]
        out.append(embed(lambda: plots.effect_margins(eff, unit=unit),
                         f"Effects on {said} in the order of the alias table, against "
                         "Lenth's margin of error (ME) and simultaneous margin (SME)"))
        out.append(embed(lambda: plots.half_normal(eff, unit=unit),
                         f"Half-normal plot of the effects on {said}"))
    if name in data.surfaces and len(data.surfaces[name].factors) >= 2:
        sv = surfaces.from_surface(data.surfaces[name], unit=unit)
        out.append(embed(lambda: plots.contour(sv),
                         f"Contours of the fitted {said} with the baths and the best point"))
    return out


def model_figures(data, name: str) -> list[Block]:
    """Diagnostic figures of one response's model."""
    from trialkit.figures import plots
    from trialkit.figures import surface_views as surfaces
    fit, unit = data.fits[name], data.unit(name)
    diag = getattr(data.results.get(name), "diagnostics", None)
    out = [embed(lambda: plots.residual_panels(fit, diag, unit=unit),
                 f"Model checks for {name}: residuals against fitted values, run order and "
                 "the normal distribution")]
    if name in data.surfaces and len(data.surfaces[name].factors) >= 2:
        sv = surfaces.from_surface(data.surfaces[name], unit=unit)
        out.append(embed(lambda: plots.surface3d(sv), f"The fitted surface of {name}"))
    return out


def kinetics_figure(data) -> list[Block]:
    from trialkit.figures import plots, views
    if data.timecourse is None or not data.kinetics:
        return []
    kv = views.kinetics_view(data.timecourse, data.kinetics)
    return [embed(lambda: plots.kinetics(kv),
                  "Rust coverage over time per bath, fitted removal curves and time to 90 % "
                  "removal")]


def desirability_figure(data) -> list[Block]:
    from trialkit.figures import plots
    from trialkit.figures import surface_views as surfaces
    res = data.desirability
    if res is None:
        return []
    fit0 = next(iter(data.fits.values()))
    cont = [f.name for f in fit0.spec.used_factors if f.is_continuous]
    if len(cont) < 2:
        return []
    dv = surfaces.from_desirability(res, cont[0], cont[1])
    return [embed(lambda: plots.desirability_contour(dv),
                  f"Overall desirability over {cont[0]} and {cont[1]} with the best "
                  "compromise")]
