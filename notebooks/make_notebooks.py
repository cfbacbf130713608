"""Write the tutorial notebooks of trialkit (outputs cleared).

Usage (from the repository root)::

    python notebooks/make_notebooks.py

Each notebook is a practitioner's task on one of the bundled example trials, whose
scenarios and readings are invented.  A notebook works in a folder
``trialkit-demo-notebooks/<nn>/`` under the folder it is run from (ignored by git) and
ends with a ``results`` dict of its key numbers, which the test suite checks.
"""

from __future__ import annotations

import sys
from pathlib import Path

import nbformat
from nbformat.v4 import new_code_cell, new_markdown_cell, new_notebook

HERE = Path(__file__).resolve().parent

INVENTED = ("*The trial and every reading in this notebook are invented for teaching "
            "(an example trial bundled with trialkit); they are not measurements.*")

SETUP = '''\
import shutil
from pathlib import Path

import pandas as pd

from trialkit.demo.run import example_trials_folder
from trialkit.numbers import readable

pd.set_option("display.width", 160)
pd.set_option("display.float_format", readable)  # numbers as the report writes them
EXAMPLES = example_trials_folder()
WORK = Path("trialkit-demo-notebooks") / "{nn}"
shutil.rmtree(WORK, ignore_errors=True)  # a fresh copy each run
WORK.mkdir(parents=True)'''

CAUTION = ("**Safety.** Tetrasodium EDTA solutions are alkaline and citric acid is an acid: "
           "wear eye and skin protection when weighing and mixing. Acid on steel gives "
           "hydrogen, so never close a container on a working bath, and ventilate. Spent "
           "baths hold dissolved iron and other metals: dispose of them as local "
           "regulations require. The safety data sheets of the ingredients, local codes "
           "and licensed practice take precedence over anything here.")

def md(text: str):
    return new_markdown_cell(text.strip("\n"))


def code(text: str):
    return new_code_cell(text.strip("\n"))


def nb01():
    return [
        md("""
# 1 · Plan a concentration sweep and check its power

A conservation workshop wants to know which level of a near-neutral chelating bath
(tetrasodium EDTA brought to pH 7.0 with citric acid, 22 °C) cleans rusted steel fastest.
The plan: five levels from 1 to 9 % w/v in even steps, three baths per level, one replicate
a day, an untreated control and a strong reference bath each day, and a bare *witness*
coupon in every bath to measure attack on the steel.

Before mixing anything we check that the plan can see the effect we care about; after
the trial we look at where the best level lies.

""" + INVENTED),
        code(SETUP.format(nn="01")),
        md("The trial file says what varies, how the plan is laid out and what is measured."),
        code('''\
from trialkit import load_trial, make_plan

shutil.copy(EXAMPLES / "chelator-sweep" / "trial.toml", WORK / "trial.toml")
trial = load_trial(WORK / "trial.toml")
print(trial.title)
print([f.label() for f in trial.factors], trial.design.kind, trial.design.options)
print(trial.layout)'''),
        md("""
The plan numbers the baths, randomises their set-up order within each day (the seed is
recorded, so the same file gives the same plan) and names every coupon.
"""),
        code('''\
plan = make_plan(trial)
plan.write(WORK)
print("plan fingerprint", plan.fingerprint, "seed", plan.seed)
plan.baths.head(8)'''),
        code('''\
plan.baths.groupby(["block", "point"]).size().unstack(fill_value=0)'''),
        md("""
## Can it detect what matters?

The experimental unit is the bath. From earlier work we expect baths mixed alike to
differ by about **2 h** in time to 90 % removal. We want to see a change of 6 h across the
range (linear term) and a curvature of 4 h (squared term), at alpha 0.05.
"""),
        code('''\
from trialkit.planning.evaluation import evaluate_plan

ev = evaluate_plan(plan, model="chelator + chelator^2", sd=2.0,
                   effects={"chelator": 6.0, "chelator^2": 4.0})
ev'''),
        code('''\
print("power of the curvature term:", round(ev.power_of("chelator^2"), 3))
print("copies of the plan needed for 90 % power on both terms:", ev.replicates_needed(0.9))'''),
        md("""
## After the trial: where is the best level?

The invented readings of this example (coupon masses, rust coverage before and after,
and coverage inspections over 72 h) give the responses per bath; the sweep analysis
fits a quadratic in chelator to the time to 90 % removal and gives the best level with
its Fieller interval.
"""),
        code('''\
from trialkit.analysis.pipeline import analyze_table
from trialkit.responses.compute import compute_responses

readings = pd.read_csv(EXAMPLES / "chelator-sweep" / "readings" / "coupons.csv")
timecourse = pd.read_csv(EXAMPLES / "chelator-sweep" / "readings" / "timecourse.csv")
resp = compute_responses(readings, coupon_spec=trial.coupons, timecourse=timecourse)
baths = plan.baths.copy()
baths["time_to_clean"] = baths["bath"].map(resp.bath_values("time_to_90_h").to_dict())
baths[["bath", "point", "chelator", "time_to_clean"]].head(8)'''),
        code('''\
sweep_baths = baths[baths["point"] == "sweep"]
res = analyze_table(sweep_baths, "time_to_clean", trial.factors, sweep="chelator",
                    aim="lower", n_boot=0)
sw = res.sweep
print(f"fastest at {sw.best:.2f} % w/v; 95 % interval {sw.fieller_low:.2f} to "
      f"{sw.fieller_high:.2f} % w/v")
print(f"practical lean level (within tolerance of the best): {sw.lean_level:.2f} % w/v")'''),
        md("""
Chelator above the lean level buys little speed for its cost, and past the best level
removal slows again. The next step is a response surface around this level (notebook 5).
"""),
        code('''\
results = {"fingerprint": plan.fingerprint, "baths": len(plan.baths),
           "power_curvature": ev.power_of("chelator^2"),
           "replicates_for_90": ev.replicates_needed(0.9),
           "best": float(sw.best), "interval": [float(sw.fieller_low), float(sw.fieller_high)]}'''),
    ]


def nb02():
    return [
        md("""
# 2 · Mix the baths

Every bath of the sweep plan needs its own recipe: grams of tetrasodium EDTA for the
planned % w/v, the citric acid that brings it to pH 7.0 (worked out with PHREEQC's
aqueous speciation), a volume that suits the coupon area, and the cost. This notebook
adds a `[bath]` section to the trial file and prints the mixing sheet.

""" + INVENTED + "\n\n" + CAUTION),
        code(SETUP.format(nn="02")),
        md("""
The trial file's `[bath]` section names the ingredients, which factor sets which amount,
the pH adjuster, the volume rule and the reference bath.
"""),
        code('''\
shutil.copy(EXAMPLES / "chelator-sweep" / "trial.toml", WORK / "trial.toml")
text = (WORK / "trial.toml").read_text(encoding="utf-8")
print(text[text.index("[bath]"):text.index("[sheet]")])'''),
        code('''\
from trialkit import load_plan
from trialkit.chemistry.mixing_sheet import recipes_for_plan

plan = load_plan(WORK)
sheet = recipes_for_plan(plan)
sheet'''),
        md("One row per ingredient of every distinct recipe (baths mixed alike share one):"),
        code('''\
sheet.table()[["recipe", "bath", "volume_l", "ingredient", "grams", "basis", "target_ph",
               "predicted_ph"]]'''),
        md("The steps for one bath, with the pH adjustment in small portions near the target:"),
        code('''\
one = next(r for r in sheet.recipes if r.bath == plan.baths.loc[
    plan.baths["chelator"].idxmin(), "bath"])
for step in one.to_dict()["steps"]:
    print("-", step)'''),
        code('''\
costs = pd.DataFrame([{"bath": r.bath, "cost_per_l": r.to_dict()["cost_per_l"],
                       "currency": r.to_dict()["currency"]} for r in sheet.recipes])
costs = costs.merge(plan.baths[["bath", "point", "chelator"]], on="bath")
costs.sort_values(["point", "chelator"])'''),
        md("The bill of materials for the whole trial, with a spare margin, and the cautions:"),
        code('''\
pd.DataFrame(sheet.to_dict()["materials"])'''),
        code('''\
for c in sheet.cautions:
    print("-", c)
print(sheet.write_csv(WORK / "mixing_sheet.csv"))
print(sheet.write_html(WORK / "mixing_sheet.html"))'''),
        code('''\
sweep_costs = costs[costs["point"] == "sweep"].sort_values("chelator")
lowest = next(r for r in sheet.recipes if r.bath == one.bath).to_dict()
edta = next(i for i in lowest["ingredients"] if i["name"] == "tetrasodium EDTA")
results = {"recipes": len(sheet.recipes),
           "sweep_cost_per_l": sweep_costs["cost_per_l"].tolist(),
           "lowest_chelator": float(plan.baths["chelator"].min()),
           "lowest_volume_l": lowest["volume_l"], "lowest_edta_g": edta["grams"],
           "edta_note": edta["note"],
           "ph_error": max(abs(r.to_dict()["predicted_ph"] - r.to_dict()["target_ph"])
                           for r in sheet.recipes if r.to_dict()["target_ph"] == 7.0),
           "cautions": list(sheet.cautions)}'''),
    ]


def nb03():
    return [
        md("""
# 3 · Record and read in the readings

At the bench the readings go onto a recording sheet exported from the plan: the plan
columns are filled in and locked, the reading columns are empty. When the sheet comes
back it is checked against the plan *before* anything is stored, and every problem is
listed at once. Accepted values go into an append-only record log that keeps every
value and every correction.

Here a program fills the sheet from the invented readings of the five-factor screen;
then we spoil a copy on purpose to see the checks at work.

""" + INVENTED),
        code(SETUP.format(nn="03")),
        code('''\
from trialkit import load_plan
from trialkit.records.sheets import export_csv, export_xlsx

src = EXAMPLES / "five-factor-screen"
shutil.copy(src / "trial.toml", WORK / "trial.toml")
shutil.copytree(src / "readings", WORK / "readings")
plan = load_plan(WORK)
plan.write(WORK)
xlsx = export_xlsx(plan, WORK / "recording_sheet.xlsx")
csv = export_csv(plan, WORK / "recording_sheet.csv")
print(xlsx.name, csv.name)
print("".join(csv.read_text(encoding="utf-8-sig").splitlines(keepends=True)[:4]))'''),
        md("""
The CSV shows the layout: a stamp line (plan fingerprint and seed), headings with units,
the machine names ingest finds the columns by, then one row per coupon. We fill a copy
of the workbook from the readings file.
"""),
        code('''\
from trialkit.demo.fill import fill_sheet

filled = fill_sheet(xlsx, WORK / "readings" / "coupons.csv", WORK / "filled.xlsx")
filled'''),
        md("""
## A sheet with mistakes

Typical bench slips: a decimal comma typed into a mass, a coverage of 180 %, a final
mass above the initial one, and a coupon id overwritten in a plan column.
"""),
        code('''\
from openpyxl import load_workbook

wb = load_workbook(filled.path)
ws = wb["Coupon readings"]
names = [c.value for c in ws[4]]
col = {n: i + 1 for i, n in enumerate(names)}
first = 5
ws.cell(first, col["mass_initial_g"]).value = "19,7x"          # not a number
ws.cell(first + 1, col["coverage_after_pct"]).value = 180.0    # out of range
initial = ws.cell(first + 2, col["mass_initial_g"]).value
ws.cell(first + 2, col["mass_final_g"]).value = initial + 1.0     # heavier after?
ws.cell(first + 3, col["coupon"]).value = "B99-R7"            # plan column edited
wb.save(WORK / "filled_with_mistakes.xlsx")'''),
        code('''\
from trialkit.records.sheets import ingest_sheet
from trialkit.records.log import RecordLog

log = RecordLog.for_folder(WORK)
bad = ingest_sheet(WORK / "filled_with_mistakes.xlsx", plan, log=log)
print(bad.message)
bad.refused[["row", "column", "value", "check", "message", "fix"]]'''),
        md("Nothing was stored: a refused sheet leaves the record log as it was."),
        code('''\
print("values in the log:", log.count())'''),
        md("## The clean sheet goes in"),
        code('''\
good = ingest_sheet(filled.path, plan, log=log)
print(good.message)
print("values in the log:", log.count())'''),
        md("""
## A correction

A week later a coupon is re-weighed after one more cleaning cycle. The corrected sheet is
read in again: only the changed value is stored, as revision 2, and the old value stays
in the history.
"""),
        code('''\
wb = load_workbook(filled.path)
ws = wb["Coupon readings"]
coupon = ws.cell(first, col["coupon"]).value
old = ws.cell(first, col["mass_final_g"]).value
ws.cell(first, col["mass_final_g"]).value = round(old - 0.0012, 4)
wb.save(WORK / "filled_corrected.xlsx")
fix = ingest_sheet(WORK / "filled_corrected.xlsx", plan, log=log)
print(fix.message)
hist = log.history(coupon)
hist[hist["field"] == "mass_final_g"][["coupon", "field", "value", "revision", "source"]]'''),
        code('''\
current = log.current_values(plan=plan).set_index("coupon")
results = {"refused": not bad.ok, "problems": len(bad.refused),
           "checks": sorted(set(bad.refused["check"])),
           "stored": int(len(good.accepted)), "corrections": int(len(fix.accepted)),
           "revision": int(fix.accepted["revision"].max()),
           "coupon": coupon, "old_mass": float(old),
           "current_mass": float(current.loc[coupon, "mass_final_g"])}'''),
    ]


def nb04():
    return [
        md("""
# 4 · Analyse the screening trial

A formulation lab screened five variables of a chelating bath in a 2^(5-1) half
fraction (16 baths, resolution V) with four centre points: chelator level, pH,
temperature, a wetting agent (none/added) and agitation (none/periodic). Which of them
speed up rust removal, and which attack the bare steel?

The demo library runs plan, sheets, fill and ingest in one call; we then work from the
record log like any other trial.

""" + INVENTED),
        code(SETUP.format(nn="04")),
        code('''\
from trialkit.demo.run import run_demo

demo = run_demo(WORK, trials=["five-factor-screen"], until="responses")
demo'''),
        code('''\
from trialkit import load_plan, load_responses

folder = demo.trials[0].folder
plan = load_plan(folder)
responses = load_responses(folder)
baths = plan.baths.copy()
for spec in plan.trial.responses:
    baths[spec.name] = baths["bath"].map(
        responses.bath_values(spec.measure or spec.name).to_dict())
screen = baths[~baths["point"].isin(["control", "reference"])].reset_index(drop=True)
screen[["bath", "point", "chelator", "ph", "temperature", "surfactant", "agitation",
        "removal", "attack"]]'''),
        md("""
## Removal: a main-effects model

With 20 baths and 5 factors a main-effects model leaves plenty of degrees of freedom
for error; the centre points also test for curvature.
"""),
        code('''\
from trialkit.analysis.model import fit_model

ALPHA = 0.05
fit = fit_model(screen, "removal", plan.trial.factors, "main", alpha=ALPHA)
anova = fit.anova(2)
anova.summary'''),
        code('''\
fit.effects'''),
        md("""
Lenth's method on the 16 corner baths gives the same picture without needing a
residual: effects beyond the margin stand out.
"""),
        code('''\
from trialkit.analysis.effects import two_level_effects

lenth = two_level_effects(screen, "removal", plan.trial.factors, max_order=2)
lenth'''),
        md("""
## Attack on the steel

Base-metal attack grows multiplicatively (each factor multiplies the rate), so it is
analysed on the log scale.
"""),
        code('''\
import numpy as np

screen["log_attack"] = np.log(screen["attack"])
fit_attack = fit_model(screen, "log_attack", plan.trial.factors, "main", alpha=ALPHA)
fit_attack.anova(2).summary'''),
        code('''\
def significant(f):
    p = f.anova(2).summary.set_index("term")["p"]
    return {name: float(p[name]) for name in [x.name for x in plan.trial.factors]}

p_removal, p_attack = significant(fit), significant(fit_attack)
print("speed up removal:", [k for k, v in p_removal.items() if v < ALPHA])
print("attack the steel:", [k for k, v in p_attack.items() if v < ALPHA])'''),
        md("""
The wetting agent changes neither. pH, temperature and agitation matter for both, so
the follow-up (notebook 5) fixes temperature and agitation and maps chelator and pH.
"""),
        code('''\
results = {"alpha": ALPHA, "p_removal": p_removal, "p_attack": p_attack,
           "factors": [f.name for f in plan.trial.factors]}'''),
    ]


def nb05():
    return [
        md("""
# 5 · Fit the surface, trade off removal, attack and cost, write the report

After the screen, the lab mapped chelator (3 to 7 % w/v) and pH (4.5 to 7.5) in a
face-centred central composite, two replicates over two days, at 25 °C with a wetting
agent. Acidic baths clean faster but attack the steel; more chelator costs more. We fit a
second-order surface to each response, find the best compromise with Derringer–Suich
desirability, and write the report.

""" + INVENTED + "\n\n" + CAUTION),
        code(SETUP.format(nn="05")),
        code('''\
from trialkit.demo.run import run_demo

demo = run_demo(WORK, trials=["surface-follow-up"], until="responses")
folder = demo.trials[0].folder
print(demo)'''),
        md("""
The cost of each bath comes from its recipe (the trial file's `[bath]` section says how
each bath is mixed; prices come from the ingredient catalogue).
"""),
        code('''\
from trialkit import load_plan, load_responses
from trialkit.chemistry.mixing_sheet import recipes_for_plan

plan = load_plan(folder)
print("plan fingerprint", plan.fingerprint)
sheet = recipes_for_plan(plan)
recipe_of = sheet.to_dict()["bath_recipe"]
cost_of = {b: sheet.recipes[k - 1].to_dict()["cost_per_l"] for b, k in recipe_of.items()}
print(sheet)'''),
        code('''\
responses = load_responses(folder)
baths = plan.baths.copy()
for spec in plan.trial.responses:
    if spec.name == "cost":
        baths["cost"] = baths["bath"].map(cost_of)
    else:
        baths[spec.name] = baths["bath"].map(
            responses.bath_values(spec.measure or spec.name).to_dict())
surface_baths = baths[baths["point"] != "reference"].reset_index(drop=True)
surface_baths[["bath", "block", "point", "chelator", "ph", "removal", "attack", "cost"]].head()'''),
        md("## One surface per response"),
        code('''\
from trialkit.analysis.model import fit_model
from trialkit.analysis.surface import fit_surface

factors = plan.trial.factors
fits = {name: fit_model(surface_baths, name, factors, "quadratic")
        for name in ("removal", "attack", "cost")}
fits["removal"].anova(2).summary'''),
        code('''\
best_removal = fit_surface(fits["removal"], aim="higher", n_boot=400, seed=plan.seed)
print(best_removal.kind, best_removal.optimum["settings"])
best_removal.bootstrap'''),
        md("""
Removal alone would push pH to the acidic edge, where the witness coupons show the
steel being eaten. The compromise: removal between 50 % (useless) and 90 % (enough),
attack between 0.05 mm/y (none) and 0.30 mm/y (too much for finished parts), cost as
low as the range allows with half the priority, as the trial file says.
"""),
        code('''\
from trialkit.analysis.desirability import Aim, optimize_desirability

specs = {s.name: s for s in plan.trial.responses}
aims = [Aim("removal", "higher", unacceptable=50.0, satisfactory=90.0),
        Aim("attack", "lower", unacceptable=0.30, satisfactory=0.05),
        Aim("cost", "lower", unacceptable=float(surface_baths["cost"].max()),
            satisfactory=float(surface_baths["cost"].min()),
            shape=specs["cost"].shape, priority=specs["cost"].priority)]
two = optimize_desirability({k: fits[k] for k in ("removal", "attack")}, aims[:2],
                            seed=plan.seed, n_tries=4)
three = optimize_desirability(fits, aims, seed=plan.seed, n_tries=4)
print("removal and attack:       ", {k: round(v, 2) for k, v in two.settings.items()},
      f"D = {two.overall:.2f}")
print("removal, attack and cost: ", {k: round(v, 2) for k, v in three.settings.items()},
      f"D = {three.overall:.2f}")
three.summary'''),
        md("""
## The report

The report gathers the plan, the readings, the models, the recommended recipe and how to
confirm it, with the safety cautions. It is one self-contained HTML file.
"""),
        code('''\
import trialkit

analysis = trialkit.analyze(folder, baths=baths)   # computed once: the report renders it
report = trialkit.build_report(analysis)
path = report.write(folder / "report.html")
print(path)
report'''),
        code('''\
results = {"removal_optimum": best_removal.optimum["settings"],
           "removal_interval": {r.factor: [float(r.low), float(r.high)]
                                for r in best_removal.bootstrap.itertuples()},
           "compromise_two": two.settings, "compromise_three": three.settings,
           "cost_at_two": float(fits["cost"].predict(two.settings).predicted.iloc[0]),
           "cost_at_three": float(fits["cost"].predict(three.settings).predicted.iloc[0]),
           "report": str(path), "sections": [s.key for s in report.sections if s.available]}'''),
    ]


def nb06():
    return [
        md("""
# 6 · A split plot: temperature set per tank

A restoration workshop has one heated tank at 20 °C and one at 40 °C each day, for three
days. Every bath at one temperature stands in the same tank, so temperature is *hard to
change*: the plan groups the baths into tank runs (whole plots) and randomises the order
of the tank runs in a day and of the baths in each run. Chelator level and a wetting agent
are set bath by bath. How much does the warm tank help, and how sure can we be with only
six tank runs?

""" + INVENTED),
        code(SETUP.format(nn="06")),
        code('''\
from trialkit.demo.run import run_demo

demo = run_demo(WORK, trials=["tank-split-plot"], until="responses")
folder = demo.trials[0].folder
from trialkit import load_plan

plan = load_plan(folder)
plan.baths[["run", "bath", "block", "whole_plot", "temperature", "chelator",
            "surfactant"]].head(8)'''),
        md("""
## Power before the trial

With a guess of the bath-to-bath SD (4 points of removal) and a tank-to-tank variance as
large again (`variance_ratio = 1`), how likely is the trial to detect a 10-point effect?
The hard-to-change factor has only the tank runs to go on.
"""),
        code('''\
from trialkit.planning.split_plot_power import split_plot_power
from trialkit.planning.whole_plots import whole_plot_settings

power = split_plot_power(plan, whole_plot_settings(plan.trial),
                         {"temperature": 10.0, "chelator": 10.0, "surfactant": 10.0}, sd=4.0)
power'''),
        md("""
## The analysis on the right strata

Coupons are averaged within each bath (the bath is the unit); temperature is tested
against the variation between tank runs, chelator and wetting agent against the
variation between baths in one tank.
"""),
        code('''\
from trialkit.analysis.trial_analysis import analyze

data = analyze(folder)
split = data.split_plots["removal"]
print(split.method)
split.tests'''),
        code('''\
split.effects[["factor", "low", "high", "effect", "ci_low", "ci_high", "error_stratum",
               "error_df"]]'''),
        md("""
Had the baths been analysed as if each were randomised on its own, temperature's
interval would be far narrower than the six tank runs can support:
"""),
        code('''\
naive = data.fits["removal"].effects.set_index("term").loc["temperature"]
wide = split.effects.set_index("factor").loc["temperature"]
results = {"split_width": float(wide.ci_high - wide.ci_low),
           "naive_width": float(naive.ci_high - naive.ci_low),
           "strata": dict(zip(split.tests.term, split.tests.error_stratum)),
           "p": dict(zip(split.tests.term, split.tests.p_value)),
           "tank_runs_needed": int(power.table.set_index("term")
                                   .loc["temperature", "tank_runs_needed"])}'''),
    ]


PHOTOS_INVENTED = ("*Every photo in this notebook is a drawing made by trialkit "
                   "(`trialkit.demo.photo_scenes`: a grey plate with rust-coloured patches "
                   "of known pixel area), and the hand estimates and the eye's error are "
                   "invented; none of it is a measurement of a real coupon.*")


def nb07():
    return [
        md("""
# 7 · Measure rust coverage from photos

A restoration workshop has estimated by eye the rusted share of each coupon before it
went into the bath. It also photographed every coupon on white paper under a warm lamp,
with a white card beside it. How far do the eye's estimates stray from a measurement of
the photos?

trialkit finds the coupon by its outline, corrects the lamp's colour cast from the card,
tells rust from bare steel in CIELAB and counts pixels. We measure one photo, look at its
overlay, record all of them next to the hand estimates and compare the two.

""" + INVENTED + "\n\n" + PHOTOS_INVENTED + "\n\n" + CAUTION),
        code(SETUP.format(nn="07")),
        md("""
The sweep trial's plan and its invented readings (among them the hand estimates of
coverage) go into a fresh record log:
"""),
        code('''\
from trialkit.demo.run import run_demo
from trialkit.records.log import RecordLog

demo = run_demo(WORK, trials=["chelator-sweep"], until="ingest")
folder = demo.trials[0].folder
log = RecordLog.for_folder(folder)
current = log.current_values()
hand = current.loc[current["coupon"].str.contains("-R"), ["coupon", "coverage_before_pct"]]
hand = hand.head(12).reset_index(drop=True)
hand'''),
        md("""
## Invented photos

For each of these coupons we draw a "before" photo. Its true rusted share is the hand
estimate corrected by an invented eye error: this (invented) person reads 3 points high
on average, give or take 4 points. The light is a warm lamp (red, green and blue gains
1 : 0.87 : 0.70) and a white card lies on the white paper, a few lightness units from it.
"""),
        code('''\
import numpy as np
from PIL import Image

from trialkit.demo.photo_scenes import WHITE_CARD, render

LAMP = (1.0, 0.87, 0.70)
rng = np.random.default_rng(7)
photo_dir = WORK / "photos"
photo_dir.mkdir()
rows = []
for i, (coupon, estimate) in enumerate(hand.itertuples(index=False)):
    target = float(np.clip(estimate - 3.0 + rng.normal(0.0, 4.0), 0.0, 100.0))
    scene = render(target, seed=700 + i, size=(240, 320), cast=LAMP, card=True,
                   card_colour=WHITE_CARD)
    path = photo_dir / f"{coupon}_before.png"
    Image.fromarray(scene.rgb).save(path)
    rows.append({"coupon": coupon, "photo": path.name, "hand_pct": estimate,
                 "true_pct": scene.truth_pct, "card": scene.card})
truth = pd.DataFrame(rows)
Image.open(photo_dir / truth.photo[0])'''),
        md("""
## One photo, measured

`card = "auto"` looks for the card by its outline; if it finds none it refuses and asks
for the card's box rather than measuring without the correction. The notes say what was
done.
"""),
        code('''\
from trialkit import PhotoSettings, measure_coverage

settings = PhotoSettings(card="auto")
first = measure_coverage(photo_dir / truth.photo[0], settings)
print(f"measured {first.rust_pct:.1f} %, drawn {truth.true_pct[0]:.1f} %, "
      f"ASTM D610 grade {first.d610_grade}, rule {first.rule}")
for note in first.notes:
    print("-", note)
print(first.method_text())'''),
        md("""
The overlay shows what was counted: rust tinted, the coupon's outline drawn. Check it
on every real photo; glare, shadows or a brown background can mislead the measurement.
"""),
        code('''\
from trialkit.photos.overlay import overlay_image

Image.fromarray(overlay_image(first))'''),
        md("""
## All photos into the record log

The file names (`<coupon>_before.png`) say where each value goes. A photo's coverage is
stored beside the hand estimate, never over it, with the photo's SHA-256 and the method
as its source.
"""),
        code('''\
from trialkit import record_photos

batch = record_photos(folder, sorted(photo_dir.glob("*.png")), settings=settings)
measured = batch.table[["photo", "coupon", "rust_pct", "rust_pct_low", "rust_pct_high",
                        "status"]].merge(truth[["photo", "hand_pct", "true_pct"]], on="photo")
measured["photo_error"] = measured["rust_pct"] - measured["true_pct"]
measured.round(2)'''),
        code('''\
history = log.history()
from_photos = history[history["source"].astype(str).str.startswith("photo ")]
from_photos[["coupon", "field", "value", "source"]].head(3)'''),
        md("""
## Hand estimate against photo

Bland–Altman: the mean difference (photo - hand) and the range that 95 % of the
differences should fall in; ICC(A,1): absolute agreement of the two ways of reading.
"""),
        code('''\
from trialkit import coverage_agreement

agreement = coverage_agreement(log.current_values(), log.current_timecourse())
print(agreement.sentence())
agreement.pairs.round(2)'''),
        md("""
The eye we invented reads 3 points high on average, so the photos read lower than the
hand estimates; the limits of agreement show how far a single estimate strays. In a real
trial the report shows this comparison in its data-quality section, and
`[photos] coverage_from = "photo"` in the trial file makes the analysis use the photo
measurements instead of the hand estimates.

**Honesty.** The photos here are drawings with a rusted area known to the pixel, and the
eye's error is one we chose; they show how the tools are used, not how well eyes or
cameras do in a real workshop. Real photos need even light, a plain background, the card
in the frame and a look at every overlay.
"""),
        code('''\
results = {"photos": len(measured), "statuses": sorted(set(measured["status"])),
           "measured": measured[["photo", "rust_pct", "true_pct"]].to_dict("records"),
           "card_notes": [n for n in first.notes if "card found" in n],
           "card": [int(v) for v in truth.card[0]],
           "pairs": agreement.pairs[["coupon", "hand_pct", "photo_pct"]].to_dict("records"),
           "bias": agreement.bias, "lower": agreement.lower, "upper": agreement.upper,
           "icc": agreement.icc, "photo_sources": len(from_photos)}'''),
    ]


NOTEBOOKS = {
    "01_plan_a_sweep_and_check_power.ipynb": nb01,
    "02_mix_the_baths.ipynb": nb02,
    "03_record_and_ingest.ipynb": nb03,
    "04_analyse_the_screening_trial.ipynb": nb04,
    "05_fit_the_surface_and_report.ipynb": nb05,
    "06_split_plot_tanks.ipynb": nb06,
    "07_measure_rust_from_photos.ipynb": nb07,
}


def build(name: str) -> nbformat.NotebookNode:
    """The notebook ``name`` (a key of :data:`NOTEBOOKS`), outputs empty."""
    nb = new_notebook(cells=NOTEBOOKS[name]())
    nb.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3",
                                 "language": "python"}
    nb.metadata["language_info"] = {"name": "python"}
    for i, cell in enumerate(nb.cells):
        cell["id"] = f"{name[:2]}-{i:02d}"  # stable ids: regenerating changes nothing
    return nb


def main(argv: list[str] | None = None) -> int:
    for name in NOTEBOOKS:
        nb = build(name)
        nbformat.validate(nb)
        nbformat.write(nb, HERE / name)
        print(f"wrote {HERE / name}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
