"""Invented trials for the figure and report tests (invented data: self-consistency only).

Three small trial folders -- a two-level screening with centre points, a central
composite surface and a concentration sweep with time-course readings -- and bath
responses simulated from stated invented truth models with seeded noise.  They stand in
for the bundled example trials until those exist, and keep these tests independent of
them.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from trialkit.planning.plan import make_plan
from trialkit.trial.file import load_trial

SCREENING = """
[trial]
title = "{title}"
question = "Which of chelator, pH and surfactant change rust removal?"
notes = "{notes}"
seed = 11

[[factor]]
name = "chelator"
unit = "% w/v"
low = 2.0
high = 10.0

[[factor]]
name = "ph"
unit = "pH"
low = 5.5
high = 7.5

[[factor]]
name = "surfactant"
levels = ["none", "added"]

[design]
kind = "full-factorial"

[layout]
replicates = 1
blocks = 1
center_points = 2
controls = ["untreated"]
coupons_per_bath = 2
witness_coupons = 1

[[response]]
name = "removal"
unit = "%"
aim = "higher"

[[response]]
name = "attack"
unit = "mm/yr"
aim = "lower"
"""

SURFACE = """
[trial]
title = "Chelator and pH surface (invented)"
question = "Where do removal and attack balance best?"
seed = 23

[[factor]]
name = "chelator"
unit = "% w/v"
low = 2.0
high = 10.0

[[factor]]
name = "ph"
unit = "pH"
low = 5.5
high = 7.5

[design]
kind = "central-composite"
alpha = "face"

[layout]
replicates = 2
blocks = 2
center_points = 1
coupons_per_bath = 1
witness_coupons = 1

[[response]]
name = "removal"
unit = "%"
aim = "higher"
unacceptable = 30
satisfactory = 90

[[response]]
name = "attack"
unit = "mm/yr"
aim = "lower"
satisfactory = 0.0
unacceptable = 0.6
"""

SWEEP = """
[trial]
title = "Chelator sweep (invented)"
question = "Which chelator concentration is enough?"
seed = 31

[[factor]]
name = "chelator"
unit = "% w/v"
low = 2.0
high = 20.0

[design]
kind = "sweep"
count = 6
spacing = "geometric"

[layout]
replicates = 2
blocks = 1
coupons_per_bath = 1
witness_coupons = 1

[[response]]
name = "removal"
unit = "%"
aim = "higher"
"""


def write_trial(folder: Path, text: str, **fields: str) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    fields = {"title": "Screening of a chelating bath (invented)", "notes": "", **fields}
    (folder / "trial.toml").write_text(text.format(**fields) if "{title}" in text else text,
                                       encoding="utf-8")
    return folder


def _noise(rng, n, sd):
    return rng.normal(0.0, sd, n)


def screening(folder: Path, *, seed: int = 1, chelator_effect: float = 30.0,
              surfactant_effect: float = 0.0, **fields: str):
    """Invented truth: removal = 55 + chelator_effect/2 x1 + 4 x2 + surfactant_effect/2 x3
    + noise(sd 2) in coded units; attack = 0.10 + 0.05 x2 + noise(sd 0.01)."""
    write_trial(folder, SCREENING, **fields)
    trial = load_trial(folder / "trial.toml")
    plan = make_plan(trial)
    baths = plan.baths.copy()
    coded = plan.coded
    rng = np.random.default_rng(seed)
    n = len(baths)
    x1 = coded["chelator"].astype(float).to_numpy()
    x2 = coded["ph"].astype(float).to_numpy()
    x3 = np.where(baths["surfactant"] == "added", 1.0, -1.0)
    factor_bath = baths["point"].ne("control").to_numpy()
    removal = 55 + chelator_effect / 2 * x1 + 4 * x2 + surfactant_effect / 2 * x3 \
        + _noise(rng, n, 2.0)
    attack = 0.10 + 0.05 * x2 + _noise(rng, n, 0.01)
    baths["removal"] = np.where(factor_bath, removal, 3.0)
    baths["attack"] = np.where(factor_bath, attack, 0.0)
    return trial, plan, baths


def surface(folder: Path, *, seed: int = 2):
    """Invented truth: removal peaks at chelator 5 % w/v, pH 6.5 (quadratic, sd 1.5);
    attack = 0.35 - 0.12 (pH - 6.5) + 0.01 (chelator - 6) + noise (sd 0.01)."""
    write_trial(folder, SURFACE)
    trial = load_trial(folder / "trial.toml")
    plan = make_plan(trial)
    baths = plan.baths.copy()
    rng = np.random.default_rng(seed)
    c, ph = baths.chelator.astype(float), baths.ph.astype(float)
    n = len(baths)
    baths["removal"] = 80 - 0.9 * (c - 5) ** 2 - 12 * (ph - 6.5) ** 2 + _noise(rng, n, 1.5)
    baths["attack"] = 0.35 - 0.12 * (ph - 6.5) + 0.01 * (c - 6) + _noise(rng, n, 0.01)
    return trial, plan, baths


def sweep(folder: Path, *, seed: int = 3):
    """Invented truth: removal = 85 - 0.35 (c - 6)^2 + noise (sd 2); coverage falls
    first-order with k = 0.05 c / (1 + 0.1 c) per hour from 80 %."""
    write_trial(folder, SWEEP)
    trial = load_trial(folder / "trial.toml")
    plan = make_plan(trial)
    baths = plan.baths.copy()
    rng = np.random.default_rng(seed)
    c = baths.chelator.astype(float)
    baths["removal"] = 85 - 0.35 * (c - 6) ** 2 + _noise(rng, len(baths), 2.0)
    rows = []
    times = np.array([0.0, 2, 4, 8, 16, 24, 48])
    for b, conc in zip(baths.bath, c, strict=True):
        if b not in ("B01", "B03", "B05", "B07", "B09", "B11"):
            continue
        k = 0.05 * conc / (1 + 0.1 * conc)
        cov = 80 * np.exp(-k * times) + rng.normal(0, 0.8, len(times))
        rows += [{"bath": b, "elapsed_h": t, "coverage_pct": float(np.clip(v, 0, 100))}
                 for t, v in zip(times, cov, strict=True)]
    return trial, plan, baths, pd.DataFrame(rows)


EXAMPLES = Path(__file__).resolve().parents[1] / "example_trials"


def example_names() -> list[str]:
    """Bundled example trials that carry invented readings."""
    if not EXAMPLES.is_dir():
        return []
    return sorted(p.name for p in EXAMPLES.iterdir()
                  if (p / "trial.toml").exists() and (p / "readings" / "coupons.csv").exists())


def example(name: str, dest: Path):
    """Copy an example trial to ``dest``; its responses from the invented readings."""
    import shutil

    from trialkit.responses.compute import compute_responses

    folder = dest / name
    shutil.copytree(EXAMPLES / name, folder)
    trial = load_trial(folder / "trial.toml")
    readings = pd.read_csv(folder / "readings" / "coupons.csv")
    tc_path = folder / "readings" / "timecourse.csv"
    timecourse = pd.read_csv(tc_path) if tc_path.exists() else None
    responses = compute_responses(readings, coupon_spec=trial.coupons, timecourse=timecourse)
    return folder, responses, timecourse


_CACHE: dict = {}


def _scratch() -> Path:
    import tempfile

    if "dir" not in _CACHE:
        _CACHE["dir"] = Path(tempfile.mkdtemp(prefix="trialkit-report-tests-"))
    return _CACHE["dir"]


def analysed(kind: str):
    """(TrialAnalysis, inputs) of one invented or example trial, analysed once per test
    session by trialkit.analyze (the object the report renders): kind is "screening",
    "surface", "sweep" or "example:<name>"."""
    from trialkit.analysis.trial_analysis import analyze

    key = ("analysed", kind)
    if key not in _CACHE:
        base = _scratch() / kind.replace(":", "-")
        if kind.startswith("example:"):
            folder, resp, tc = example(kind.split(":", 1)[1], base)
            inputs = {"responses": resp, "timecourse": tc}
            conf = folder / "readings" / "confirmation.csv"
            confirmation = pd.read_csv(conf) if conf.exists() else None
            data = analyze(folder, confirmation=confirmation, **inputs)
        else:
            out = {"screening": screening, "surface": surface, "sweep": sweep}[kind](base)
            tc = out[3] if kind == "sweep" else None
            inputs = {"baths": out[2], "timecourse": tc}
            data = analyze(base, **inputs)
        _CACHE[key] = (data, inputs)
    return _CACHE[key]


def report_of(kind: str):
    """The built Report of one trial (cached per session)."""
    from trialkit.report.build import build_report

    key = ("report", kind)
    if key not in _CACHE:
        data, _ = analysed(kind)
        _CACHE[key] = build_report(data)
    return _CACHE[key]


ALL_KINDS = ["screening", "surface", "sweep"] + [f"example:{n}" for n in example_names()]
