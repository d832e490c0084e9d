"""SPICE netlist export and the ngspice runner (supplydesign.circuit.spice).

The test circuits under tests/data/spice are invented; none of their values is
outside data. The ngspice runs check that ngspice accepts every netlist and that
the runs settle; tests/test_ngspice_crosscheck.py compares them with our solver.
"""

from __future__ import annotations

import math
import re
import subprocess
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from spice_support import (
    circuit_names,
    load_circuit,
    ngspice_or_skip,
    spice_references,
)

from supplydesign.circuit import ngspice, spice, transient
from supplydesign.circuit.netlist import (
    GROUND,
    Circuit,
    Element,
    OperatingCase,
    Topology,
    build,
)
from supplydesign.errors import UserError

NAMES = circuit_names()

#: Boltzmann constant [J/K] and elementary charge [C] (SI 2019 exact values)
BOLTZMANN = 1.380649e-23
CHARGE = 1.602176634e-19


def element_lines(text: str) -> list[list[str]]:
    """Token lists of the element lines (not title, comments or dot commands), lower case
    as SPICE reads them."""
    out = []
    for line in text.splitlines()[1:]:
        body = line.split(";")[0].strip().lower()
        if body and not body.startswith(("*", ".")):
            out.append(body.split())
    return out


def by_name(text: str) -> dict[str, list[str]]:
    lines = element_lines(text)
    table = {tokens[0]: tokens for tokens in lines}
    assert len(table) == len(lines), "element names must be unique"
    return table


def text_of(name: str, **kw) -> tuple:
    design, circuit = load_circuit(name)
    text = spice.netlist(circuit, t_stop_s=3.0, t_step_s=20e-6, **kw)
    return design, circuit, text


# --------------------------------------------------------------------------- netlist


@pytest.mark.parametrize("name", NAMES)
def test_every_element_appears_once_between_its_nodes(name):
    _, circuit, text = text_of(name)
    table = by_name(text)
    law = circuit.topology.law
    prefix = {"R": "r", "C": "c", "L": "l", "W": "v", "J": "i", "D": "b" if law == "valve" else "d"}
    internal_uses: dict[str, int] = {}
    for tokens in table.values():
        for node in tokens[1:3]:
            if node.startswith("x_"):
                internal_uses[node] = internal_uses.get(node, 0) + 1
    for e in circuit.topology.elements:
        tag = spice.spice_name(e.name)
        primary = f"{prefix[e.kind]}_{tag}"
        assert primary in table, f"{e.name}: no line {primary}"
        # the lines of one element form a series chain from its node a to its node b
        own = [t for n, t in table.items() if n.split("_", 1)[1] == tag]
        ends = [n for t in own for n in t[1:3] if not n.startswith("x_")]
        assert sorted(ends) == sorted([spice.spice_name(e.a), spice.spice_name(e.b)]), e.name
    # an internal node joins exactly two lines of a chain
    assert all(count == 2 for count in internal_uses.values()), internal_uses
    nodes = {n for t in table.values() for n in t[1:3]} - {GROUND}
    assert {n for n in nodes if not n.startswith("x_")} == {
        spice.spice_name(n) for n in circuit.topology.nodes}


@pytest.mark.parametrize("name", NAMES)
def test_values_are_those_of_the_circuit(name):
    design, circuit, text = text_of(name)
    table = by_name(text)
    freq = design.mains.frequency_hz

    def value(param, e):
        return float(circuit.values[e.name][param][0])

    for e in circuit.topology.elements:
        tag = spice.spice_name(e.name)
        if e.kind == "R":
            assert float(table[f"r_{tag}"][3]) == pytest.approx(value("r", e), rel=1e-11)
        elif e.kind == "C":
            assert float(table[f"c_{tag}"][3]) == pytest.approx(value("c", e), rel=1e-11)
            assert table[f"c_{tag}"][4] == "ic=0"
        elif e.kind == "L":
            assert float(table[f"l_{tag}"][3]) == pytest.approx(value("l", e), rel=1e-11)
            if value("r", e) > 0:
                assert float(table[f"r_{tag}"][3]) == pytest.approx(value("r", e), rel=1e-11)
        elif e.kind == "J":
            assert table[f"i_{tag}"][3:] == ["dc", f"{value('i', e):.12g}"]
        elif e.kind == "W":
            sin = re.search(r"sin\(([^)]*)\)", " ".join(table[f"v_{tag}"])).group(1).split()
            assert [float(x) for x in sin] == pytest.approx(
                [0.0, math.sqrt(2) * design.transformer.open_circuit_v, freq, 0.0, 0.0,
                 math.degrees(e.phase)], rel=1e-11)
            assert float(table[f"r_{tag}"][3]) == design.transformer.resistance_ohm
    rect = design.rectifier
    if rect.kind == "valve":
        # Child-Langmuir I = K V^1.5 with K = I1 / V1^1.5 (Child 1911, Langmuir 1913) [source]
        k = rect.drop_current_a / rect.drop_v**1.5
        b_lines = [t for n, t in table.items() if n.startswith("b_")]
        assert b_lines
        for tokens in b_lines:
            expr = "".join(tokens[3:])
            m = re.fullmatch(r"i=([0-9.e+-]+)\*pow\(max\(v\((\w+),(\w+)\),0\),1\.5\)", expr)
            assert m, expr
            assert float(m.group(1)) == pytest.approx(k, rel=1e-11)
            assert (m.group(2), m.group(3)) == (tokens[1], tokens[2])
    else:
        # N = n*Vt / (k*300.15/q): the emission coefficient of the design [derived]
        vt = BOLTZMANN * 300.15 / CHARGE
        models = re.findall(r"^\.model (\S+) D\((.*)\)$", text, re.MULTILINE)
        assert len(models) == len(circuit.topology.of_kind("D"))
        for _, params in models:
            p = dict(kv.split("=") for kv in params.split())
            assert float(p["IS"]) == pytest.approx(rect.saturation_current_a, rel=1e-11)
            assert float(p["N"]) == pytest.approx(rect.emission, rel=1e-9)
            assert float(p["N"]) * vt == pytest.approx(
                float(circuit.values["d1"]["nvt"][0]), rel=1e-9)
            assert (p["RS"], p["CJO"]) == ("0", "0")


@pytest.mark.parametrize("name", NAMES[:2])
def test_header_and_control_lines(name):
    design, _, text = text_of(name, reltol=1e-3)
    lines = text.splitlines()
    assert lines[0] == design.title
    assert f"* design file: {Path(design.source).name}" in lines
    assert not any(str(Path(design.source).parent) in ln for ln in lines)
    assert any(ln.startswith("*") and "lethal" in ln for ln in lines)
    options = next(ln for ln in lines if ln.startswith(".options"))
    assert {"temp=27", "tnom=27", "reltol=0.001", "method=gear"} <= set(options.split())
    assert next(ln for ln in lines if ln.startswith(".tran")).split() == [
        ".tran", "2e-05", "3", "0", "2e-05", "uic"]
    assert lines[-1] == ".end"
    assert not any(ln.startswith(".save") for ln in lines)


@pytest.mark.parametrize("name,damped", [("si_bridge_choke_input", True),
                                         ("si_bridge_clc", False)])
def test_model_elements_are_named_in_the_header(name, damped):
    """The netlist tells the reader which elements are model, not parts: the choke
    input's damping resistance only where the choke meets the rectifier."""
    _, _, text = text_of(name)
    lines = text.splitlines()
    assert "*   C_cj* capacitance across each junction" in lines
    assert ("*   R_rp* damping across a choke input's choke (its iron losses)" in lines) == damped
    assert any(ln.startswith("R_rp1 ") for ln in lines) == damped


def test_open_resistor_is_omitted():
    design, _ = load_circuit("si_bridge_small_reservoir")
    cold = build([design], OperatingCase("cold", 1.0, "none"))
    text = spice.netlist(cold, t_stop_s=1.0, t_step_s=20e-6)
    assert "r_rload1" not in by_name(text) and "r_rload2" not in by_name(text)
    assert "* R_rload1 rect 0: open, omitted" in text.splitlines()


def test_index_picks_the_design_of_a_batch():
    design, _ = load_circuit("si_fw_crc")
    rails = list(design.rails)
    rails[1] = replace(rails[1], capacitor=replace(rails[1].capacitor, capacitance_f=68e-6))
    circuit = build([design, design.with_rails(rails)])
    first = by_name(spice.netlist(circuit, 0, t_stop_s=1.0, t_step_s=20e-6))
    second = by_name(spice.netlist(circuit, 1, t_stop_s=1.0, t_step_s=20e-6))
    assert float(first["c_c2"][3]) == pytest.approx(100e-6)
    assert float(second["c_c2"][3]) == pytest.approx(68e-6)
    with pytest.raises(IndexError):
        spice.netlist(circuit, 2, t_stop_s=1.0, t_step_s=20e-6)


def test_node_names_are_sanitised_without_collisions():
    elements = (
        Element("R", "r1", "B+", "b_"),
        Element("C", "c1", "B+", GROUND),
        Element("C", "c2", "b_", GROUND),
        Element("J", "i1", "b_", GROUND),
    )
    topo = Topology(elements, ("B+", "b_"), "silicon", ("b_",), ("out",), "B+", "half-wave",
                    "single")
    one = np.array([1.0])
    values = {"r1": {"r": 1e3 * one}, "c1": {"c": 1e-6 * one}, "c2": {"c": 2e-6 * one},
              "i1": {"i": 0.01 * one}}
    text = spice.netlist(Circuit(topo, values, 50.0 * one), t_stop_s=1.0, t_step_s=1e-5)
    table = by_name(text)
    assert table["r_r1"][1:3] == ["b_", "b__2"]
    assert table["c_c1"][1] == "b_" and table["c_c2"][1] == "b__2"
    assert spice.probe_vectors(Circuit(topo, values, 50.0 * one))["rails"] == {"out": "v(b__2)"}
    assert spice.spice_name("Plate Supply") == "plate_supply"


def test_write_spice_defaults_and_refuses_to_overwrite(tmp_path):
    design, circuit = load_circuit("valve_fw_four_section")
    path = spice.write_spice(design, tmp_path / "four.cir")
    tran = next(ln for ln in path.read_text().splitlines() if ln.startswith(".tran")).split()
    assert float(tran[2]) == transient.settle_time_estimate(circuit) >= 5.0
    assert float(tran[1]) == spice.DEFAULT_STEP_S
    with pytest.raises(UserError, match="exists"):
        spice.write_spice(circuit, path)
    spice.write_spice(circuit, path, t_stop_s=2.0, force=True)
    assert ".tran 2e-05 2 0 2e-05 uic" in path.read_text()


def test_settle_estimate_grows_with_the_slowest_section():
    design, circuit = load_circuit("valve_fw_crc")
    base = transient.settle_time_estimate(circuit)
    rails = list(design.rails)
    # ten times the last RC product: 10 kohm * 220 uF = 2.2 s
    rails[2] = replace(rails[2], capacitor=replace(rails[2].capacitor, capacitance_f=220e-6))
    slow = transient.settle_time_estimate(build([design.with_rails(rails)]))
    assert slow >= base + 8 * (2.2 - 0.22) - 0.5


# --------------------------------------------------------------------------- measuring


def synthetic_result(t, rail, anode, winding) -> ngspice.SpiceResult:
    return ngspice.SpiceResult(t_s=t, rail_v={"out": rail}, anode_a={"d1": anode},
                             winding_a={"w1": winding}, netlist="", runtime_s=0.0)


def test_measure_steady_on_known_waveforms():
    # uneven steps, as SPICE takes them
    rng = np.random.default_rng(7)
    t = np.concatenate(([0.0], np.sort(rng.uniform(0.0, 1.5, 150_000)), [1.5]))
    w = 2 * np.pi * 50.0
    rail = 300.0 + 5.0 * np.sin(2 * w * t)
    anode = 0.4 * np.maximum(np.sin(w * t), 0.0)
    winding = 0.4 * np.sin(w * t)
    m = ngspice.measure_steady(synthetic_result(t, rail, anode, winding), 50.0)
    rail_fig = m["rails"][0]
    # mean and rms of a sine over whole periods; a half-wave rectified sine has
    # mean Ipk/pi and rms Ipk/2 [derived: integrals of sin]. The tolerances are the
    # error of linear interpolation between samples about 10 us apart.
    assert rail_fig["dc_v"] == pytest.approx(300.0, rel=1e-7)
    assert rail_fig["ripple_rms_v"] == pytest.approx(5.0 / math.sqrt(2), rel=1e-4)
    assert rail_fig["ripple_pp_v"] == pytest.approx(10.0, rel=1e-3)
    assert m["anodes"][0]["avg_a"] == pytest.approx(0.4 / math.pi, rel=1e-4)
    assert m["anodes"][0]["rms_a"] == pytest.approx(0.2, rel=1e-4)
    assert m["anodes"][0]["peak_a"] == pytest.approx(0.4, rel=1e-4)
    assert m["windings"][0]["rms_a"] == pytest.approx(0.4 / math.sqrt(2), rel=1e-4)
    assert m["windings"][0]["avg_a"] == pytest.approx(0.0, abs=1e-6)
    assert m["dc_change_rel"] < 1e-7
    assert m["window_s"] == pytest.approx([1.3, 1.5])
    assert m["earlier"]["window_s"] == pytest.approx([0.8, 1.0])


def test_measure_steady_reports_an_unsettled_run():
    t = np.linspace(0.0, 2.0, 200_001)
    rail = 400.0 * (1.0 - 0.1 * np.exp(-t / 0.4))
    m = ngspice.measure_steady(synthetic_result(t, rail, 0 * t, 0 * t), 60.0)
    # means of the exponential over the two windows [derived]
    def window_mean(t0, t1):
        return 400.0 - 40.0 * 0.4 * (np.exp(-t0 / 0.4) - np.exp(-t1 / 0.4)) / (t1 - t0)
    now, before = window_mean(2.0 - 1 / 6, 2.0), window_mean(1.5 - 1 / 6, 1.5)
    assert m["dc_change_rel"] == pytest.approx((now - before) / now, rel=1e-6)
    assert m["dc_change_rel"] > 1e-3


def test_measure_steady_needs_both_windows():
    t = np.linspace(0.0, 0.6, 1000)
    with pytest.raises(ValueError, match="settle check"):
        ngspice.measure_steady(synthetic_result(t, t, t, t), 50.0)


def test_read_raw_round_trip(tmp_path):
    table = np.array([[0.0, 1.0, -2.0], [1e-5, 1.5, -2.5], [2e-5, 2.0, -3.0]])
    header = ("Title: x\nDate: today\nPlotname: Transient Analysis\nFlags: real\n"
              "No. Variables: 3\nNo. Points: 3\nVariables:\n\t0\ttime\ttime\n"
              "\t1\tv(rect)\tvoltage\n\t2\ti(v_d1)\tcurrent\nBinary:\n")
    path = tmp_path / "x.raw"
    path.write_bytes(header.encode() + table.astype("<f8").tobytes())
    got = ngspice.read_raw(path)
    assert list(got) == ["time", "v(rect)", "i(v_d1)"]
    np.testing.assert_array_equal(got["i(v_d1)"], table[:, 2])
    path.write_bytes(b"Title: x\nValues:\n")
    with pytest.raises(ngspice.NgspiceError):
        ngspice.read_raw(path)


def test_missing_ngspice_is_a_clear_error(monkeypatch):
    _, circuit = load_circuit("si_fw_crc")
    monkeypatch.setattr(ngspice.shutil, "which", lambda name: None)
    with pytest.raises(ngspice.NgspiceNotFound, match="ngspice is not installed"):
        ngspice.run_ngspice(circuit, t_stop_s=1.0)


# --------------------------------------------------------------------------- ngspice


@pytest.fixture(scope="module")
def references(request):
    ngspice_or_skip()
    return spice_references(request.config)


@pytest.mark.ngspice
@pytest.mark.parametrize("name", NAMES)
def test_ngspice_runs_settle(references, name):
    m = references[name]
    # two windows 0.5 s apart agree to 0.1 % on DC (REFERENCES.md, ngspice section)
    assert m["dc_change_rel"] < 1e-3, m["change"]
    assert m["change"][f"anodes.{m['anodes'][0]['name']}.peak_a"] < 1e-3


@pytest.mark.ngspice
@pytest.mark.parametrize("name", NAMES)
def test_ngspice_anode_currents_carry_the_load(references, name):
    """Kirchhoff in the mean: the rectifier delivers what the loads draw."""
    design, _ = load_circuit(name)
    m = references[name]
    dc = {r["name"]: r["dc_v"] for r in m["rails"]}
    load = sum(r.current_a if r.load_resistance_ohm is None else dc[r.name] / r.load_resistance_ohm
               for r in design.rails)
    in_series = 2 if design.rectifier.arrangement == "bridge" else 1
    total = sum(a["avg_a"] for a in m["anodes"])
    # capacitor and inductor currents average to zero in steady state; the 1 nS
    # junction conductances leak microamperes
    assert total == pytest.approx(in_series * load, rel=1e-3)


@pytest.mark.ngspice
@pytest.mark.parametrize("name", [n for n in NAMES if "bridge" not in n])
def test_ngspice_winding_current_is_the_anode_current(references, name):
    m = references[name]
    # where a choke input stops conducting, the rectifier output swings by hundreds of
    # volts within a millisecond and the junction capacitance carries 0.13 % of the rms
    rms_rel = 2e-3 if name == "si_fw_light_choke" else 1e-3
    for anode, winding in zip(m["anodes"], m["windings"], strict=True):
        # the winding half feeds its own anode; only the 100 pF junction capacitance
        # and 1 nS conductance carry a little current around the junction
        assert winding["avg_a"] == pytest.approx(anode["avg_a"], rel=1e-3)
        assert winding["rms_a"] == pytest.approx(anode["rms_a"], rel=rms_rel)


@pytest.mark.ngspice
@pytest.mark.parametrize("name", [n for n in NAMES if "choke_input" in n])
def test_ngspice_choke_input_dc(references, name):
    """Choke input, continuous conduction: V_dc = (2 sqrt2 / pi) V_rms - I R - junction drops.

    REFERENCES.md item 3 (Wikipedia, "Ripple (electrical)") [source], with the
    junction drops taken from the device laws at the DC current [derived]. The
    0.3 % tolerance covers the commutation overlap of the leakage inductance
    (about 0.1 V here) and the drop's variation with the current ripple.
    """
    design, circuit = load_circuit(name)
    m = references[name]
    rail = design.rails[0]
    rect = design.rectifier
    junctions = 2 if rect.arrangement == "bridge" else 1  # in series in the current path
    current = sum(a["avg_a"] for a in m["anodes"]) / junctions
    if rect.kind == "valve":
        drop = (current / rect.perveance) ** (2 / 3)
    else:
        nvt = rect.emission * BOLTZMANN * 300.15 / CHARGE
        drop = nvt * math.log(current / rect.saturation_current_a + 1) + current * (
            rect.series_resistance_ohm)
    expected = (2 * math.sqrt(2) / math.pi * design.transformer.open_circuit_v
                - current * (design.transformer.resistance_ohm + rail.link.resistance_ohm)
                - junctions * drop)
    assert m["rails"][0]["dc_v"] == pytest.approx(expected, rel=3e-3)
    assert circuit.topology.by_role("link", 0).kind == "L"


@pytest.mark.ngspice
def test_exported_file_runs_as_written(tmp_path):
    ngspice_or_skip()
    design, _ = load_circuit("valve_fw_choke_input")
    path = spice.write_spice(design, tmp_path / "v2.cir", t_stop_s=0.1)
    raw = tmp_path / "v2.raw"
    proc = subprocess.run(["ngspice", "-b", "-r", str(raw), str(path)], capture_output=True,
                          text=True, timeout=120, cwd=tmp_path, check=False)
    assert proc.returncode == 0, proc.stdout[-2000:] + proc.stderr[-2000:]
    assert "error" not in (proc.stdout + proc.stderr).lower()
    vectors = ngspice.read_raw(raw)
    # without a .save line ngspice keeps every node, the rail node among them
    assert vectors["time"][-1] == pytest.approx(0.1)
    assert "v(n1)" in vectors and "i(v_d1)" in vectors


@pytest.mark.ngspice
def test_ngspice_timeout_is_reported():
    ngspice_or_skip()
    _, circuit = load_circuit("valve_fw_four_section")
    with pytest.raises(ngspice.NgspiceError, match="did not finish"):
        ngspice.run_ngspice(circuit, t_stop_s=30.0, timeout_s=0.2)
