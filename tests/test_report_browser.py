"""The report in a real browser: headless Chromium (Debian package ``chromium``).

For each invented and example trial the report is opened; a copy with a small checking
script appended reports, through ``--dump-dom``, whether every image loaded
(``naturalWidth > 0``), whether each is shown (drawn size, CSS, not covered at its
centre) and which sections are present; console messages are read from
Chromium's log on stderr; a screenshot goes to ``test-artifacts/``.  A negative control
(a page with a broken image and a console error) proves the checks can fail.

In CI (``CI`` set) a missing Chromium is a failure, not a skip.
"""

from __future__ import annotations

import html
import json
import os
import re
import shutil
import struct
import subprocess
from pathlib import Path

import pytest
import report_trials as rt

from trialkit.report.build import SECTION_TITLES

ARTIFACTS = Path(__file__).resolve().parents[1] / "test-artifacts"
CHECK = """
<pre id="tk-check-result"></pre>
<script>
window.addEventListener("load", function () {
  var imgs = Array.prototype.slice.call(document.images);
  var out = {
    images: imgs.length,
    broken: imgs.filter(function (i) { return !i.complete || i.naturalWidth === 0; })
                .map(function (i) { return i.alt; }),
    widths: imgs.map(function (i) { return i.naturalWidth; }),
    sections: Array.prototype.map.call(document.querySelectorAll("section[id]"),
                                       function (s) { return s.id; }),
    title: document.querySelector("h1") ? document.querySelector("h1").textContent : "",
    answer_top: document.getElementById("answer") ?
      document.getElementById("answer").getBoundingClientRect().top + window.scrollY : -1,
    page_width: document.documentElement.clientWidth,
    widest_table: Math.max.apply(null, [0].concat(Array.prototype.map.call(
      document.querySelectorAll("table"), function (t) {
        return t.getBoundingClientRect().right; })))
  };
  // each image scrolled into view: its size as drawn, whether CSS hides it, and whether
  // it is what the page shows at its centre (not covered by something else)
  out.shown = imgs.map(function (i) {
    i.scrollIntoView({block: "center"});
    var r = i.getBoundingClientRect(), s = window.getComputedStyle(i);
    var top = document.elementFromPoint(r.left + r.width / 2, r.top + r.height / 2);
    var section = i.closest("section[id]");
    return {alt: i.alt, natural_width: i.naturalWidth, width: r.width, height: r.height,
            styled_visible: s.display !== "none" && s.visibility !== "hidden" &&
                            parseFloat(s.opacity) > 0,
            on_top: top === i, section: section ? section.id : ""};
  });
  window.scrollTo(0, 0);
  document.getElementById("tk-check-result").textContent = JSON.stringify(out);
});
</script>
"""
#: Chromium's log line of a console message, e.g. ``...:INFO:CONSOLE:1] "boom", source: ...``
#: (older builds write ``CONSOLE(1)``); every level counts.
CONSOLE = re.compile(r":([A-Z]+\d*):CONSOLE(?::\d+|\(\d+\))\] \"(.*)\", source: ")


def chromium() -> str:
    for name in ("chromium", "chromium-browser"):
        path = shutil.which(name)
        if path:
            return path
    if Path("/usr/bin/chromium").exists():
        return "/usr/bin/chromium"
    if os.environ.get("CI"):
        pytest.fail("Chromium is not installed but CI is set: the browser check must run in "
                    "CI (.ci/run installs the Debian package 'chromium')")
    pytest.skip("Chromium not installed (install the Debian package 'chromium')")


def _run(args: list[str], profile: Path, timeout: float = 120) -> subprocess.CompletedProcess:
    base = [chromium(), "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
            "--no-first-run", "--disable-background-networking", "--disable-component-update",
            "--disable-sync", f"--user-data-dir={profile}"]
    return subprocess.run(base + args, capture_output=True, text=True, timeout=timeout)


def check_page(page: Path, tmp_path: Path) -> tuple[dict, list[str]]:
    """(results of the checking script, console messages) for ``page``."""
    probe = tmp_path / f"{page.stem}-probe.html"
    text = page.read_text(encoding="utf-8")
    probe.write_text(text.replace("</body>", CHECK + "</body>"), encoding="utf-8")
    res = _run(["--enable-logging=stderr", "--v=0", "--virtual-time-budget=10000",
                "--window-size=1280,800", "--dump-dom", probe.as_uri()],
               tmp_path / "profile-check")
    m = re.search(r'<pre id="tk-check-result">(.*?)</pre>', res.stdout, re.S)
    assert m and m.group(1), f"the checking script did not run:\n{res.stderr[-2000:]}"
    console = [msg for _, msg in CONSOLE.findall(res.stderr)]
    return json.loads(html.unescape(m.group(1))), console


def png_size(path: Path) -> tuple[int, int]:
    head = path.read_bytes()[:24]
    assert head[:8] == b"\x89PNG\r\n\x1a\n"
    return struct.unpack(">II", head[16:24])


def _tiny_png() -> str:
    """A 4 x 4 red PNG, base64 (written by Pillow)."""
    import base64
    import io

    from PIL import Image

    buf = io.BytesIO()
    Image.new("RGB", (4, 4), (200, 0, 0)).save(buf, format="PNG")
    return base64.b64encode(buf.getvalue()).decode("ascii")


def test_the_checks_can_fail(tmp_path):
    page = tmp_path / "bad.html"
    good = f"data:image/png;base64,{_tiny_png()}"
    page.write_text("<!DOCTYPE html><html><body><h1>x</h1><img alt='gone' "
                    "src='data:image/png;base64,AAAA'><script>console.error('boom')</script>"
                    f"<img alt='hidden' style='display:none' src='{good}'>"
                    f"<div style='position:relative'><img alt='covered' width=40 height=40 "
                    f"src='{good}'><div style='position:absolute;left:0;top:0;width:60px;"
                    f"height:60px;background:#fff'></div></div>"
                    f"<img alt='seen' width=40 height=40 src='{good}'>"
                    "</body></html>", encoding="utf-8")
    result, console = check_page(page, tmp_path)
    assert result["broken"] == ["gone"]
    assert any("boom" in c for c in console)
    shown = {i["alt"]: i for i in result["shown"]}
    assert shown["hidden"]["natural_width"] == 4 and not shown["hidden"]["styled_visible"]
    assert shown["hidden"]["width"] == 0
    assert shown["covered"]["natural_width"] == 4 and not shown["covered"]["on_top"]
    assert shown["seen"]["on_top"] and shown["seen"]["styled_visible"]
    assert shown["seen"]["width"] == shown["seen"]["height"] == 40


@pytest.mark.parametrize("kind", rt.ALL_KINDS)
def test_report_in_chromium(kind, tmp_path):
    chromium()
    report = rt.report_of(kind)
    page = report.write(tmp_path / f"report-{kind.replace(':', '-')}.html")
    result, console = check_page(page, tmp_path)
    n_fig = sum(b.kind == "figure" for s in report.sections for b in s.blocks)
    assert result["images"] == n_fig > 0
    assert result["broken"] == []
    assert min(result["widths"]) > 100
    # issue 17: the answer is the first section and starts on the first 1280 x 800 screen
    assert result["sections"][0] == "answer"
    assert 0 < result["answer_top"] < 800
    assert result["widest_table"] <= result["page_width"]
    assert result["sections"] == list(SECTION_TITLES)
    assert result["title"] == report.title
    assert console == [], console
    ARTIFACTS.mkdir(exist_ok=True)
    shot = ARTIFACTS / f"{page.stem}.png"
    if shot.exists():
        shot.unlink()
    res = _run([f"--screenshot={shot}", "--window-size=1280,4000", page.as_uri()],
               tmp_path / "profile-shot")
    assert shot.exists(), res.stderr[-2000:]
    assert png_size(shot) == (1280, 4000)


def test_script_in_title_stays_text_in_the_browser(tmp_path):
    chromium()
    title = "Bath <script>document.title='pwned';console.error('ran')</script> trial"
    folder = rt.write_trial(tmp_path / "x", rt.SCREENING, title=title)
    from trialkit.analysis.trial_analysis import analyze
    from trialkit.report.build import build_report

    page = build_report(analyze(folder)).write(tmp_path / "x.html")
    result, console = check_page(page, tmp_path)
    assert result["title"] == title  # shown literally, as text
    assert console == []


def _matrix(a: list[float], b: list[float]) -> list[float]:
    """The product a·b of two PDF transformation matrices ``[a b c d e f]``."""
    return [a[0] * b[0] + a[1] * b[2], a[0] * b[1] + a[1] * b[3],
            a[2] * b[0] + a[3] * b[2], a[2] * b[1] + a[3] * b[3],
            a[4] * b[0] + a[5] * b[2] + b[4], a[4] * b[1] + a[5] * b[3] + b[5]]


def pdf_image_boxes(reader, contents, resources, ctm=None) -> list[tuple[float, ...]]:
    """(x0, y0, x1, y1) in points of every image drawn by a content stream, following
    ``q``/``Q``/``cm`` and form XObjects (PDF 32000-1:2008, 8.3.4 and 8.10: an image
    fills the unit square of the current transformation matrix).  Parsed with pypdf."""
    from pypdf.generic import ContentStream

    ctm = ctm or [1.0, 0.0, 0.0, 1.0, 0.0, 0.0]
    xobjects = resources.get_object().get("/XObject", {}) if resources else {}
    xobjects = xobjects.get_object() if hasattr(xobjects, "get_object") else xobjects
    stack, boxes = [], []
    for operands, op in ContentStream(contents, reader).operations:
        if op == b"q":
            stack.append(ctm)
        elif op == b"Q":
            ctm = stack.pop()
        elif op == b"cm":
            ctm = _matrix([float(v) for v in operands], ctm)
        elif op == b"Do":
            x = xobjects[operands[0]].get_object()
            if x["/Subtype"] == "/Image":
                pts = [(ctm[0] * u + ctm[2] * v + ctm[4], ctm[1] * u + ctm[3] * v + ctm[5])
                       for u in (0, 1) for v in (0, 1)]
                boxes.append((min(p[0] for p in pts), min(p[1] for p in pts),
                              max(p[0] for p in pts), max(p[1] for p in pts)))
            elif x["/Subtype"] == "/Form":
                form = [float(v) for v in x.get("/Matrix", [1, 0, 0, 1, 0, 0])]
                boxes += pdf_image_boxes(reader, x, x.get("/Resources"), _matrix(form, ctm))
    return boxes


@pytest.mark.parametrize("kind", ["surface", "example:five-factor-screen"])
def test_report_prints_to_pdf(kind, tmp_path):
    # issue 17: the printed report keeps every figure whole on its page, the folded model
    # checks included (a closed <details> would otherwise print without them)
    import pypdf

    chromium()
    report = rt.report_of(kind)
    page = report.write(tmp_path / "print.html")
    ARTIFACTS.mkdir(exist_ok=True)
    pdf = ARTIFACTS / f"report-{kind.replace(':', '-')}.pdf"
    if pdf.exists():
        pdf.unlink()
    res = _run([f"--print-to-pdf={pdf}", "--no-pdf-header-footer", page.as_uri()],
               tmp_path / "profile-pdf")
    assert pdf.exists(), res.stderr[-2000:]
    reader = pypdf.PdfReader(pdf)
    n_fig = sum(b.kind == "figure" for s in report.sections for b in s.blocks)
    folded = sum(b.kind == "figure" for s in report.sections if s.folded for b in s.blocks)
    assert folded > 0
    drawn = []
    for sheet in reader.pages:
        box = [float(v) for v in sheet.mediabox]
        for x0, y0, x1, y1 in pdf_image_boxes(reader, sheet.get_contents(),
                                              sheet.get("/Resources")):
            drawn.append((x1 - x0) * (y1 - y0))
            assert box[0] <= x0 < x1 <= box[2] and box[1] <= y0 < y1 <= box[3], \
                ((x0, y0, x1, y1), box)
    assert len(drawn) == n_fig
    assert min(drawn) > 0.1 * 72 * 72         # each at least a tenth of a square inch


def test_the_pdf_box_check_can_fail(tmp_path):
    # a page drawing one image twice as wide as the page: its box sticks out
    import pypdf
    from PIL import Image

    pdf = tmp_path / "wide.pdf"
    Image.new("RGB", (40, 10), (200, 0, 0)).save(pdf, "PDF", resolution=2.0)
    reader = pypdf.PdfReader(pdf)
    sheet = reader.pages[0]
    boxes = pdf_image_boxes(reader, sheet.get_contents(), sheet.get("/Resources"))
    assert len(boxes) == 1
    x0, y0, x1, y1 = boxes[0]
    assert (x1 - x0, y1 - y0) == pytest.approx((1440, 360))   # 40 px at 2 px per inch
    shrunk = pdf_image_boxes(reader, sheet.get_contents(), sheet.get("/Resources"),
                             [0.5, 0, 0, 0.5, 0, 0])
    assert shrunk[0][2] == pytest.approx(x1 / 2)
