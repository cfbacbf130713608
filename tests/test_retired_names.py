"""Issue 12: the public vocabulary uses trialkit's own names; retired ones never come back.

The public vocabulary checked here: trial-file keys and values (the parsers' own tables and
the bundled trial files), every command-line option (from each command's parser), and the
JSON keys of the result objects a user saves.  Words are matched whole (``goal`` but not
``goals_met``), case-insensitively.
"""

from __future__ import annotations

import tomllib
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from trialkit import cli
from trialkit.analysis.desirability import Aim, optimize_desirability
from trialkit.analysis.effects import two_level_effects
from trialkit.analysis.model import fit_model
from trialkit.analysis.sweep import fit_sweep
from trialkit.planning.designs.optimal import OPTION_DESCRIPTIONS, optimal_design
from trialkit.planning.designs.options import DESIGN_OPTIONS
from trialkit.planning.designs.space import LHS_SPREADS
from trialkit.planning.evaluation import evaluate_design
from trialkit.trial import file as trialfile
from trialkit.trial import section_checks
from trialkit.trial.factors import Factor
from trialkit.trial.retired_names import RETIRED_KEYS, RETIRED_VALUES

ROOT = Path(__file__).resolve().parents[1]

#: Names retired by issue 12, as whole keys (trial file, command-line options, JSON) ...
RETIRED_KEY_NAMES = {"goal", "target", "importance", "weight", "lower", "upper", "sweet_spot",
                     "disallow", "augment", "fixed", "starts", "criterion", "pareto_line",
                     "n_starts", "start_values", "fds", "fraction"}
#: ... and as whole values (aims, Latin hypercube spreads, option choices).
RETIRED_VALUE_NAMES = {"maximize", "minimize", "target", "none", "center", "maximin",
                       "centermaximin", "correlation"}
#: Trial-file *keys* retired only in some tables (``criterion`` still names the D or I
#: criterion of an optimal design, a published term).
KEYS_STILL_USED_ELSEWHERE = {("optimal", "criterion")}


def _hits(words, retired=RETIRED_KEY_NAMES) -> list[str]:
    return sorted({str(w) for w in words if str(w).strip().lower().replace("-", "_")
                   in retired})


def _keys(obj) -> set[str]:
    """Every key of nested dicts / lists (JSON-like)."""
    out: set[str] = set()
    if isinstance(obj, dict):
        for k, v in obj.items():
            out.add(str(k))
            out |= _keys(v)
    elif isinstance(obj, (list, tuple)):
        for v in obj:
            out |= _keys(v)
    return out


def test_the_retired_tables_name_every_retired_word():
    retired = {k for _, k in RETIRED_KEYS} | {v for _, v in RETIRED_VALUES}
    assert {"goal", "lower", "upper", "target", "weight", "importance", "disallow", "augment",
            "fixed", "starts", "maximize", "minimize", "center", "maximin", "centermaximin",
            "correlation"} <= retired


def test_trial_file_keys_and_values_use_the_new_names():
    assert _hits(list(section_checks.AIMS) + list(LHS_SPREADS), RETIRED_VALUE_NAMES) == []
    words = list(section_checks.RESPONSE_KEYS) + list(trialfile.TOP_LEVEL)
    for kind, options in DESIGN_OPTIONS.items():
        words += [k for k in options if (kind, k) not in KEYS_STILL_USED_ELSEWHERE]
    words += [k for k in OPTION_DESCRIPTIONS if ("optimal", k) not in KEYS_STILL_USED_ELSEWHERE]
    assert _hits(words) == []


@pytest.mark.parametrize("path", sorted(ROOT.glob("example_trials/*/trial.toml"))
                         + [ROOT / "trialkit" / "data" / "starter_trial.toml"],
                         ids=lambda p: p.parent.name)
def test_bundled_trial_files_use_the_new_names(path):
    doc = tomllib.loads(path.read_text(encoding="utf-8"))
    keys = _keys(doc)
    values = [r.get("aim") for r in doc.get("response", [])]
    # an optimal design's "criterion" (D or I) is the published term and stays
    assert _hits(keys, RETIRED_KEY_NAMES - {"criterion"}) == []
    assert _hits(values, RETIRED_VALUE_NAMES) == []
    assert all(r.get("aim") in section_checks.AIMS for r in doc.get("response", []))


def test_command_line_options_use_the_new_names():
    options, choices = [], []
    for name in cli.COMMANDS:
        parser = cli.build_parser(name)
        sub = [a for a in parser._actions if a.__class__.__name__ == "_SubParsersAction"]
        parsers = list(sub[0].choices.values()) if sub else [parser]
        for p in parsers:
            for action in p._actions:
                options += list(action.option_strings)
                if "--aim" in action.option_strings or "--spread" in action.option_strings:
                    choices += [str(c) for c in action.choices or []]
    assert "--aim" in options and choices
    assert _hits(o.lstrip("-") for o in options) == []
    assert _hits(choices, RETIRED_VALUE_NAMES) == []  # e.g. --aim higher, not maximize


def test_json_keys_of_the_results_use_the_new_names():
    # invented data: a noiseless quadratic sweep and a 2^3 factorial
    chel = Factor.continuous("chelator", 1, 9, unit="% w/v")
    xs = np.repeat([1.0, 3.0, 5.0, 7.0, 9.0], 2)
    sweep_table = pd.DataFrame({"chelator": chel.to_coded(xs),
                                "y": 90 - (xs - 5.5) ** 2 + np.tile([-0.5, 0.5], 5)})
    sw = fit_sweep(sweep_table, "y", chel, n_boot=20)
    fs = [Factor.continuous(n, -1, 1) for n in ("a", "b", "c")]
    grid = np.array(np.meshgrid([-1, 1], [-1, 1], [-1, 1])).reshape(3, -1).T
    cube = pd.DataFrame(grid, columns=["a", "b", "c"])
    cube["y"] = 10 + 3 * cube.a - 2 * cube.b + 0.1 * np.arange(8)
    cube["z"] = 5 - cube.a + 0.2 * cube.c + 0.05 * np.arange(8)
    eff = two_level_effects(cube, "y", fs)
    fits = {"y": fit_model(cube, "y", fs, "main", block=None),
            "z": fit_model(cube, "z", fs, "main", block=None)}
    comp = optimize_desirability(fits, [Aim("y", "higher", 5, 15), Aim("z", "lower", 7, 3)],
                                 n_tries=2)
    opt = optimal_design(fs, 6, model="main", tries=2, seed=1)
    ev = evaluate_design(cube[["a", "b", "c"]], fs, sd=1.0)
    keys = set()
    for result in (sw, eff, comp, opt, fits["y"], ev):
        keys |= _keys(result.to_dict())
    assert {"lean_level", "priority", "aim", "variance_profile", "share_of_region"} <= keys
    # an optimal design's "criterion" (D or I) is the published term and stays
    assert _hits(keys, RETIRED_KEY_NAMES - {"criterion"}) == []
