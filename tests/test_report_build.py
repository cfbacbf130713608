"""The report builder: sections, graceful gaps, escaping, record-log data quality, recipe.

Data: invented (tests/report_trials.py, seeded) and the bundled example trials (invented
readings).  The cautions checked are the trade's usual ones (common practice), taken from
trialkit.chemistry.cautions.
"""

from __future__ import annotations

import json
import re

import numpy as np
import pytest
import report_trials as rt

from trialkit.analysis.trial_analysis import analyze
from trialkit.commands._output import _clean
from trialkit.numbers import spoken
from trialkit.report.build import SECTION_TITLES, build_report
from trialkit.report.document import ReportError

KEYS = list(SECTION_TITLES)


@pytest.mark.parametrize("kind", rt.ALL_KINDS)
def test_every_section_present_and_filled(kind):
    report = rt.report_of(kind)
    assert [s.key for s in report.sections] == KEYS
    for key in ("brief", "matters", "models", "recipe", "confirm", "safety", "reproduce"):
        assert report.section(key).available, (key, report.data["notes"])
    html = report.to_html()
    for key, title in SECTION_TITLES.items():
        assert f'<section id="{key}"' in html and title in html
    assert report.findings and all(f["text"] for f in report.findings)
    rec = report.data["recommendation"]
    for name, value in rec["settings"].items():
        f = next(x for x in report_trial(kind).factors if x.name == name)
        if f.is_continuous:
            assert f.low - 1e-9 <= value <= f.high + 1e-9
        else:
            assert value in f.levels
    json.dumps(_clean(report.to_dict()), allow_nan=False)


def report_trial(kind):
    return rt.analysed(kind)[0].trial


def test_surface_recommendation_is_the_desirability_optimum():
    data, _ = rt.analysed("surface")
    report = rt.report_of("surface")
    rec = report.data["recommendation"]
    assert rec["settings"] == pytest.approx(data.desirability.settings)
    assert "Derringer" in rec["source"]
    pred = {r["response"]: r for r in rec["predictions"]}
    fit = data.fits["removal"]
    p = fit.predict(data.desirability.settings).iloc[0]
    assert pred["removal"]["predicted"] == pytest.approx(p.predicted)
    assert pred["removal"]["pi_low"] < pred["removal"]["ci_low"] < p.predicted


def test_sweep_recommends_the_lean_level():
    data, _ = rt.analysed("sweep")
    rec = rt.report_of("sweep").data["recommendation"]
    assert rec["settings"] == {"chelator": pytest.approx(data.sweeps["removal"].lean_level)}
    text = " ".join(f["text"] for f in rt.report_of("sweep").findings)
    assert f"{data.sweeps['removal'].lean_level:.3g} % w/v" in text
    # issue 15: the practical level is given an interval, or said to have none
    lean = next(f["text"] for f in rt.report_of("sweep").findings
                if "practical lean level" in f["text"])
    assert "no interval of its own" in lean, lean
    assert data.sweeps["removal"].to_dict()["sweep"]["lean_level_interval"] is None


@pytest.mark.parametrize("kind", rt.ALL_KINDS)
def test_safety_cautions(kind):
    sec = rt.report_of(kind).section("safety")
    data, _ = rt.analysed(kind)
    text = " ".join(i for b in sec.blocks for i in (b.items or [b.text])).lower()
    for words in ("eye protection", "gloves", "ventilation", "dispose", "local regulations",
                  "safety data sheet", "not a substitute"):
        assert words in text, words
    # issue 17: the cautions of the recommended recipe, not of every ingredient there is
    r = data.recipe
    if r is not None:
        acid = any(ln.role == "acid" for ln in r.lines) or r.predicted_ph < 5
        assert ("hydrogen" in text) == acid
        assert ("heated bath" in text) == (r.temperature_c > 25)
        assert all(c.lower() in text for c in r.cautions)


def test_confirmation_baths_checked_against_prediction_intervals():
    from trialkit.analysis.confirm import confirm

    report = rt.report_of("example:surface-follow-up")
    data, _ = rt.analysed("example:surface-follow-up")
    conf = report.data["confirmation"]
    assert "removal" in conf
    c = conf["removal"]
    # the same check straight from the analysis package
    obs = [b["observed"] for b in c["baths"]]
    ref = confirm(data.fits["removal"], c["settings"], obs, n_responses=c["n_responses"])
    assert c["n_responses"] == len(data.fits)  # Bonferroni over the responses (issue 15)
    assert c["mean"]["pi_low"] == pytest.approx(ref.mean["pi_low"])
    assert c["all_inside"] == ref.all_inside
    text = " ".join(b.text for b in report.section("confirm").blocks if b.kind == "text")
    # issue 17: settings in words with their units
    assert "Confirmation baths were run at chelator 5 % w/v, pH 6.1." in text


def test_reproducibility_lists_files_with_sha256():
    import hashlib

    report = rt.report_of("surface")
    data, _ = rt.analysed("surface")
    table = next(b.table for b in report.section("reproduce").blocks if b.kind == "table")
    row = table[table.file == "trial.toml"].iloc[0]
    assert row.sha256 == hashlib.sha256((data.folder / "trial.toml").read_bytes()).hexdigest()
    pairs = dict(next(b.items for b in report.section("reproduce").blocks
                      if b.kind == "pairs" and b.text == "Versions"))
    assert pairs["numpy"] == np.__version__
    assert data.plan.fingerprint in report.to_html()


def test_folder_without_readings_says_so(tmp_path):
    rt.write_trial(tmp_path / "empty", rt.SCREENING)
    report = build_report(analyze(tmp_path / "empty"))
    assert [s.key for s in report.sections] == KEYS
    assert report.section("brief").available
    for key in ("readings", "matters", "models", "recipe", "confirm"):
        assert not report.section(key).available, key
    html = report.to_html()
    assert "no readings recorded yet" in html
    assert html.count("Not available:") >= 5
    assert report.section("safety").available  # cautions are always there


def test_user_text_is_shown_as_text(tmp_path):
    title = "Bath <script>alert('x')</script> & <b>bold</b>"
    folder = rt.write_trial(tmp_path / "x", rt.SCREENING, title=title,
                            notes="<img src=x onerror=alert(1)>")
    report = build_report(analyze(folder))
    html = report.to_html()
    assert "<script" not in html.lower()
    assert "<img src=x" not in html
    assert "Bath &lt;script&gt;alert(&#39;x&#39;)&lt;/script&gt; &amp; &lt;b&gt;bold&lt;/b&gt;" \
        in html
    assert "&lt;img src=x onerror=alert(1)&gt;" in html
    md = report.to_markdown()
    assert md.splitlines()[0] == r"# Bath \<script\>alert('x')\</script\> & \<b\>bold\</b\>"


def test_markdown_export_matches_sections(tmp_path):
    report = rt.report_of("surface")
    path = report.write(tmp_path / "r.html", markdown=tmp_path / "notes" / "r.md")
    assert path.read_text(encoding="utf-8").startswith("<!DOCTYPE html>")
    md = (tmp_path / "notes" / "r.md").read_text(encoding="utf-8")
    assert [ln[3:] for ln in md.splitlines() if ln.startswith("## ")] == \
        list(SECTION_TITLES.values())
    n_fig = sum(b.kind == "figure" for s in report.sections for b in s.blocks)
    links = re.findall(r"!\[[^\]]*\]\((r_figures/figure-\d\d\.png)\)", md)
    assert len(links) == n_fig > 5
    for link in links:
        assert (tmp_path / "notes" / link).read_bytes()[:4] == b"\x89PNG"
    assert report.findings[0]["text"].split(" (")[0] in md.replace("\\", "")


def test_jupyter_repr_is_a_fragment():
    frag = rt.report_of("screening")._repr_html_()
    assert "<html" not in frag and 'class="trialkit-report"' in frag
    assert "<style>" in frag
    with pytest.raises(ReportError, match=r"\.html or \.md"):
        rt.report_of("screening").write("report.pdf")


# -- the record log path: readings, revisions, missing values, flagged values ----------
LOGGED = rt.SCREENING \
    .replace('aim = "higher"\n', 'aim = "higher"\nmeasure = "removal_pct"\n') \
    .replace('aim = "lower"\n', 'aim = "lower"\nmeasure = "corrosion_rate_mm_per_y"\n') \
    + '\n[coupons]\nshape = "plate"\nlength = 50\nwidth = 25\nthickness = 2\n'
BAD = "B03-R1"  # coverage after 130 % of the area: impossible, must be flagged


def _readings(plan, rng):
    """Invented readings (self-consistency only): removal rises with chelator."""
    out = []
    table = plan.table
    for r in table.itertuples():
        base = [("immersion_start", "2026-11-02T09:00:00"),
                ("immersion_end", "2026-11-02T17:00:00"), ("mass_initial_g", 20.0)]
        x = 0.0 if np.isnan(r.chelator) else (r.chelator - 6.0) / 4.0
        if r.coupon_kind == "rusted":
            removal = 55 + 15 * x + rng.normal(0, 1.5)
            out += base + [("coverage_before_pct", 60.0),
                           ("coverage_after_pct", round(60 * (1 - removal / 100), 1)),
                           ("mass_final_g", round(20.0 - 0.30 - 0.002 * removal, 4))]
        else:
            out += base + [("mass_final_g", round(20.0 - 0.004 - 0.001 * (1 + x), 5))]
        yield r.coupon, out
        out = []


def test_report_from_the_record_log(tmp_path):
    from trialkit.planning.plan import make_plan
    from trialkit.records.log import RecordLog
    from trialkit.trial.file import load_trial

    folder = rt.write_trial(tmp_path / "logged", LOGGED)
    plan = make_plan(load_trial(folder / "trial.toml"))
    rng = np.random.default_rng(4)
    rows = [(c, 0, f, v) for c, vals in _readings(plan, rng) for f, v in vals]
    skipped = "B01-R2"  # one coupon's final mass never recorded
    rows = [r for r in rows if not (r[0] == skipped and r[2] == "mass_final_g")]
    rows = [(c, i, f, 130.0 if (c, f) == (BAD, "coverage_after_pct") else v)
            for c, i, f, v in rows]
    log = RecordLog.for_folder(folder)
    log.add_readings(rows, source="sheet-day1.csv", sha256="a" * 64, fingerprint=plan.fingerprint)
    log.add_readings([("B02-R1", 0, "coverage_after_pct", 12.5)], source="sheet-fix.csv",
                     sha256="b" * 64, fingerprint=plan.fingerprint)
    report = build_report(analyze(folder))
    sec = report.section("readings")
    pairs = dict(next(b.items for b in sec.blocks if b.kind == "pairs"))
    assert pairs["Corrections since first entry"] == "1"
    assert pairs["Values in the record log"] == f"{len(rows) + 1} from 2 sheet(s)"
    missing = next(b.table for b in sec.blocks if b.kind == "table"
                   and b.text == "Readings still missing")
    row = missing[missing.reading == "mass_final_g"].iloc[0]
    assert row["coupons missing it"] == 1 and row["first few"] == skipped
    revised = next(b.table for b in sec.blocks if b.kind == "table" and "corrected" in b.text)
    assert list(revised.revision) == [1, 2] and list(revised.value)[-1] == 12.5
    flagged = next(b.table for b in sec.blocks if b.kind == "table" and "Flagged" in b.text)
    assert len(flagged) == 1 and BAD in flagged.iloc[0]["where"] + flagged.iloc[0]["problem"]
    assert flagged.iloc[0]["reading"] == "coverage_after_pct"
    # the responses were computed from the log and analysed
    assert report.section("matters").available
    chel = next(f for f in report.findings if f["term"] == "chelator"
                and f["response"] == "removal")
    assert chel["kind"] == "effect" and chel["numbers"]["effect"] > 20


def test_screening_report_also_judges_effects_by_lenth():
    from trialkit.report.findings import effects_findings

    data, _ = rt.analysed("screening")
    sec = rt.report_of("screening").section("matters")
    block = next(b for b in sec.blocks if b.kind == "list" and b.text.startswith("Removal: "))
    assert "Lenth" in block.text
    assert block.items == [f.text for f in effects_findings(data.effects["removal"], unit="%")]


@pytest.mark.parametrize("kind", ["example:chelator-sweep", "example:five-factor-screen",
                                  "example:surface-follow-up"])
def test_the_answer_comes_first(kind):
    # issue 17: the recommended recipe with its amounts, what matters, how sure, next step
    report = rt.report_of(kind)
    data, _ = rt.analysed(kind)
    first = report.sections[0]
    assert first.key == "answer" and first.available
    text = " ".join(b.text for b in first.blocks) + " ".join(
        str(i) for b in first.blocks for i in b.items)
    assert text.startswith("Recommended: ")
    units = {f.name: f.unit for f in data.trial.factors}
    for name in data.recommendation["settings"]:   # named as a sentence says it ("pH")
        assert spoken(name, units[name]) in text
    assert "To mix one bath of" in text and " g tetrasodium EDTA" in text
    assert "How sure:" in text and "Evidence: " in text and "Next step:" in text
    lists = [b for b in first.blocks if b.kind == "list" and b.text == "What matters"]
    assert lists and 1 <= len(lists[0].items) <= 5
    assert report.section("models").folded and "<details" in report.to_html()


def test_data_quality_notes_are_grouped_and_quote_no_extrapolated_times():
    # issue 17: one row per kind of note with the baths it concerns
    report = rt.report_of("example:chelator-sweep")
    tables = [b.table for b in report.section("readings").blocks
              if b.kind == "table" and b.text.startswith("Worth a look")]
    assert tables
    table = tables[0]
    assert not table["note"].str.contains("would reach it at").any()
    assert table["note"].is_unique
    # the three untreated controls never reach 90 %: one row names all three
    row = table[table["note"].str.startswith("90 % removal not reached")]
    assert len(row) == 1 and len(row["concerns"].iloc[0].split(", ")) == 3


def _visible_text(page: str) -> str:
    page = re.sub(r'src="data:image/png;base64,[^"]*"', 'src=""', page)
    return re.sub(r"<style>.*?</style>", "", page, flags=re.S)


@pytest.mark.parametrize("kind", ["example:chelator-sweep", "example:five-factor-screen",
                                  "example:surface-follow-up"])
def test_numbers_read_like_a_lab_report(kind):
    # issue 17: no Python reprs, no exponent notation in the tables people read
    page = _visible_text(rt.report_of(kind).to_html())
    assert "np.float64(" not in page and "{'" not in page
    cells = re.findall(r"<td>([^<]*)</td>", page)
    assert cells
    assert not [c for c in cells if re.fullmatch(r"-?\d(\.\d+)?e[+-]\d+", c)]
    p_cells = re.findall(r"<td>(&lt; 0\.001)</td>", page)
    assert p_cells       # tiny p-values are shown as "< 0.001"


def test_the_answer_tells_of_wanted_responses_and_does_not_flag_what_a_compromise_weighs():
    report = rt.report_of("example:surface-follow-up")
    data, _ = rt.analysed("example:surface-follow-up")
    first = report.sections[0]
    told = " ".join(i for b in first.blocks if b.text == "What matters" for i in b.items)
    for name, spec in data.specs.items():
        if not spec.is_wanted:          # rust_removed and mass_loss are record-only here
            assert name not in told, name
    weighed = {a.response for a in data.desirability.aims}
    assert "cost" in weighed
    assert not any(r.startswith(tuple(weighed)) for r in data.recommendation["reasons"])


def test_lack_of_fit_without_pure_error_says_why_it_is_not_tested():
    # a cost worked out from recipes: baths at the same settings agree exactly, so
    # F = lack of fit / pure error has a zero denominator (Montgomery, lack-of-fit test:
    # pure error needs replicates that vary — from memory); never "F = , p not available"
    from trialkit.report.build import _lack_of_fit_text

    nan = float("nan")
    assert "no pure error" in _lack_of_fit_text("cost", {"F": nan, "p": nan,
                                                         "lack_of_fit_df": 3})
    assert "as many terms" in _lack_of_fit_text("cost", {"F": nan, "p": nan,
                                                         "lack_of_fit_df": 0})
    assert _lack_of_fit_text("removal", {"F": 1.234, "p": 0.31, "lack_of_fit_df": 3}) == \
        "Lack of fit against pure error for removal: F = 1.23, p = 0.31."
    report = rt.report_of("example:surface-follow-up").to_html()
    assert "F = , " not in report and "Lack of fit for cost is not tested" in report


@pytest.mark.parametrize("kind", [k for k in rt.ALL_KINDS if k.startswith("example:")])
def test_no_exponent_notation_or_python_repr_anywhere_a_reader_looks(kind):
    # issue 17, numbers for people: the whole page, folded tables and equations included
    # (image data and the embedded machine-readable JSON left out)
    page = rt.report_of(kind).to_html()
    page = re.sub(r'src="data:[^"]*"', "", page)
    page = re.sub(r"<script.*?</script>", "", page, flags=re.S)
    hits = re.findall(r"\b\d(?:\.\d+)?e[+-]\d{2}\b|np\.(?:float|int)\d+\(", page)
    assert not hits, hits[:5]


def _sentences(section) -> list[str]:
    """Headings, paragraphs and list items of a report section (tables left out)."""
    return [b.text for b in section.blocks] + [str(i) for b in section.blocks
                                               for i in b.items]


def test_what_matters_speaks_every_name_and_unit_as_a_reader_writes_it():
    # issue 17 (numbers for people): plain names and units in the main sentences and
    # headings -- the level comparisons and Lenth's alias chains included
    report = rt.report_of("example:five-factor-screen")
    said = _sentences(report.section("matters"))
    text = "\n".join(said)
    assert "**" not in text and "degC" not in text
    assert not re.search(r"\bph\b", text), re.findall(r".{40}\bph\b.{20}", text)
    assert not re.search(r"\b(rust_removed|time_to_clean)\b", text)
    levels = [s for s in said if " gave " in s and "simultaneous 95 % CI" in s]
    assert levels and any("g/m² more rust removed" in s for s in levels), levels
    for s in levels:  # the difference written to its interval's digits
        m = re.search(r"gave (-?[\d.]+) .*CI (-?[\d.]+) to (-?[\d.]+);", s)
        decimals = {len(x.partition(".")[2]) for x in m.groups()}
        assert len(decimals) == 1, s
    lenth = [s for s in said if "Lenth's margin" in s and " = " in s]
    assert lenth and all("pH = " in s or " = pH" in s or "pH" not in s.lower()
                         for s in lenth if "ph" in s.lower())
    brief = report.section("brief")
    factors = next(b.table for b in brief.blocks if b.text == "Factors and their levels")
    assert "°C" in " ".join(factors.unit) and "degC" not in " ".join(factors.levels)


def test_the_confirmation_table_quotes_no_digit_its_interval_does_not_support():
    report = rt.report_of("example:five-factor-screen")
    table = next(b for b in report.section("confirm").blocks
                 if b.text.startswith("Where the confirmation baths should land"))
    header, rows = table.table_rows()
    numbers = [c for c in header if c not in ("response", "unit")]
    for row in rows:
        cells = [row[header.index(c)] for c in numbers]
        assert len({len(c.partition(".")[2]) for c in cells if c != "0"}) == 1, row
        assert all(len(c.replace("-", "").replace(".", "").lstrip("0")) <= 4 for c in cells)


def test_a_bath_short_of_the_level_is_said_to_count_in_the_censored_time_model():
    # issue 15/17: the data-quality note must not say "not reported as a result" when a
    # censored time model counts the bath as lasting at least its last inspection
    report = rt.report_of("example:five-factor-screen")
    notes = next(b.table for b in report.section("readings").blocks
                 if b.text.startswith("Worth a look"))
    counted = set(rt.analysed("example:five-factor-screen")[0]
                  .censoring["time_to_clean"]["censored_baths"])
    claimed = [r for r in notes.itertuples() if r.note.startswith("90 % removal not reached")
               and "counts it as lasting at least that long" in r.note]
    assert claimed and all("not reported as a result" not in r.note for r in claimed)
    assert set(", ".join(r.concerns for r in claimed).split(", ")) == counted
    fifty = [n for n in notes.note if n.startswith("50 % removal not reached")]
    assert fifty and all("not reported as a result" in n for n in fifty)  # no 50 % model


def test_surface_terms_and_treatments_are_named_as_a_reader_says_them():
    # issue 17: quadratic terms and the Dunnett treatments of the surface example read
    # "pH²" and "chelator 7 % w/v, pH 7.5", not "ph^2" and "ph 7.5 pH"
    report = rt.report_of("example:surface-follow-up")
    text = "\n".join(_sentences(report.section("matters")))
    assert "pH²" in text and "^2" not in text
    tables = [b.table for b in report.section("matters").blocks if b.table is not None
              and "treatment" in b.table]
    labels = [t for table in tables for t in table.treatment]
    assert labels and all(re.search(r"pH \d", t) and not re.search(r"\d pH\b|\bph\b", t)
                          for t in labels)


def test_a_control_short_of_the_level_is_not_said_to_count_in_the_time_model():
    # the untreated controls of the sweep never reach 90 %; the censored time model is of
    # the treated baths only, so their note must not claim they count in it
    data, _ = rt.analysed("example:chelator-sweep")
    counted = set(data.censoring["time_to_clean"]["censored_baths"])
    report = rt.report_of("example:chelator-sweep")
    notes = next(b.table for b in report.section("readings").blocks
                 if b.text.startswith("Worth a look"))
    rows = [r for r in notes.itertuples() if r.note.startswith("90 % removal not reached")]
    assert rows
    for r in rows:
        baths = set(r.concerns.split(", "))
        claims = "counts it as lasting at least that long" in r.note
        assert baths <= counted if claims else not baths & counted, (r, counted)
