"""A trial whose responses cannot be analysed gets notes and a report, never a traceback
(issue 14): constant readings, values beyond floating-point sums of squares, an exact fit.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from trialkit.analysis.trial_analysis import analyse, load_inputs
from trialkit.planning.plan import load_plan
from trialkit.report.build import write_report

FOLDER = Path(__file__).resolve().parents[1] / "example_trials" / "tank-split-plot"


def _baths(removal):
    baths = load_plan(FOLDER).baths.copy()
    baths["bath"] = baths["bath"].astype(str)
    rng = np.random.default_rng(np.random.SeedSequence().entropy)
    baths["removal"] = removal(baths)
    baths["attack"] = 0.1 + 0.01 * rng.standard_normal(len(baths))
    return baths


@pytest.mark.parametrize("kind, removal, said", [
    ("constant", lambda b: np.full(len(b), 50.0), "is constant"),
    ("tiny", lambda b: 1e-300 * (1 + 0.1 * np.arange(len(b))), "another unit"),
    ("huge", lambda b: 1e200 * (1 + 0.1 * np.arange(len(b))), "another unit"),
    ("exact", lambda b: 10 + 2.0 * b["chelator"].astype(float), "no variation"),
])
def test_unanalysable_response_is_a_note_and_the_report_is_written(tmp_path, kind, removal,
                                                                    said):
    data = analyse(load_inputs(FOLDER, baths=_baths(removal)))
    notes = " ".join(data.notes.get("analysis", []))
    assert "removal" in notes and said in notes, notes
    assert "attack" in data.split_plots  # the other response is still analysed
    out = tmp_path / "report.html"
    write_report(data, out)
    assert "attack" in out.read_text(encoding="utf-8")
