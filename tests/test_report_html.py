"""The HTML report: one self-contained file with tables, inline pictures and the cautions,
rendered by headless Chromium without errors."""

from __future__ import annotations

import html
import json
import re
import subprocess
from dataclasses import replace
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
from report_support import chromium, small_run

from supplydesign.cautions import CAUTION_LINES
from supplydesign.report.html import synth_report_html
from supplydesign.report.pictures import synth_figures
from supplydesign.report.plots import RAIL_COLOURS, svg_markup
from supplydesign.report.runfiles import write_synth_outputs

#: what the page must never load or run
EXTERNAL = re.compile(r"""(?:src|href)\s*=\s*["']?\s*(?:https?:|//|file:)|url\(\s*["']?(?!#)"""
                      r"""|@import|<link\b|<script\b|<iframe\b|<img\b""", re.IGNORECASE)


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    result, waves = small_run()
    # a title that must be escaped, not interpreted
    result = replace(result, brief=replace(result.brief, title='CRC <b>"test"</b> & co'))
    out = tmp_path_factory.mktemp("report")
    written = write_synth_outputs(result, str(out), seed=3)
    path = out / "report.html"
    assert str(path) in written and (out / "bom.csv").exists()
    return result, waves, path


class _Tags(HTMLParser):
    VOID = {"meta", "br", "hr", "img", "input", "link", "path", "use", "rect", "circle",
            "line", "polyline", "polygon", "stop", "ellipse"}

    def __init__(self):
        super().__init__()
        self.stack, self.errors, self.svgs = [], [], 0

    def handle_starttag(self, tag, attrs):
        self.svgs += tag == "svg"
        if tag not in self.VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        self.svgs += tag == "svg"

    def handle_endtag(self, tag):
        if tag in self.VOID:
            return
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"</{tag}> closes <{self.stack[-1] if self.stack else ''}>")
        else:
            self.stack.pop()


def test_page_is_self_contained_with_cautions_and_one_svg_per_picture(report):
    result, waves, path = report
    text = path.read_text(encoding="utf-8")
    assert not EXTERNAL.search(text), EXTERNAL.search(text)
    for line in CAUTION_LINES:
        assert text.count(html.escape(line)) == 2  # at the top and at the end
    assert "CRC &lt;b&gt;&quot;test&quot;&lt;/b&gt; &amp; co" in text and "<b>" not in text
    tags = _Tags()
    tags.feed(text)
    tags.close()
    assert not tags.errors and tags.stack == []
    assert tags.svgs == 1 + 2 * len(waves)  # Pareto front, ripple and rectifier per pick
    ids = re.findall(r'\bid="([^"]+)"', text)
    assert len(ids) == len(set(ids))
    for i in waves:
        assert f'id="design-{i + 1}"' in text
    # every design of the set is in the table, with its cost
    for k, c in enumerate(result.designs, start=1):
        assert f"<td>#{k}</td>" in text and f"{c.cost:.2f}" in text


def test_page_names_the_brief_by_its_file_name_not_its_folder(report):
    result, _, path = report
    page = path.read_text(encoding="utf-8")
    folder = str(Path(result.brief.source).parent)
    assert Path(result.brief.source).is_absolute() and folder not in page
    assert f"synthesis of {Path(result.brief.source).name}" in page


def test_inline_svg_is_the_same_picture_as_the_file(report):
    result, waves, _ = report
    figs = synth_figures(result, waves)
    marks = [svg_markup(f, f"f{k}") for k, f in enumerate(figs.values())]
    assert all(m.startswith("<svg") and m.rstrip().endswith("</svg>") for m in marks)
    page = synth_report_html(result, dict(zip(figs, marks, strict=True)), waves)
    assert all(m in page for m in marks)


def _run_chromium(args: list[str], timeout: float = 120.0) -> subprocess.CompletedProcess:
    return subprocess.run(args, capture_output=True, text=True, timeout=timeout,
                          stdin=subprocess.DEVNULL)


#: put into a copy of the page: records script errors and, after the load, what was
#: drawn, into <pre id="probe"> (the report itself has no script)
PROBE = """<script>
window.__errors = [];
window.addEventListener("error", e => window.__errors.push(String(e.message || e.type)), true);
window.addEventListener("load", () => {
  const svgs = [...document.querySelectorAll("figure svg")].map(s => {
    const r = s.getBoundingClientRect();
    return {w: r.width, h: r.height, paths: s.querySelectorAll("path").length,
            texts: s.querySelectorAll("text").length};
  });
  const probe = document.createElement("pre");
  probe.id = "probe";
  probe.textContent = JSON.stringify({errors: window.__errors, svgs: svgs,
    resources: performance.getEntriesByType("resource").map(e => e.name),
    title: document.title, tables: document.querySelectorAll("table").length});
  document.body.appendChild(probe);
});
</script>"""


def _browser_args(exe: str, profile: Path) -> list[str]:
    return [exe, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
            "--no-first-run", "--disable-background-networking", "--disable-component-update",
            "--disable-sync", f"--user-data-dir={profile}", "--hide-scrollbars",
            "--host-resolver-rules=MAP * ~NOTFOUND"]


def test_chromium_renders_the_page_without_errors_and_shows_its_plots(report, tmp_path):
    exe = chromium()
    result, waves, path = report
    probed = tmp_path / "probed.html"
    probed.write_text(path.read_text(encoding="utf-8").replace("<head>", "<head>" + PROBE, 1),
                      encoding="utf-8")
    proc = _run_chromium([*_browser_args(exe, tmp_path / "profile-dom"),
                          "--virtual-time-budget=10000", "--dump-dom", probed.as_uri()])
    assert proc.returncode == 0, proc.stderr[-2000:]
    found = re.search(r'<pre id="probe">(.*?)</pre>', proc.stdout, re.S)
    assert found, "the page did not finish loading"
    probe = json.loads(html.unescape(found.group(1)))
    assert probe["errors"] == []
    assert probe["resources"] == []  # nothing fetched: no network, no other file
    assert probe["title"].startswith("CRC <b>")
    assert probe["tables"] >= 3
    assert len(probe["svgs"]) == 1 + 2 * len(waves)
    for svg in probe["svgs"]:
        assert svg["w"] > 300 and svg["h"] > 150  # laid out at a readable size
        assert svg["paths"] > 20 and svg["texts"] > 5  # curves, axes and labels drawn


def test_chromium_screenshot_shows_the_coloured_curves(report, tmp_path):
    exe = chromium()
    from matplotlib.image import imread

    _, _, path = report
    shot = tmp_path / "page.png"
    proc = _run_chromium([*_browser_args(exe, tmp_path / "profile-shot"),
                          "--window-size=1280,2400", f"--screenshot={shot}", path.as_uri()])
    assert proc.returncode == 0 and shot.exists(), proc.stderr[-2000:]
    img = imread(shot)[..., :3]
    assert img.shape[:2] == (2400, 1280)
    # the first rail's colour (the ripple and Pareto pictures use it) is on the page
    rgb = np.array([int(RAIL_COLOURS[0][k:k + 2], 16) for k in (1, 3, 5)]) / 255.0
    close = np.all(np.abs(img - rgb) < 0.06, axis=2)
    assert close.sum() > 200
    assert img.std() > 0.05  # not a blank page
