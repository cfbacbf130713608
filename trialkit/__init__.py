"""trialkit: plan, mix, record, analyse and report rust-removal bath trials.

Public names are listed in ``__all__`` and imported on first use, so that importing
trialkit (and starting the command line) stays fast; ``from trialkit import make_plan``
works as usual.

Examples
--------
>>> import trialkit
>>> trialkit.Factor.continuous("chelator", 2, 10, unit="% w/v").label()
'chelator (% w/v)'
"""

from __future__ import annotations

import importlib
from typing import Any

#: public name -> module that defines it
_EXPORTS: dict[str, str] = {
    # errors and problem reports
    "TrialkitError": "trialkit.exceptions",
    "TrialFileError": "trialkit.exceptions",
    "DesignError": "trialkit.exceptions",
    "PlanError": "trialkit.exceptions",
    "ChemistryError": "trialkit.exceptions",
    "SheetError": "trialkit.exceptions",
    "RecordLogError": "trialkit.exceptions",
    "ResponseError": "trialkit.exceptions",
    "ModelSpecError": "trialkit.exceptions",
    "AnalysisError": "trialkit.exceptions",
    "TrialkitWarning": "trialkit.exceptions",
    "Problem": "trialkit.problems",
    "ProblemReport": "trialkit.problems",
    # trial file, factors, designs, plan
    "Factor": "trialkit.factors",
    "Trial": "trialkit.trialspec",
    "load_trial": "trialkit.trialfile",
    "parse_trial_text": "trialkit.trialfile",
    "Design": "trialkit.designs.base",
    "DesignSpec": "trialkit.trialspec",
    "Layout": "trialkit.trialspec",
    "ResponseSpec": "trialkit.trialspec",
    "CouponSpec": "trialkit.trialspec",
    "build_design": "trialkit.designs",
    "check_design_options": "trialkit.designs",
    "center_points": "trialkit.designs",
    "two_level_block_columns": "trialkit.designs",
    "alias_structure": "trialkit.designs",
    "AliasStructure": "trialkit.designs",
    "DESIGN_KINDS": "trialkit.designs",
    "DESIGN_OPTIONS": "trialkit.designs",
    "Plan": "trialkit.plan",
    "make_plan": "trialkit.plan",
    "load_plan": "trialkit.plan",
    # sheets and the record log
    "export_xlsx": "trialkit.sheets",
    "export_csv": "trialkit.sheets",
    "export_html": "trialkit.sheets",
    "ingest_sheet": "trialkit.sheets",
    "check_sheet": "trialkit.sheets",
    "IngestReport": "trialkit.sheets",
    "SheetConfig": "trialkit.sheets",
    "sheet_config": "trialkit.sheets",
    "RecordLog": "trialkit.store",
    # design evaluation and optimal designs
    "evaluate_plan": "trialkit.evaluate",
    "evaluate_design": "trialkit.evaluate",
    "Evaluation": "trialkit.evaluate",
    "compare_plans": "trialkit.comparison",
    "Comparison": "trialkit.comparison",
    "EvaluationSettings": "trialkit.evaluation_config",
    "optimal_design": "trialkit.designs.optimal",
    "OptimalResult": "trialkit.designs.optimal",
    # bath chemistry
    "BathSpec": "trialkit.chemistry",
    "BathRecipe": "trialkit.chemistry",
    "make_recipe": "trialkit.chemistry",
    "MixingSheet": "trialkit.chemistry",
    "recipes_for_plan": "trialkit.chemistry",
    "bill_of_materials": "trialkit.chemistry",
    "Catalogue": "trialkit.chemistry",
    "Ingredient": "trialkit.chemistry",
    "default_catalogue": "trialkit.chemistry",
    "parse_amount": "trialkit.chemistry",
    "find_dose": "trialkit.chemistry",
    "titration_curve": "trialkit.chemistry",
    "solve": "trialkit.chemistry",
    "bath_volume": "trialkit.chemistry",
    "capacity_from_moles": "trialkit.chemistry",
    # models and analysis
    "parse_model": "trialkit.modelspec",
    "ModelSpec": "trialkit.modelspec",
    "Term": "trialkit.modelspec",
    "model_matrix": "trialkit.modelspec",
    "ModelMatrix": "trialkit.modelspec",
    "coded_frame": "trialkit.modelspec",
    "fit_model": "trialkit.analysis",
    "ModelFit": "trialkit.analysis",
    "AnovaTable": "trialkit.analysis",
    "two_level_effects": "trialkit.analysis",
    "lenth": "trialkit.analysis",
    "EffectsResult": "trialkit.analysis",
    "reduce_model": "trialkit.analysis",
    "ReductionResult": "trialkit.analysis",
    "diagnose": "trialkit.analysis",
    "Diagnostics": "trialkit.analysis",
    "fit_surface": "trialkit.analysis",
    "SurfaceResult": "trialkit.analysis",
    "fit_sweep": "trialkit.analysis",
    "SweepResult": "trialkit.analysis",
    "Aim": "trialkit.analysis",
    "optimize_desirability": "trialkit.analysis",
    "DesirabilityResult": "trialkit.analysis",
    "ConfirmationResult": "trialkit.analysis",
    "analyze_table": "trialkit.analysis",
    "best_compromise": "trialkit.analysis",
    "AnalysisResult": "trialkit.analysis",
    "factors_from_table": "trialkit.analysis",
    "AnalysisConfig": "trialkit.analysis",
    # invented data for examples and self-consistency tests
    "simulate_readings": "trialkit.simulate",
    "SimulatedReadings": "trialkit.simulate",
    "confirmation_plan": "trialkit.simulate",
    "BathTruth": "trialkit.truth_models",
    "NoiseModel": "trialkit.truth_models",
    "ExampleScenario": "trialkit.truth_models",
    "SimulationError": "trialkit.truth_models",
    # report
    "build_report": "trialkit.report",
    "write_report": "trialkit.report",
    "Report": "trialkit.report",
    # the end-to-end demo
    "run_demo": "trialkit.demo",
    "DemoError": "trialkit.demo",
    "DemoResult": "trialkit.demo_result",
    "fill_sheet": "trialkit.fill",
    # responses
    "coupon_area_cm2": "trialkit.geometry",
    "metal": "trialkit.materials",
    "density_g_cm3": "trialkit.materials",
    "corrosion_rate": "trialkit.corrosion",
    "convert_rate": "trialkit.corrosion",
    "cycle_extrapolation": "trialkit.corrosion",
    "blank_corrected_loss": "trialkit.corrosion",
    "K_CONSTANTS": "trialkit.corrosion",
    "d610_grade": "trialkit.rust_grade",
    "compute_responses": "trialkit.responses",
    "load_responses": "trialkit.responses",
    "Responses": "trialkit.responses",
    "fit_removal": "trialkit.kinetics",
    "time_ratio": "trialkit.kinetics",
    "RemovalFit": "trialkit.kinetics",
}

__all__ = sorted(_EXPORTS)


def __getattr__(name: str) -> Any:
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'trialkit' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
