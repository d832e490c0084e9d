"""``supplydesign spread``: the contract JSON, the console at 80 columns, pictures and the
self-contained page, and one-line errors."""

from __future__ import annotations

import html
import json
import re
from pathlib import Path

import pytest
from report_support import chromium
from test_report_html import EXTERNAL, PROBE, _browser_args, _run_chromium, _Tags

from supplydesign.cautions import CAUTION_LINES
from supplydesign.cli import main

EXAMPLE = Path(__file__).parent.parent / "examples" / "stereo-preamp.toml"
BUILDS = 40


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    out = tmp_path_factory.mktemp("spread")
    mp = pytest.MonkeyPatch()
    mp.setenv("COLUMNS", "80")
    import contextlib
    import io

    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        code = main(["spread", str(EXAMPLE), "--builds", str(BUILDS), "--seed", "4",
                     "--json", str(out / "s.json"), "--report", str(out / "s.html"),
                     "--plots", str(out / "pics")])
    mp.undo()
    return code, buf.getvalue(), out


def test_json_has_the_contract_keys(run):
    code, _, out = run
    assert code == 0
    data = json.loads((out / "s.json").read_text())
    # shared/FORMAT.md, "spread --json"
    assert (data["builds"], data["seed"]) == (BUILDS, 4)
    assert 0.0 <= data["yield_ci"][0] <= data["yield"] <= data["yield_ci"][1] <= 1.0
    names = [r["name"] for r in data["rails"]]
    assert names == ["reservoir", "common", "left line", "left phono", "right line",
                     "right phono"]
    for r in data["rails"]:
        assert 0.0 <= r["yield"] <= 1.0
        assert {"mean", "p1", "p50", "p99"} <= set(r["dc_v"])
        assert r["dc_v"]["p1"] <= r["dc_v"]["p50"] <= r["dc_v"]["p99"]
        assert {"p50", "p99"} <= set(r["ripple_rms_v"])
        assert all(set(d) == {"part", "share"} for d in r["drivers"])
        shares = [d["share"] for d in r["drivers"]]
        assert shares == sorted(shares, reverse=True) and sum(shares) <= 1.0 + 1e-9
    assert data["yield_ci_method"].startswith("Clopper-Pearson")
    assert {t["source"] for t in data["tolerances"]} >= {"default", "the design's mains band"}


def test_console_reads_at_80_columns_with_yield_sources_and_cautions(run):
    _, text, _ = run
    lines = text.splitlines()
    assert max(len(line) for line in lines) <= 80, max(lines, key=len)
    for words in ("Yield:", "Where each spread comes from", "DC of the builds",
                  "What drives the spread", "Part stresses at the 99th percentile",
                  "E6 series (IEC 60063)", "lethal voltages"):
        assert words in text, words


def test_pictures_and_page(run):
    _, _, out = run
    pics = sorted(p.name for p in (out / "pics").iterdir())
    assert pics == ["stereo-preamp-spread-drivers.png", "stereo-preamp-spread-histograms.png"]
    page = (out / "s.html").read_text(encoding="utf-8")
    assert not EXTERNAL.search(page)
    assert 'id="spread"' in page
    # the page is to be sent: the design by its file name, no folder of this machine
    assert f"spread of {EXAMPLE.name}" in page and str(EXAMPLE.parent) not in page
    for line in CAUTION_LINES:
        assert html.escape(line, quote=True) in page
    tags = _Tags()
    tags.feed(page)
    assert tags.errors == [] and tags.svgs == 2


def test_chromium_renders_the_spread_page(run, tmp_path):
    exe = chromium()
    _, _, out = run
    probed = tmp_path / "probed.html"
    probed.write_text((out / "s.html").read_text(encoding="utf-8").replace(
        "<head>", "<head>" + PROBE, 1), encoding="utf-8")
    proc = _run_chromium([*_browser_args(exe, tmp_path / "profile"),
                          "--virtual-time-budget=10000", "--dump-dom", probed.as_uri()])
    assert proc.returncode == 0, proc.stderr[-2000:]
    found = re.search(r'<pre id="probe">(.*?)</pre>', proc.stdout, re.S)
    probe = json.loads(html.unescape(found.group(1)))
    assert probe["errors"] == [] and probe["resources"] == []
    assert probe["tables"] >= 5 and len(probe["svgs"]) == 2
    for svg in probe["svgs"]:
        assert svg["w"] > 300 and svg["paths"] > 20


def test_existing_output_refused_before_solving(run, capsys):
    _, _, out = run
    code = main(["spread", str(EXAMPLE), "--builds", "8", "--json", str(out / "s.json")])
    err = capsys.readouterr().err
    assert code == 2 and "--force" in err and err.count("\n") == 1


@pytest.mark.parametrize("args,key", [(["--builds", "1"], "--builds"),
                                      (["--seed", "-3"], "--seed")])
def test_bad_options_are_one_line_errors(args, key, capsys):
    assert main(["spread", str(EXAMPLE), *args]) == 2
    err = capsys.readouterr().err
    assert key in err and err.count("\n") == 1


@pytest.fixture(scope="module")
def small_spread():
    """A small spread of the example, solved once for every width."""
    from supplydesign.evaluation.spread import run_spread, summarise
    from supplydesign.io import load_design

    design = load_design(EXAMPLE)
    return design, summarise(run_spread(design, builds=8, seed=1))


@pytest.mark.parametrize("width", [80, 100, 160])
def test_console_tables_fit_the_terminal_and_keep_values_whole(small_spread, width):
    from console_support import broken_values, render, widest

    from supplydesign.report import spread_console as sc

    design, s = small_spread
    text = render(lambda c: sc.render_spread(c, design, s), width)
    assert widest(text) <= width
    for sheet in (sc.sources_table(s), sc.dc_table(design, s), sc.hum_table(design, s),
                  sc.drivers_table(s), sc.stresses_table(s)):
        assert broken_values(text, sheet) == [], sheet.title
