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
    "Factor": "trialkit.trial.factors",
    "Trial": "trialkit.trial.spec",
    "load_trial": "trialkit.trial.file",
    "parse_trial_text": "trialkit.trial.file",
    "Design": "trialkit.planning.designs.base",
    "DesignSpec": "trialkit.trial.spec",
    "Layout": "trialkit.trial.spec",
    "ResponseSpec": "trialkit.trial.spec",
    "CouponSpec": "trialkit.trial.spec",
    "build_design": "trialkit.planning.designs",
    "check_design_options": "trialkit.planning.designs",
    "center_points": "trialkit.planning.designs",
    "two_level_block_columns": "trialkit.planning.designs",
    "alias_structure": "trialkit.planning.designs",
    "AliasStructure": "trialkit.planning.designs",
    "DESIGN_KINDS": "trialkit.planning.designs",
    "DESIGN_OPTIONS": "trialkit.planning.designs",
    "Plan": "trialkit.planning.plan",
    "make_plan": "trialkit.planning.plan",
    "load_plan": "trialkit.planning.plan",
    # sheets and the record log
    "export_xlsx": "trialkit.records.sheets",
    "export_csv": "trialkit.records.sheets",
    "export_html": "trialkit.records.sheets",
    "ingest_sheet": "trialkit.records.sheets",
    "check_sheet": "trialkit.records.sheets",
    "IngestReport": "trialkit.records.sheets",
    "SheetConfig": "trialkit.records.sheets",
    "sheet_config": "trialkit.records.sheets",
    "RecordLog": "trialkit.records.log",
    # rust coverage from photographs
    "PhotoError": "trialkit.exceptions",
    "PhotoSettings": "trialkit.photos.settings",
    "PhotoCoverage": "trialkit.photos.measure",
    "measure_coverage": "trialkit.photos.measure",
    "PhotoBatch": "trialkit.photos.record",
    "measure_photos": "trialkit.photos.record",
    "record_photos": "trialkit.photos.record",
    "CoverageAgreement": "trialkit.analysis.agreement",
    "coverage_agreement": "trialkit.analysis.agreement",
    # design evaluation and optimal designs
    "evaluate_plan": "trialkit.planning.evaluation",
    "evaluate_design": "trialkit.planning.evaluation",
    "Evaluation": "trialkit.planning.evaluation",
    "compare_plans": "trialkit.planning.comparison",
    "Comparison": "trialkit.planning.comparison",
    "EvaluationSettings": "trialkit.planning.evaluation_config",
    "optimal_design": "trialkit.planning.designs.optimal",
    "OptimalResult": "trialkit.planning.designs.optimal",
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
    "parse_model": "trialkit.trial.model_grammar",
    "ModelSpec": "trialkit.trial.model_grammar",
    "Term": "trialkit.trial.model_grammar",
    "model_matrix": "trialkit.trial.model_matrix",
    "ModelMatrix": "trialkit.trial.model_matrix",
    "coded_frame": "trialkit.trial.model_matrix",
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
    "simulate_readings": "trialkit.demo.simulate",
    "SimulatedReadings": "trialkit.demo.simulate",
    "confirmation_plan": "trialkit.demo.simulate",
    "BathTruth": "trialkit.demo.truth_models",
    "NoiseModel": "trialkit.demo.truth_models",
    "ExampleScenario": "trialkit.demo.truth_models",
    "SimulationError": "trialkit.demo.truth_models",
    # the analysis of a whole trial, and its report
    "analyze": "trialkit.analysis.trial_analysis",
    "TrialAnalysis": "trialkit.analysis.trial_data",
    "build_report": "trialkit.report",
    "write_report": "trialkit.report",
    "Report": "trialkit.report",
    # the end-to-end demo
    "run_demo": "trialkit.demo.run",
    "DemoError": "trialkit.demo.run",
    "DemoResult": "trialkit.demo.result",
    "fill_sheet": "trialkit.demo.fill",
    # responses
    "coupon_area_cm2": "trialkit.trial.geometry",
    "metal": "trialkit.responses.materials",
    "density_g_cm3": "trialkit.responses.materials",
    "corrosion_rate": "trialkit.responses.corrosion",
    "convert_rate": "trialkit.responses.corrosion",
    "cycle_extrapolation": "trialkit.responses.corrosion",
    "blank_corrected_loss": "trialkit.responses.corrosion",
    "K_CONSTANTS": "trialkit.responses.corrosion",
    "d610_grade": "trialkit.responses.rust_grade",
    "compute_responses": "trialkit.responses.compute",
    "load_responses": "trialkit.responses.compute",
    "Responses": "trialkit.responses.compute",
    "fit_removal": "trialkit.responses.kinetics",
    "time_ratio": "trialkit.responses.kinetics",
    "RemovalFit": "trialkit.responses.kinetics",
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
