"""Console tables laid out for the terminal's width (report/layout.py and the tables that
use it): at 80, 100 and 160 columns no line is wider than the terminal, no value cell
wraps (each design of the Pareto table keeps one line), a wide terminal gets the full
table and a narrow one several tables that repeat the key column.

The synthesis results below are made up from the example designs to exercise the layout
(many rails, long rail names, several transformers); they check presentation only, no
figure of the tool.
"""

from __future__ import annotations

from dataclasses import replace
from functools import partial
from pathlib import Path

import pytest
from console_support import broken_values, render, table_bodies, widest
from report_support import small_run

from supplydesign.cli import main
from supplydesign.evaluation.analysis import IDLE, evaluate
from supplydesign.evaluation.worstcase import analyse
from supplydesign.io.designfile import load_design
from supplydesign.report import worstcase_console as wcc
from supplydesign.report.bom import BomFuses, bom_sheet
from supplydesign.report.console import rails_sheet, render_evaluation, stresses_sheet
from supplydesign.report.layout import Column, Sheet, print_sheet, split_columns
from supplydesign.report.synth_console import pareto_sheet, render_synthesis
from supplydesign.synth.run import Candidate, SynthResult, notation

EXAMPLES = Path(__file__).parent.parent / "examples"
WIDTHS = (80, 100, 160)


# --------------------------------------------------------------------------- layout


def sheet_of(widths: dict[str, int], bands: dict[str, str] | None = None, rows: int = 3) -> Sheet:
    """A sheet whose first column is the key and each other column's cells are
    ``width`` characters wide."""
    bands = bands or {}
    cols = [Column("k", "left", key=True)] + [Column(name, band=bands.get(name, name))
                                              for name in widths]
    sheet = Sheet("test", cols)
    for r in range(rows):
        sheet.add_row(f"r{r}", *("x" * w for w in widths.values()))
    return sheet


def test_a_sheet_that_fits_is_one_table():
    sheet = sheet_of({"a": 10, "b": 10})
    assert split_columns(sheet, 80) == [[0, 1, 2]]


def test_a_wide_sheet_splits_into_tables_that_fit_each_led_by_the_key():
    sheet = sheet_of({c: 12 for c in "abcdefgh"})
    groups = split_columns(sheet, 80)
    assert len(groups) > 1 and all(g[0] == 0 for g in groups)
    assert sorted(j for g in groups for j in g[1:]) == list(range(1, 9))
    text = render(lambda c: print_sheet(c, sheet), 80)
    assert widest(text) <= 80 and not broken_values(text, sheet)
    assert len(table_bodies(text)) == len(groups)


def test_a_band_stays_in_one_table_where_it_fits():
    # a, b, c alone would fill the first table up to c; the band (c, d) moves whole
    sheet = sheet_of({"a": 24, "b": 24, "c": 10, "d": 10}, {"c": "cd", "d": "cd"})
    groups = split_columns(sheet, 80)
    assert groups == [[0, 1, 2], [0, 3, 4]]


def test_a_column_with_nothing_in_it_is_left_out():
    sheet = sheet_of({"a": 5, "empty": 0})
    assert split_columns(sheet, 80) == [[0, 1]]


def test_a_long_header_folds_instead_of_widening_a_narrow_terminal():
    sheet = Sheet("t", [Column("k", key=True)] + [Column(f"a long header {i}") for i in range(6)])
    sheet.add_row("1", *["12.5 V"] * 6)
    text = render(lambda c: print_sheet(c, sheet), 60)
    assert widest(text) <= 60 and len(table_bodies(text)) == 1
    assert not broken_values(text, sheet)


# --------------------------------------------------------------------------- synthesis


def made_up_result(example: str, n: int = 25, vary_source: bool = False) -> SynthResult:
    """A Pareto set of ``n`` variants of an example design (presentation only)."""
    design = load_design(EXAMPLES / example)
    cands = []
    for k in range(n):
        scale = (1.0, 1.5, 2.2, 3.3, 4.7, 6.8)[k % 6]
        rails = [replace(r, capacitor=None if r.capacitor is None else
                         replace(r.capacitor, capacitance_f=r.capacitor.capacitance_f * scale))
                 for r in design.rails]
        d = design.with_rails(rails)
        if vary_source and k % 2:
            d = replace(d, transformer=replace(d.transformer, part="TRF-CT-2X330-250"),
                        rectifier=replace(d.rectifier, part="SR-1K-3A"))
        dc = [r.voltage_v or 300.0 for r in d.rails]
        cands.append(Candidate(
            design=d, objectives={"hum_db": 1.5 - k / 5, "regulation_pct": 4.0 + k / 7,
                                  "peak": 0.2 + k / 100, "cost": 60.0 + 3.1 * k},
            cost=60.0 + 3.1 * k, feasible=True, notation=notation(d), chokes=1,
            resistor_heat_w=1.0, choke_mass_kg=1.0, margins={},
            full={"dc_v": [v * (1 + 0.01 * (k % 5)) for v in dc],
                  "ripple_rms_v": [0.01] * len(dc), "peak_a": 0.5},
            regulation=[4.0] * len(dc), columns={"hum_margin_db": 0.5 + k / 9}))
    picks = {"cheapest": (0, "lowest cost"), "quietest": (n - 1, "least hum"),
             "stiffest": (n - 1, "stiffest"), "balanced": (n // 2, "balanced")}
    return SynthResult(brief=design, designs=cands, picks=picks, comparison=None,
                       explanation=[], evaluations=1234, currency="EUR")


def shown_and_marks(result, limit: int = 25):
    marks: dict[int, list[str]] = {}
    for name, (i, _) in result.picks.items():
        marks.setdefault(i, []).append(name)
    return sorted(set(range(min(limit, len(result.designs)))) | set(marks)), marks


def check_pareto_output(result, width: int) -> list[list[list[str]]]:
    text = render(lambda c: render_synthesis(c, result), width)
    assert widest(text) <= width, text
    shown, marks = shown_and_marks(result)
    bodies = table_bodies(text)
    assert bodies
    for body in bodies:  # every design one line: no cell wrapped onto a second line
        assert len(body) == len(shown), text
        assert all(cells[0] for cells in body)
    sheet, _ = pareto_sheet(result, shown, marks)
    assert not broken_values(text, sheet), text
    return bodies


@pytest.mark.parametrize("width", WIDTHS)
@pytest.mark.parametrize("example,vary", [("pushpull-choke.toml", False),
                                          ("stereo-preamp.toml", True)])
def test_pareto_table_keeps_each_design_on_one_line(example, vary, width):
    check_pareto_output(made_up_result(example, vary_source=vary), width)


def test_pareto_table_is_one_table_when_wide_and_several_at_80_columns():
    result = made_up_result("pushpull-choke.toml")
    assert len(check_pareto_output(result, 160)) == 1
    assert len(check_pareto_output(result, 80)) >= 2


@pytest.mark.parametrize("width", WIDTHS)
def test_pareto_table_of_a_real_run(width):
    result, _ = small_run()
    check_pareto_output(result, width)


def test_a_transformer_common_to_every_design_is_said_once():
    result = made_up_result("pushpull-choke.toml")
    result.designs = [replace(c, design=replace(c.design, transformer=replace(
        c.design.transformer, part="TRF-CT-2X345-250"))) for c in result.designs]
    text = render(lambda c: render_synthesis(c, result), 80)
    assert "Every design shown takes transformer TRF-CT-2X345-250" in text
    assert text.count("TRF-CT-2X345-250") == 1


# --------------------------------------------------------------------------- evaluate


@pytest.fixture(scope="module")
def stereo():
    design = load_design(EXAMPLES / "stereo-preamp.toml")  # six rails, long names
    full, = evaluate([design])
    idle, = evaluate([design], IDLE)
    return design, full, idle, analyse([design])


@pytest.mark.parametrize("width", WIDTHS)
def test_evaluate_report_keeps_every_value_whole(stereo, width):
    design, full, idle, wc = stereo
    worst = partial(wcc.render_worst_cases, wc=wc, b=0)
    text = render(lambda c: render_evaluation(c, design, full, idle, worst=worst), width)
    assert widest(text) <= width
    sheets = [rails_sheet(design, full, idle), stresses_sheet(design, full),
              *(table(wc, 0) for table in (wcc.cases_table, wcc.capacitor_table,
                                           wcc.switch_on_table, wcc.filter_table,
                                           wcc.discharge_table))]
    for sheet in sheets:
        assert not broken_values(text, sheet), sheet.title
    names = [r.name for r in design.rails]
    keyed = [[row[0] for row in body] for body in table_bodies(text) if body[0][0] == names[0]]
    assert sum(keys == names for keys in keyed) >= 3  # rails, cases, impedance: a line a rail
    assert all("" not in keys for keys in keyed)  # no row continued on a second line


# --------------------------------------------------------------------------- parts, bom


def test_parts_listing_at_80_columns(capsys, monkeypatch):
    monkeypatch.setenv("COLUMNS", "80")
    assert main(["parts", "--family", "rectifiers"]) == 0
    out = capsys.readouterr().out
    assert widest(out) <= 80
    assert "rectifiers (" in out and "part 1 of" in out  # split, the title on one line


@pytest.mark.parametrize("width", WIDTHS)
def test_bill_of_materials_table(width):
    design = load_design(EXAMPLES / "pushpull-choke.toml")
    fuses = BomFuses(ht_a=0.315, mains_a=1.0, ht_position="in the centre-tap lead",
                     primary_v=230.0, surge_checked=True)
    sheet = bom_sheet("pushpull-choke.toml", design, fuses)
    text = render(lambda c: print_sheet(c, sheet), width)
    assert widest(text) <= width and not broken_values(text, sheet)
    assert "315 mA T" in text and "2 x 345 V rms open circuit" in text
