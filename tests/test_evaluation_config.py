"""Tests of trialkit.planning.evaluation_config: the [evaluation] trial-file section, read from
real files in tmp_path."""

import numpy as np
import pytest
from trial_texts import trial_text

from trialkit.exceptions import TrialFileError
from trialkit.planning.evaluation import evaluate_plan
from trialkit.planning.evaluation_config import EvaluationSettings
from trialkit.planning.plan import make_plan
from trialkit.trial.file import load_trial

TWO_FACTOR = trial_text("chelator", "ph", "temperature",
                        title="Chelator, pH, temperature, invented example",
                        layout="replicates = 2")


def test_evaluation_section_is_used(tmp_path):
    path = tmp_path / "trial.toml"
    path.write_text(TWO_FACTOR
                    + '[evaluation]\nsd = 0.5\nalpha = 0.1\nmodel = "interactions"\n'
                    'effects = {chelator = 1.0, ph = 0.5}\n', encoding="utf-8")
    trial = load_trial(path)
    s = trial.sections["evaluation"]
    assert s == EvaluationSettings(sd=0.5, effects={"chelator": 1.0, "ph": 0.5}, alpha=0.1,
                                   model="interactions")
    ev = evaluate_plan(make_plan(trial))
    assert (ev.sd, ev.alpha, ev.model) == (0.5, 0.1, "interactions")
    assert np.isnan(ev.summary.set_index("term").loc["temperature", "power"])


def test_malformed_evaluation_section_reports_every_problem(tmp_path):
    path = tmp_path / "trial.toml"
    path.write_text(TWO_FACTOR
                    + '[evaluation]\nsd = -2\nalpha = 1.5\nmodel = "chelator + pH"\n'
                    'effects = {chelator = "big"}\nsigma = 1\n', encoding="utf-8")
    with pytest.raises(TrialFileError) as err:
        load_trial(path)
    checks = err.value.problems.checks()
    for code in ("not_positive", "out_of_range", "bad_model", "unknown_key"):
        assert code in checks
    assert checks.count("not_positive") == 2            # sd and the effect size




def test_effects_as_one_number_and_target_power(tmp_path):
    path = tmp_path / "trial.toml"
    path.write_text(TWO_FACTOR + "[evaluation]\neffects = 2\ntarget_power = 0.9\n",
                    encoding="utf-8")
    s = load_trial(path).sections["evaluation"]
    assert s.effects == 2.0 and s.target_power == 0.9 and s.sd is None


def test_evaluation_section_must_be_a_table(tmp_path):
    path = tmp_path / "trial.toml"
    path.write_text("evaluation = 3\n" + TWO_FACTOR, encoding="utf-8")
    with pytest.raises(TrialFileError) as err:
        load_trial(path)
    assert "not_table" in err.value.problems.checks()
