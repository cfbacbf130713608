"""The [analysis] trial-file section (trialkit.analysis.config), from real TOML files."""

from __future__ import annotations

import tomllib

from trialkit.analysis.config import AnalysisConfig, parse_analysis_section
from trialkit.problems import ProblemReport
from trialkit.trial.factors import Factor


class _Trial:
    factors = (Factor.continuous("chelator", 2, 10), Factor.continuous("ph", 5.5, 7.5),
               Factor.categorical("surfactant", ["none", "added"]))


def _parse(tmp_path, text):
    path = tmp_path / "trial.toml"
    path.write_text(text, encoding="utf-8")
    raw = tomllib.loads(path.read_text(encoding="utf-8"))["analysis"]
    report = ProblemReport(str(path))
    return parse_analysis_section(raw, _Trial(), report, "analysis"), report


def test_good_section(tmp_path):
    cfg, rep = _parse(tmp_path, """
[analysis]
model = "quadratic"
alpha = 0.1
anova_type = 3
reduce = "aic"
sweep = "chelator"
bootstrap = 500

[analysis.response.removal_pct]
model = "chelator + ph + chelator^2"
""")
    assert len(rep) == 0
    assert cfg == AnalysisConfig("quadratic", 0.1, 3, "aic", 0.05, "chelator", None, 0.05, 500,
                                 {"removal_pct": "chelator + ph + chelator^2"})
    assert cfg.model_for("removal_pct") == "chelator + ph + chelator^2"
    assert cfg.model_for("corrosion_rate") == "quadratic"


def test_every_problem_collected(tmp_path):
    cfg, rep = _parse(tmp_path, """
[analysis]
model = "chelator + __import__('os')"
alpha = 0.9
anova_type = "two"
reduce = "stepwise"
sweep = "surfactant"
bootstrp = 10

[analysis.response.removal_pct]
model = "surfactant^2"
""")
    assert rep.checks() == ["unknown_key", "model_syntax", "out_of_range", "wrong_type",
                            "not_allowed", "not_continuous", "model_syntax"]
    table = rep.table()
    assert "did you mean 'bootstrap'" in table.fix[0]
    assert cfg.model is None and cfg.alpha == 0.05 and cfg.reduce == "none"
