"""Numbers for people (issue 17): the report's visible text and the command line's text
outputs carry no Python reprs and no exponent notation.

Data: the invented trials of tests/report_trials.py and the bundled example trials
(invented readings), built once per session by report_trials' cache, the same reports
tests/test_report_build.py reads.  The rule checked (plain notation for everyday
quantities, no reprs) is the project's own, from issue 17; that lab reports write numbers
in plain notation with digits matched to their uncertainty is common practice (the GUM,
JCGM 100:2008 section 7.2.6, asks that an uncertainty be quoted to at most two
significant digits and the estimate to the same decimal place; from memory).
"""

from __future__ import annotations

import html
import re
import shutil

import pandas as pd
import pytest
import report_trials as rt

from trialkit.cli import main
from trialkit.numbers import readable, readable_frame, readable_interval, readable_table

#: What a reader must never see: a numpy repr, a dict repr, exponent notation.
BAD = re.compile(r"np\.float64\(|\{'|\d(?:\.\d+)?e[+-]\d\d")


def visible_text(page: str) -> str:
    """The text a reader sees unfolded: no images, styles, scripts, folded <details>."""
    page = re.sub(r'src="data:image/png;base64,[^"]*"', 'src=""', page)
    page = re.sub(r"<(style|script)\b.*?</\1>", "", page, flags=re.S)
    page = re.sub(r"<details\b.*?</details>", "", page, flags=re.S)
    return html.unescape(re.sub(r"<[^>]+>", " ", page))


def offences(text: str) -> list[str]:
    """Each bad string with a little of its context."""
    return [text[max(0, m.start() - 50):m.end() + 10] for m in BAD.finditer(text)]


def test_the_scan_catches_what_the_old_formats_wrote():
    # the strings issue 17 quotes, as the old f"{x:.3g}" / dict formatting wrote them
    for old in (f"{1.11e6:.3g} h", f"{1.007e-08:.4g}", str({"ph": 6.2}),
                "(np.float64(40.0))"):
        assert offences(f"<p>it is {old}</p>"), old
    # and the helpers write the same numbers plainly
    assert not offences(f"{readable(1.11e6, 3)} h {readable(1.007e-08)}")
    # folded tables are exempt, visible ones are not
    page = "<p>ok</p><details><td>1.2e-05</td></details><td>3.4e+07</td>"
    found = offences(visible_text(page))
    assert len(found) == 1 and "3.4e+07" in found[0]


def test_interval_digits_follow_the_interval():
    # JCGM 100:2008 7.2.6 (from memory): the estimate to the interval's decimal place
    assert readable_interval(12.3456, 10.1234, 14.5678) == ("12.3", "10.1", "14.6")
    assert readable_interval(0.5, 0.5, 0.5) == ("0.5", "0.5", "0.5")


def test_console_tables_have_plain_numbers_and_p_values():
    import pandas as pd

    text = readable_table(pd.DataFrame({"term": ["a", "b"], "F": [2.5e6, 0.0],
                                        "p": [1.2e-12, 0.2345]}))
    assert not offences(text)
    assert "< 0.001" in text and "0.23" in text and "2500000" in text


@pytest.mark.parametrize("kind", rt.ALL_KINDS)
def test_report_visible_text_has_no_reprs_or_exponents(kind):
    text = visible_text(rt.report_of(kind).to_html())
    assert "Recommended" in text          # the scan reads the real page
    assert offences(text) == []


@pytest.mark.parametrize("kind", rt.ALL_KINDS)
def test_analyze_text_has_no_reprs_or_exponents(kind):
    # the texts `trialkit analyze --all` (repr of the whole analysis) and
    # `trialkit analyze --response NAME` (AnalysisResult.text) print
    data, _ = rt.analysed(kind)
    texts = [repr(data)] + [res.text() for res in data.results.values()
                            if hasattr(res, "text")]
    assert len(texts) > 1
    for text in texts:
        assert offences(text) == [], text


@pytest.mark.parametrize("name", rt.example_names())
@pytest.mark.parametrize("sizes", [[], ["--sd", "0.000023", "--effect", "0.000031"],
                                   ["--sd", "2300", "--effect", "3100"]])
def test_evaluate_text_has_no_reprs_or_exponents(name, sizes, tmp_path, capsys):
    folder = tmp_path / name
    shutil.copytree(rt.EXAMPLES / name, folder)
    assert main(["evaluate", str(folder), *sizes]) == 0
    out = capsys.readouterr().out
    assert "Evaluation:" in out
    assert offences(out) == [], out


def test_an_estimate_beside_its_interval_takes_the_intervals_digits():
    # issue 17: significant digits matched to the interval, row by row
    import pandas as pd

    from trialkit.numbers import readable_frame

    t = pd.DataFrame({"term": ["a", "b", "c"], "estimate": [0.0516349, 12.3456, 1234.5678],
                      "ci_low": [0.04012, 10.1, 1200.1], "ci_high": [0.06318, 14.9, 1269.0],
                      "pi_low": [0.01, 5.0, 1100.0], "pi_high": [0.09, 19.7, 1370.0]})
    out = readable_frame(t)
    assert out.estimate.tolist() == ["0.052", "12.3", "1235"]
    assert out.ci_low.tolist() == ["0.040", "10.1", "1200"]
    assert out.pi_high.tolist() == ["0.090", "20", "1370"]   # width 14.7: two digits
    for row in out.itertuples():   # the estimate never quotes a digit its interval lacks
        decimals = [len(x.split(".")[1]) if "." in x else 0
                    for x in (row.estimate, row.ci_low, row.ci_high)]
        assert len(set(decimals)) == 1


def test_a_standard_error_sets_the_digits_of_its_estimate():
    # issue 17: a standard error is quoted to two significant digits and its estimate to
    # the same decimal place (the usual rule for uncertainties, e.g. Taylor, An
    # Introduction to Error Analysis, 2nd ed., sec. 2.2 — from memory)
    t = pd.DataFrame({"term": ["chelator", "ph"], "effect": [10.86421, -0.0123456],
                      "std_error": [1.23456, 0.0004567], "p": [0.0001, 0.2]})
    out = readable_frame(t)
    assert out["effect"].tolist() == ["10.9", "-0.01235"]
    assert out["std_error"].tolist() == ["1.2", "0.00046"]
    # a planning table's stated effect is an input, not an estimate: left as given
    plan = pd.DataFrame({"term": ["a"], "effect": [10.0], "effect_se": [0.7312]})
    assert readable_frame(plan).iloc[0].tolist() == ["a", "10", "0.73"]
    # with an interval the interval sets the digits
    both = pd.DataFrame({"estimate": [5.12345], "std_error": [0.5], "ci_low": [4.1],
                         "ci_high": [6.15]})
    assert readable_frame(both).iloc[0].tolist() == ["5.1", "0.50", "4.1", "6.2"]
