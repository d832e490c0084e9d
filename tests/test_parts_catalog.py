"""Parts catalogs: validation of every row, the demo catalogs, user overrides, get()."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pytest

from supplydesign.design import Capacitor, Link, Rectifier, Transformer
from supplydesign.errors import UserError
from supplydesign.parts import describe_catalog, load_catalog
from supplydesign.parts.catalog import BUILTIN_DIR
from supplydesign.parts.schema import FAMILIES

REPO = Path(__file__).resolve().parent.parent
EXAMPLE_USER = REPO / "catalogs" / "example-user"

CAP_HEADER = ("id,description,capacitance [uF],voltage [V],esr [ohm],"
              "ripple current at 100 Hz [mA],price,currency")
CAP_ROW = 'CAP-T1,"test part",47,450,2.2,560,2.60,EUR'
TRF_HEADER = ("id,description,winding,open-circuit rms [V],resistance [ohm],leakage [mH],"
              "rated current [mA],price,currency")
REC_HEADER = ("id,description,kind,arrangement,drop [V],drop current [mA],max peak current [mA],"
              "saturation current [nA],emission,series resistance [ohm],max surge current [A],"
              "price,currency")
VALVE_ROW = "VR-T1,valve,valve,full-wave,17,250,750,,,,,26,EUR"
DIODE_ROW = "SR-T1,diode,silicon,,,,10000,5,1.8,0.05,30,0.12,EUR"


def write(directory: Path, files: dict[str, str]) -> Path:
    directory.mkdir(parents=True, exist_ok=True)
    for name, text in files.items():
        (directory / name).write_text(text, encoding="utf-8")
    return directory


def cap_file(*lines: str, header: str = CAP_HEADER) -> str:
    """A capacitors.csv: comment on line 1, header on line 2, rows from line 3."""
    return "\n".join(["# test data", header, *lines]) + "\n"


# (case id, file name, file text, line of the mistake, column named, words expected)
MALFORMED = [
    ("number-unparseable", "capacitors.csv", cap_file('CAP-T1,x,47u,450,2.2,560,2.6,EUR'),
     3, "capacitance [uF]", "plain number"),
    ("unit-in-cell", "capacitors.csv", cap_file(CAP_ROW, 'CAP-T2,x,47,450V,2.2,560,2.6,EUR'),
     4, "voltage [V]", "unit is in the header"),
    ("header-unit-wrong-dimension", "capacitors.csv",
     cap_file(CAP_ROW, header=CAP_HEADER.replace("capacitance [uF]", "capacitance [V]")),
     2, "capacitance [V]", "farad"),
    ("header-unit-unknown", "capacitors.csv",
     cap_file(CAP_ROW, header=CAP_HEADER.replace("[uF]", "[uFF]")), 2, "capacitance [uFF]",
     "unit"),
    ("header-unit-missing", "capacitors.csv",
     cap_file(CAP_ROW, header=CAP_HEADER.replace("voltage [V]", "voltage")), 2, "voltage",
     "unit in brackets"),
    ("header-unit-on-text", "capacitors.csv",
     cap_file(CAP_ROW, header=CAP_HEADER.replace("description", "description [V]")), 2,
     "description [V]", "no unit"),
    ("column-missing", "capacitors.csv",
     cap_file('CAP-T1,x,47,450,560,2.6,EUR', header=CAP_HEADER.replace("esr [ohm],", "")), 2,
     "esr", "missing"),
    ("column-unknown", "capacitors.csv",
     cap_file(CAP_ROW, header=CAP_HEADER.replace("capacitance", "capacitanse")), 2,
     "capacitanse [uF]", "unknown column"),
    ("column-twice", "capacitors.csv",
     cap_file(CAP_ROW + ",450", header=CAP_HEADER + ",voltage [kV]"), 2, "voltage [kV]",
     "once"),
    ("price-negative", "capacitors.csv", cap_file('CAP-T1,x,47,450,2.2,560,-2.6,EUR'), 3,
     "price", "above zero"),
    ("price-zero", "capacitors.csv", cap_file(CAP_ROW, 'CAP-T2,x,47,450,2.2,560,0,EUR'), 4,
     "price", "above zero"),
    ("esr-negative", "capacitors.csv", cap_file('CAP-T1,x,47,450,-1,560,2.6,EUR'), 3,
     "esr [ohm]", "zero or more"),
    ("not-finite", "capacitors.csv", cap_file('CAP-T1,x,47,450,2.2,nan,2.6,EUR'), 3,
     "ripple current at 100 Hz [mA]", "finite"),
    ("id-duplicate", "capacitors.csv", cap_file(CAP_ROW, "", "# gap", CAP_ROW), 6, "id",
     "line 3"),
    ("id-malformed", "capacitors.csv", cap_file('CAP T1,x,47,450,2.2,560,2.6,EUR'), 3, "id",
     "letters, digits"),
    ("currency-unknown", "capacitors.csv", cap_file('CAP-T1,x,47,450,2.2,560,2.6,EURO'), 3,
     "currency", "ISO 4217"),
    ("cell-empty", "capacitors.csv", cap_file('CAP-T1,x,47,,2.2,560,2.6,EUR'), 3,
     "voltage [V]", "empty cell"),
    ("description-empty", "capacitors.csv", cap_file('CAP-T1,,47,450,2.2,560,2.6,EUR'), 3,
     "description", "empty cell"),
    ("cells-too-few", "capacitors.csv", cap_file('CAP-T1,x,47,450,2.2,560,2.6'), 3,
     "currency", "8 cells"),
    ("cells-too-many", "capacitors.csv", cap_file(CAP_ROW + ",9"), 3, "column 9",
     "after column 'currency'"),
    ("winding-unknown", "transformers.csv",
     "\n".join([TRF_HEADER, "TRF-T1,x,centre-tapped,350,95,8,200,54,EUR"]), 2, "winding",
     "center-tapped"),
    ("leakage-negative", "transformers.csv",
     "\n".join([TRF_HEADER, "TRF-T1,x,single,350,95,-8,200,54,EUR"]), 2, "leakage [mH]",
     "zero or more"),
    ("rectifier-kind-unknown", "rectifiers.csv",
     "\n".join([REC_HEADER, VALVE_ROW.replace("valve,full", "vacuum,full")]), 2, "kind", "silicon"),
    ("silicon-with-valve-cell", "rectifiers.csv",
     "\n".join([REC_HEADER, VALVE_ROW, DIODE_ROW.replace("silicon,,,", "silicon,,17,")]), 3,
     "drop [V]", "empty cell"),
    ("silicon-with-arrangement", "rectifiers.csv",
     "\n".join([REC_HEADER, DIODE_ROW.replace("silicon,,", "silicon,bridge,")]), 2,
     "arrangement", "valve rectifiers only"),
    ("valve-missing-drop-current", "rectifiers.csv",
     "\n".join([REC_HEADER, VALVE_ROW.replace(",17,250,", ",17,,")]), 2, "drop current [mA]",
     "valve rectifier"),
    ("valve-without-arrangement-column", "rectifiers.csv",
     "\n".join([REC_HEADER.replace("arrangement,", ""), VALVE_ROW.replace("full-wave,", "")]), 2,
     "arrangement", "valve rectifier"),
    ("silicon-emission-missing", "rectifiers.csv",
     "\n".join([REC_HEADER, DIODE_ROW.replace(",1.8,", ",,")]), 2, "emission", "empty cell"),
    ("emission-with-unit", "rectifiers.csv",
     "\n".join([REC_HEADER.replace("emission", "emission [V]"), DIODE_ROW]), 1, "emission [V]",
     "no unit"),
    ("choke-zero-inductance", "chokes.csv",
     "id,description,inductance [H],dcr [ohm],current [mA],price,currency\n"
     "CHK-T1,x,0,160,150,22,EUR\n", 2, "inductance [H]", "above zero"),
]


@pytest.mark.parametrize("name, text, line, column, words", [c[1:] for c in MALFORMED],
                         ids=[c[0] for c in MALFORMED])
def test_malformed_catalog_row(tmp_path, name, text, line, column, words):
    write(tmp_path, {name: text})
    with pytest.raises(UserError) as info:
        load_catalog(tmp_path)
    message = str(info.value)
    assert "\n" not in message
    assert message.startswith(f"{tmp_path / name}:{line}: "), message
    assert f"column '{column}'" in message or column in message, message
    assert words in message, message


def test_mixed_currencies_name_both(tmp_path):
    write(tmp_path, {
        "capacitors.csv": cap_file(CAP_ROW),
        "chokes.csv": "id,description,inductance [H],dcr [ohm],current [mA],price,currency\n"
                      "CHK-T1,x,10,160,150,22,USD\n",
    })
    with pytest.raises(UserError) as info:
        load_catalog(tmp_path)
    message = str(info.value)
    assert message.startswith(f"{tmp_path / 'chokes.csv'}:2: column 'currency'")
    assert "USD" in message and "EUR" in message


def test_user_row_in_another_currency_is_an_error(tmp_path):
    write(tmp_path, {"capacitors.csv": cap_file(CAP_ROW.replace("EUR", "GBP"))})
    with pytest.raises(UserError, match="GBP.*EUR"):
        load_catalog(extra=tmp_path)


def test_unclosed_quote(tmp_path):
    write(tmp_path, {"capacitors.csv": cap_file('CAP-T1,"test part,47,450,2.2,560,2.6,EUR')})
    with pytest.raises(UserError, match=r"capacitors\.csv:3: .*quoted cell"):
        load_catalog(tmp_path)


@pytest.mark.parametrize("files, words", [
    ({"capacitor.csv": cap_file(CAP_ROW)}, "did you mean capacitors.csv"),
    ({"capacitors.csv": cap_file()}, "at least one row"),
    ({"capacitors.csv": "# only a comment\n"}, "header"),
    ({"notes.txt": "not a catalog"}, "at least one catalog file"),
])
def test_malformed_directory(tmp_path, files, words):
    write(tmp_path, files)
    with pytest.raises(UserError, match=words):
        load_catalog(tmp_path)


def test_missing_directory(tmp_path):
    with pytest.raises(UserError, match="expected a directory"):
        load_catalog(extra=tmp_path / "nowhere")


def test_not_utf8(tmp_path):
    (tmp_path / "capacitors.csv").write_bytes(cap_file(CAP_ROW).replace("test", "t\xe9st")
                                              .encode("latin-1"))
    with pytest.raises(UserError, match="UTF-8"):
        load_catalog(tmp_path)


# --------------------------------------------------------------------------- demo catalogs


def test_builtin_demo_catalogs_load_and_are_marked_invented():
    cat = load_catalog()
    assert set(cat.families) == set(FAMILIES)
    assert cat.currency == "EUR"
    for fam in FAMILIES.values():
        first = (BUILTIN_DIR / fam.filename).read_text(encoding="utf-8").splitlines()[0]
        assert first.startswith("# DEMO DATA"), fam.filename
        assert "invented" in first


def test_builtin_demo_catalogs_cover_the_planned_ranges():
    # The brief for the demo data (not outside data): capacitors 4.7-470 uF at 350-600 V,
    # chokes 1-20 H at 30-300 mA, resistor classes 0.5-10 W, both rectifier kinds.
    cat = load_catalog()
    cap = cat.table("capacitor")
    assert cap["capacitance_f"].min() == pytest.approx(4.7e-6)
    assert cap["capacitance_f"].max() == pytest.approx(470e-6)
    assert cap["voltage_rating_v"].min() == 350 and cap["voltage_rating_v"].max() == 600
    chk = cat.table("choke")
    assert (chk["inductance_h"].min(), chk["inductance_h"].max()) == (1.0, 20.0)
    assert chk["current_rating_a"].min() == pytest.approx(0.030)
    assert chk["current_rating_a"].max() == pytest.approx(0.300)
    res = cat.table("resistor")
    assert (res["power_w"].min(), res["power_w"].max()) == (0.5, 10.0)
    assert set(cat.table("rectifier")["kind"]) == {"valve", "silicon"}
    assert set(cat.table("transformer")["winding"]) == {"center-tapped", "single"}


def test_readme_documents_every_column():
    readme = (REPO / "catalogs" / "README.md").read_text(encoding="utf-8").lower()
    for fam in FAMILIES.values():
        assert fam.filename in readme
        for col in fam.columns:
            assert f"`{col.header.lower()}" in readme or col.name in ("id", "description", "price",
                                                              "currency"), col.header
            assert col.key.lower() in readme, col.key


def test_tolerance_column_of_every_family_but_rectifiers():
    """The band `spread` falls back on when a design gives none (fractions, demo values)."""
    cat = load_catalog()
    for fam in ("capacitor", "choke", "resistor", "transformer"):
        tol = cat.table(fam)["tolerance"]
        assert np.all((tol > 0) & (tol <= 0.2)), fam
        assert "tolerance" not in cat.get(fam, cat.ids(fam)[0])  # not a design field
    assert "tolerance" not in cat.table("rectifier")


# --------------------------------------------------------------------------- get()


def fields(cls) -> set[str]:
    return {f.name for f in dataclasses.fields(cls)}


def test_get_capacitor_builds_the_dataclass():
    got = load_catalog().get("capacitor", "CAP-47U-450")
    assert set(got) == {"capacitance_f", "esr_ohm", "voltage_rating_v", "ripple_rating_a",
                        "diameter_m", "height_m", "rated_life_h", "rated_temperature_c",
                        "price", "currency", "part"}
    cap = Capacitor(**got)
    assert (cap.diameter_m, cap.height_m) == (0.018, 0.035)
    assert (cap.rated_life_h, cap.rated_temperature_c) == (2000.0, 105.0)
    assert cap.capacitance_f == 47e-6
    assert cap.ripple_rating_a == pytest.approx(0.56)
    assert (cap.voltage_rating_v, cap.esr_ohm, cap.part, cap.currency) == (
        450.0, 2.2, "CAP-47U-450", "EUR")


def test_get_choke_and_resistor_build_links():
    cat = load_catalog()
    choke = Link(**cat.get("choke", "CHK-10H-150"))
    assert (choke.kind, choke.inductance_h, choke.resistance_ohm) == ("choke", 10.0, 160.0)
    assert choke.current_rating_a == pytest.approx(0.150)
    assert not choke.is_open
    res = cat.get("resistor", "RES-5W")
    assert set(res) == {"kind", "power_w", "upper_temperature_c", "price", "currency", "part"}
    link = Link(**res)
    assert (link.kind, link.power_w) == ("resistor", 5.0)
    assert link.is_open  # the resistance value is chosen apart from the power class


def test_get_transformer():
    got = load_catalog().get("transformer", "TRF-CT-2X350-200")
    assert set(got) == {"winding", "open_circuit_v", "resistance_ohm", "leakage_h",
                        "rated_current_a", "rated_for", "rated_rms_a", "rated_va", "primary_v",
                        "price", "currency", "part"}
    trf = Transformer(**got)
    assert (trf.winding, trf.open_circuit_v, trf.resistance_ohm) == ("center-tapped", 350.0, 95.0)
    assert trf.leakage_h == pytest.approx(8e-3)


def test_missing_leakage_is_zero(tmp_path):
    write(tmp_path, {"transformers.csv": "\n".join([TRF_HEADER,
                                                    "TRF-T1,x,single,350,95,,200,54,EUR"])})
    assert load_catalog(tmp_path).get("transformer", "TRF-T1")["leakage_h"] == 0.0


def test_get_rectifiers_by_kind():
    cat = load_catalog()
    valve = cat.get("rectifier", "VR-FW-250I")
    assert set(valve) == {"kind", "arrangement", "drop_v", "drop_current_a",
                          "max_peak_current_a", "max_reservoir_f", "min_source_resistance_ohm",
                          "price", "currency", "part"}
    rv = Rectifier(**valve)
    assert (rv.kind, rv.arrangement, rv.drop_v) == ("valve", "full-wave", 17.0)
    assert rv.perveance == pytest.approx(0.25 / 17.0**1.5)
    assert rv.max_reservoir_f == 60e-6
    diode = cat.get("rectifier", "SR-1K-1A")
    assert "arrangement" not in diode  # a property of the circuit, given by the design
    rs = Rectifier(**diode, arrangement="bridge")
    assert (rs.saturation_current_a, rs.emission, rs.series_resistance_ohm) == (5e-9, 1.8, 0.05)
    assert (rs.max_peak_current_a, rs.max_surge_current_a) == (10.0, 30.0)


@pytest.mark.parametrize("family, cls", [("capacitor", Capacitor), ("choke", Link),
                                         ("resistor", Link), ("transformer", Transformer),
                                         ("rectifier", Rectifier)])
def test_every_part_builds_its_dataclass(family, cls):
    cat = load_catalog()
    for part_id in cat.ids(family):
        got = cat.get(family, part_id)
        assert set(got) <= fields(cls)
        assert cls(**got).part == part_id


def test_get_unknown_raises_key_error():
    cat = load_catalog()
    with pytest.raises(KeyError, match="CAP-47U-451"):
        cat.get("capacitor", "CAP-47U-451")
    with pytest.raises(KeyError, match="family"):
        cat.get("inductor", "CHK-10H-150")
    assert cat.get("capacitors", "CAP-47U-450") == cat.get("capacitor", "CAP-47U-450")


def test_header_units_are_converted(tmp_path):
    header = CAP_HEADER.replace("[uF]", "[nF]").replace("[V]", "[kV]").replace("[mA]", "[A]")
    write(tmp_path, {"capacitors.csv": cap_file('CAP-T1,x,47000,0.45,2.2,0.56,2.6,EUR',
                                                header=header)})
    got = load_catalog(tmp_path).get("capacitor", "CAP-T1")
    assert got["capacitance_f"] == 47e-6
    assert got["voltage_rating_v"] == 450.0
    assert got["ripple_rating_a"] == 0.56


@pytest.mark.parametrize("unit, cell, want_c", [("degC", "105", 105.0), ("K", "358.15", 85.0),
                                                ("degF", "221", 105.0)])
def test_temperature_columns_convert_with_their_offset(tmp_path, unit, cell, want_c):
    header = CAP_HEADER + f",rated life [h],rated temperature [{unit}]"
    write(tmp_path, {"capacitors.csv": cap_file(f"{CAP_ROW},2000,{cell}", header=header)})
    got = load_catalog(tmp_path).get("capacitor", "CAP-T1")
    assert got["rated_temperature_c"] == pytest.approx(want_c, abs=1e-9)
    assert got["rated_life_h"] == 2000.0


def test_transformer_rating_columns(tmp_path):
    header = TRF_HEADER.replace("rated current [mA]", "rated rms current [A],rated for,"
                                                      "rated power [VA]")
    write(tmp_path, {"transformers.csv": "\n".join([
        header, "TRF-T1,x,single,350,95,,0.4,choke input,140,54,EUR"])})
    got = load_catalog(tmp_path).get("transformer", "TRF-T1")
    assert (got["rated_rms_a"], got["rated_for"], got["rated_va"]) == (0.4, "choke input", 140.0)
    assert got["rated_current_a"] is None
    write(tmp_path, {"transformers.csv": "\n".join([
        header, "TRF-T1,x,single,350,95,,0.4,cap input,140,54,EUR"])})
    with pytest.raises(UserError, match="capacitor input, choke input"):
        load_catalog(tmp_path)


def test_header_order_and_case_are_free(tmp_path):
    header = ("Currency,price,ID,Voltage  [V],capacitance [uF],esr [ohm],"
              "ripple current at 100 Hz [mA],description")
    write(tmp_path, {"capacitors.csv": cap_file("EUR,1.5,CAP-T1,400,10,8,180,x", header=header)})
    got = load_catalog(tmp_path).get("capacitor", "CAP-T1")
    assert (got["voltage_rating_v"], got["capacitance_f"], got["price"]) == (400.0, 10e-6, 1.5)


# --------------------------------------------------------------------------- overrides


def test_user_catalog_replaces_and_adds():
    base = load_catalog()
    cat = load_catalog(extra=EXAMPLE_USER)
    replaced = cat.get("capacitor", "CAP-47U-450")
    assert (replaced["price"], replaced["esr_ohm"], replaced["ripple_rating_a"]) == (2.10, 1.9,
                                                                                     0.62)
    assert cat.row("capacitor", "CAP-47U-450")["source"].startswith(
        str(EXAMPLE_USER / "capacitors.csv"))
    # the whole row is replaced: the user file has no sizes, so none are left over
    assert cat.row("capacitor", "CAP-47U-450")["diameter_m"] is None
    ids = cat.ids("capacitor")
    assert ids[:-1] == base.ids("capacitor")  # replaced in place, new id appended
    assert ids[-1] == "CAP-82U-475"
    for family in ("choke", "resistor", "transformer", "rectifier"):
        assert cat.ids(family) == base.ids(family)


def test_directory_replaces_builtin(tmp_path):
    write(tmp_path, {"capacitors.csv": cap_file(CAP_ROW.replace("EUR", "USD"))})
    cat = load_catalog(tmp_path)
    assert cat.families == ("capacitor",)
    assert cat.currency == "USD"
    assert cat.ids("choke") == ()


# --------------------------------------------------------------------------- arrays


def test_table_is_si_arrays():
    cat = load_catalog()
    tab = cat.table("capacitor")
    n = len(cat.ids("capacitor"))
    assert all(len(col) == n for col in tab.values())
    assert tab["capacitance_f"].dtype == float
    assert list(tab["part"]) == list(cat.ids("capacitor"))
    rec = cat.table("rectifier")
    valve = rec["kind"] == "valve"
    assert np.isnan(rec["drop_v"][~valve]).all() and not np.isnan(rec["drop_v"][valve]).any()


def test_select_bounds():
    cat = load_catalog()
    sel = cat.select("capacitor", at_least={"voltage_rating_v": 500.0},
                     at_most={"capacitance_f": 50e-6})
    assert len(sel["part"]) > 0
    assert (sel["voltage_rating_v"] >= 500).all() and (sel["capacitance_f"] <= 50e-6).all()
    all_caps = cat.table("capacitor")
    expected = (all_caps["voltage_rating_v"] >= 500) & (all_caps["capacitance_f"] <= 50e-6)
    assert len(sel["part"]) == expected.sum()
    valves = cat.select("rectifier", kind="valve", at_least={"max_reservoir_f": 40e-6})
    assert set(valves["kind"]) == {"valve"}
    # silicon rows have no max reservoir (NaN) and are left out by a bound on it
    assert len(cat.select("rectifier", at_least={"max_reservoir_f": 0.0})["part"]) == (
        len(cat.select("rectifier", kind="valve")["part"]))
    with pytest.raises(KeyError):
        cat.select("capacitor", at_least={"voltage": 500.0})


def test_describe_catalog():
    cat = load_catalog()
    listings = describe_catalog(cat)
    assert [x.family for x in listings] == list(cat.families)
    caps = listings[0]
    assert "currency" not in caps.headers
    assert len(caps.rows) == len(cat.ids("capacitor"))
    row = dict(zip(caps.headers, caps.rows[cat.ids("capacitor").index("CAP-47U-450")],
                   strict=True))
    assert (row["capacitance"], row["voltage"], row["price"]) == ("47 µF", "450 V", "2.60 EUR")
    silicon = describe_catalog(cat, "rectifiers", kind="silicon")[0]
    assert "drop" not in silicon.headers and "emission" in silicon.headers
