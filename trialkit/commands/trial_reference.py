"""The reference of the trial file, generated from the checkers' own lists of keys.

Every section and key the trial-file checkers accept, with its type, default and meaning
(and, for ``[design]``, the options of each design kind as the design catalogue describes
them), plus the measures a response may name.  ``trialkit new --explain`` prints it; the
same text is ``docs/trial-file.md``; a test fails when a checker accepts a key this
reference does not describe, or the other way round.
"""

from __future__ import annotations

#: section -> {key: (type, default, meaning)}.  The keys must be exactly those the
#: section's checker accepts (tests/test_trial_reference.py).
DOCS: dict[str, dict[str, tuple[str, str, str]]] = {
    "[trial]": {
        "title": ("text", "required", "name of the trial, shown on every sheet and report"),
        "seed": ("whole number", "required", "seed of the randomised order: same file and "
                 "seed, same plan"),
        "question": ("text", '""', "the question the trial answers, in your words"),
        "notes": ("text", '""', "anything a reader of the report should know"),
        "operator": ("text", '""', "who runs the trial (initials on the sheets)"),
    },
    "[[factor]]": {
        "name": ("name", "required", "letters, digits and _ (e.g. chelator, ph)"),
        "kind": ("continuous | categorical | ordinal", "from the other keys",
                 "continuous with low/high, else levels"),
        "unit": ("unit text", '""', 'e.g. "% w/v", "degC", "pH", "rpm"'),
        "low": ("number", "—", "low end of a continuous factor, in its unit"),
        "high": ("number", "—", "high end (above low)"),
        "levels": ("list", "—", 'levels of a categorical factor, e.g. ["none", "added"]'),
        "description": ("text", '""', "what the factor is, for the report"),
    },
    "[design]": {
        "kind": ("design kind", "required", "full-factorial, fractional-factorial, "
                 "plackett-burman, central-composite, box-behnken, sweep, latin-hypercube "
                 "or optimal; its options follow below"),
    },
    "[layout]": {
        "replicates": ("whole number >= 1", "1", "copies of the design, each its own baths"),
        "blocks": ("whole number >= 1", "1", "days or batches the baths are split into"),
        "block_label": ("text", '"block"', 'what a block is called (e.g. "day")'),
        "center_points": ("whole number >= 0", "0", "centre baths per block"),
        "controls": ("list", "[]", '"untreated" (water) and/or "reference" baths per block'),
        "coupons_per_bath": ("whole number >= 1", "1", "rusted coupons in each bath"),
        "witness_coupons": ("whole number >= 0", "0", "bare, pre-weighed coupons per bath "
                            "that measure attack on the steel"),
    },
    "[[response]]": {
        "name": ("name", "required", "what the report calls it"),
        "unit": ("unit text", '""', 'e.g. "%", "mm/yr", "h"'),
        "aim": ("higher | lower | on-target | record-only", '"higher"',
                "what the trial wants of it"),
        "unacceptable": ("number (pair for on-target)", "none",
                         "a value of no use (desirability 0); the recommendation keeps it"),
        "satisfactory": ("number", "none", "a value that fully satisfies (desirability 1)"),
        "ideal": ("number", "none", "the value wanted, for aim = on-target"),
        "shape": ("number > 0", "1", "curve between the limits: 1 straight, > 1 demanding"),
        "priority": ("number > 0", "1", "weight in a compromise of several responses"),
        "measure": ("measure name", "the name", "which computed response it is: "
                    "'trialkit new --measures' lists them"),
        "range": ("[low, high], an end may be \"none\"", "from the measure",
                  "values the response can take (predictions and intervals are kept "
                  "inside), e.g. [0, 100] or [0, \"none\"]"),
        "margin": ("number > 0", "[analysis] tolerance",
                   "a difference too small to matter, in the response's unit: 'either "
                   "setting will do' is said only when an interval lies within ± margin"),
        "scale": ("raw | log | logit", '"raw"',
                  "the scale the response is modelled on: raw (predictions cut to the "
                  "range and flagged), log (a positive quantity such as a rate) or logit "
                  "(a percentage; 0 and 100 read as 0.5 and 99.5); log and logit keep "
                  "every prediction and interval inside the range"),
        "description": ("text", '""', "what it is, for the report"),
    },
    "[coupons]": {
        "shape": ("plate | disc | cylinder | bar | given", '"plate"', "coupon shape"),
        "length": ("mm", "—", "plate or bar length"),
        "width": ("mm", "—", "plate or bar width"),
        "thickness": ("mm", "—", "plate, bar or disc thickness"),
        "diameter": ("mm", "—", "disc or cylinder diameter"),
        "holes": ("list of mm", "[]", "diameters of hanging holes"),
        "area": ("cm²", "—", "exposed area, for shape = given"),
        "metal": ("metal name", '"carbon steel"', "for the density (ASTM G1 table)"),
        "cleaning_cycles": ("whole number >= 0", "0", "repeated cleanings (ASTM G1)"),
        "description": ("text", '""', "how the coupons were prepared"),
    },
    "[bath]": {
        "ingredient": ("[[bath.ingredient]] tables", "required", "the base recipe"),
        "adjust_with": ("ingredient name, or [acid, base]", "none", "pH adjuster; with an "
                        "acid and a base each bath takes the one it needs"),
        "target_ph": ("number 0..14", "none", "pH every bath is brought to"),
        "temperature": ("temperature text", '"25 degC"', "bath temperature"),
        "volume": ("volume text", "from the area", 'fixed bath volume, e.g. "2 L"'),
        "volume_per_area": ("volume per area", '"20 mL/cm2"', "solution per coupon area "
                            "(ASTM G31 minimum)"),
        "containers": ("list of volumes", '["0.5 L", "1 L", "2 L", "5 L"]',
                       "volume is rounded up to one of these"),
        "rust_per_area": ("mass per area", '"5 mg/cm2"', "expected rust, for capacity"),
        "spare": ("fraction 0..5", "0.2", "extra on the bill of materials"),
        "set_by": ("table", "{}", 'which factor sets target_ph or temperature, e.g. '
                   '{ target_ph = "ph" }'),
        "reference": ("table", "none", "the reference bath: ingredients, adjust_with, "
                      "target_ph, temperature"),
        "notes": ("text", '""', "notes printed on the mixing sheet"),
    },
    "[[bath.ingredient]]": {
        "name": ("ingredient name", "required", "a catalogue or [[ingredient]] name"),
        "amount": ("amount text", "from factor", '"% w/v", "% w/w", "g/L", "mol/L", "mL/L", '
                   '"% v/v"'),
        "factor": ("factor name", "none", "the factor whose value is the amount, or that "
                   "switches it on"),
        "present_when": ("list of levels", "[]", "levels of a categorical factor that add it"),
    },
    "[bath.reference]": {
        "ingredients": ("list of {name, amount}", "required", "the reference bath's recipe"),
        "adjust_with": ("ingredient name", "none", "its pH adjuster"),
        "target_ph": ("number 0..14", "none", "its pH"),
        "temperature": ("temperature text", "the trial's", "its temperature"),
    },
    "[[ingredient]]": {
        "name": ("text", "required", "the ingredient's name"),
        "aliases": ("list of text", "[]", "other names it is found by"),
        "formula": ("formula", "required", "anhydrous formula; molmass computes the molar "
                    "mass"),
        "hydrate": ("whole number", "0", "waters of crystallisation as supplied"),
        "assay": ("fraction", "1", "purity as supplied"),
        "form": ("solid | liquid", '"solid"', "as supplied"),
        "role": ("chelator | acid | base | salt | surfactant | solvent", "required",
                 "what it does in a bath"),
        "species": ("table", "{}", "PHREEQC master species per mole (minteq.v4 names)"),
        "density_g_ml": ("number", "—", "a liquid's density"),
        "strength_w_w": ("fraction", "—", "a solution's strength"),
        "fe_per_mol": ("number", "0", "iron bound per mole (for capacity)"),
        "hazards": ("list", "[]", "caution keys (alkaline, acidic, corrosive_base, ...)"),
        "price": ("table", "none", "{ pack, amount, currency } for the cost"),
        "notes": ("text", '""', "shown on the mixing sheet"),
    },
    "[sheet]": {
        "fields": ("list of field names", "all coupon fields", "columns of the coupon sheet"),
        "cleaning_cycles": ("whole number >= 0", "from [coupons]", "adds a mass column per "
                            "cleaning cycle"),
        "inspections_h": ("list of hours", "[]", "adds an inspections tab (time course)"),
        "timecourse_fields": ("list of field names", "coverage", "columns of the inspections "
                              "tab"),
        "required": ("list of field names", "[]", "must be filled in any row with readings"),
        "ranges": ("table", "{}", "accepted range of a field, e.g. { coverage_before_pct = "
                   "[0, 100] }"),
        "ratings": ("table", "{}", "named rating scales for rating fields"),
        "paper": ("A4 | Letter", '"A4"', "paper of the printable bench sheet"),
    },
    "[photos]": {
        "coverage_from": ("hand | photo", '"hand"', "which rust coverages the responses "
                          "and the analysis use: the hand estimates or those measured from "
                          "photos with 'trialkit photos' (both are kept in the record log)"),
        "region": ("[x0, y0, x1, y1] pixels", "found by its outline", "the coupon's box in "
                   "every photo of the series"),
        "card": ("[x0, y0, x1, y1] pixels or \"auto\"", "none", "a grey or white card's "
                 "box, or auto to find a grey card in the frame: corrects the white balance"),
        "threshold": ("otsu | marked", '"otsu"', "rust against steel by Otsu's threshold on "
                      "the CIELAB rust-ness, or half-way between marked pixels"),
        "rust_pixels": ("list of [x, y]", "[]", "pixels marked as rust (threshold = marked)"),
        "steel_pixels": ("list of [x, y]", "[]", "pixels marked as bare steel"),
        "min_separation": ("CIELAB units", "12", "Otsu's two classes must lie this far apart "
                           "(else the coupon is one class and rust_cut decides)"),
        "rust_cut": ("CIELAB units", "15", "rust-ness above which a pixel is rust when the "
                     "coupon is one class (all clean or all rusted)"),
        "smoothing": ("pixels 0..10", "1", "Gaussian smoothing against sensor noise"),
    },
    "[whole_plots]": {
        "hard_to_change": ("list of factor names", "[]", "factors set per tank (a water "
                           "bath, an oven): the plan becomes a split plot, baths grouped "
                           "into tank runs"),
        "tanks_per_block": ("whole number", "as needed", "tank runs one block (a day) holds; "
                            "must equal the hard-to-change settings × replicates a block"),
        "blocks": ("fixed | random", '"fixed"', "random when the blocks are a sample of "
                   "days or rust batches"),
        "variance_ratio": ("number ≥ 0", "1", "tank-to-tank over bath-to-bath variance, for "
                           "the power of 'trialkit evaluate'"),
    },
    "[analysis]": {
        "model": ("model text", "by design", "main, interactions, quadratic or terms "
                  "'a + b + a:b + a^2'"),
        "alpha": ("number 0..1", "0.05", "significance level"),
        "anova_type": ("1 | 2 | 3", "2", "sums of squares type"),
        "reduce": ("none | p | aic | bic", '"none"', "hierarchical backward reduction"),
        "threshold": ("number 0..1", "0.05", "p threshold for reduce = p"),
        "sweep": ("factor name", "the continuous factor", "factor of a sweep analysis"),
        "tolerance": ("number", "5 % of the best", "lean-level margin in response units"),
        "relative_tolerance": ("fraction", "0.05", "lean-level margin as a share of the best"),
        "bootstrap": ("whole number", "2000 (the report: 0)", "resamples for optimum "
                      "intervals"),
        "response": ("table", "{}", "a model per response, e.g. { attack = \"main\" }"),
        "ph_tolerance": ("pH units", "0.3", "a recorded bath pH further than this from the "
                         "plan is listed in the data-quality notes"),
        "temperature_tolerance": ("°C", "2", "the same for the recorded bath temperature"),
    },
    "[evaluation]": {
        "sd": ("number > 0", "none", "bath-to-bath SD, response units"),
        "effects": ("number or table", "none", "smallest difference that matters"),
        "response": ("response name", "first with limits", "whose limits give the effect "
                     "when effects is not stated"),
        "alpha": ("number 0..1", "0.05", "significance level"),
        "model": ("model text", "the design's", "model to evaluate"),
        "target_power": ("number 0..1", "0.8", "power the detectable effects aim at"),
    },
}


def accepted_keys() -> dict[str, tuple[str, ...]]:
    """The keys each checker accepts, read from the checkers themselves."""
    from trialkit.analysis.config import KEYS as ANALYSIS_KEYS
    from trialkit.chemistry.bathspec import BATH_KEYS, INGREDIENT_RULE_KEYS, REFERENCE_KEYS
    from trialkit.chemistry.ingredient_table import INGREDIENT_KEYS
    from trialkit.photos.settings import KEYS as PHOTO_KEYS
    from trialkit.planning.evaluation_config import EVALUATION_KEYS
    from trialkit.planning.whole_plots import WHOLE_PLOT_KEYS
    from trialkit.records.config import _KEYS as SHEET_KEYS
    from trialkit.trial.coupon_checks import COUPON_KEYS
    from trialkit.trial.file import TRIAL_KEYS
    from trialkit.trial.section_checks import FACTOR_KEYS, LAYOUT_KEYS, RESPONSE_KEYS

    return {"[trial]": TRIAL_KEYS, "[[factor]]": FACTOR_KEYS, "[design]": ("kind",),
            "[layout]": LAYOUT_KEYS, "[[response]]": RESPONSE_KEYS, "[coupons]": COUPON_KEYS,
            "[bath]": BATH_KEYS, "[[bath.ingredient]]": INGREDIENT_RULE_KEYS,
            "[bath.reference]": REFERENCE_KEYS, "[[ingredient]]": INGREDIENT_KEYS,
            "[sheet]": SHEET_KEYS, "[photos]": PHOTO_KEYS,
            "[whole_plots]": WHOLE_PLOT_KEYS, "[analysis]": ANALYSIS_KEYS,
            "[evaluation]": EVALUATION_KEYS}


def _row(cells) -> str:
    return "| " + " | ".join(str(c).replace("|", "\\|") for c in cells) + " |"


def reference_markdown() -> str:
    """The whole reference as Markdown (``docs/trial-file.md``)."""
    from trialkit.planning.designs import DESIGN_OPTIONS
    from trialkit.responses.measures import measures_text

    keys = accepted_keys()
    out = ["# The trial file (trial.toml): every section and key", "",
           "Generated by `trialkit new --explain` from the checkers' own lists of keys; a "
           "test keeps it in step with them. `trialkit new FOLDER` writes a commented "
           "starter file.", ""]
    for section, accepted in keys.items():
        out += [f"## {section}", "", _row(["key", "type", "default", "meaning"]),
                _row(["---"] * 4)]
        out += [_row([f"`{k}`", *DOCS[section][k]]) for k in accepted]
        out.append("")
        if section == "[design]":
            for kind, options in DESIGN_OPTIONS.items():
                out.append(f"- `kind = \"{kind}\"`"
                           + (":" if options else ": no options"))
                out += [f"  - `{k}`: {text}" for k, text in options.items()]
            out.append("")
    out += ["## Measures a [[response]] may name", "", "```", measures_text(), "```", ""]
    return "\n".join(out)
