"""Grammar features and flattening, one behaviour per test.

Element layouts and directive meanings: ngspice manual (chapters on
elements, .subckt, .param, .include, .lib, .global); behaviour of ground,
`0` ports and hierarchy naming as observed with ngspice-39
(shared/reference/spice-dialect.md). The naming with `/` is our own design.
"""

from pathlib import Path

import pytest

from drc.netlist.reader import read_netlist, read_netlist_text

CORPUS = Path(__file__).resolve().parent / "corpus"


def by(netlist):
    return {e.designator: e for e in netlist.elements}


def test_element_layouts():
    n = read_netlist(CORPUS / "devices.cir")
    e = by(n)
    assert e["D1"].nodes == ("d1", "0") and e["D1"].model == "dmod"
    assert e["Q1"].nodes == ("vdd", "bias", "e1") and e["Q1"].model == "npn1"
    assert e["Q2"].nodes == ("vdd", "bias", "e2", "sub1") and e["Q2"].model == "npn1"
    assert e["M1"].nodes == ("out", "in", "0", "0") and e["M1"].params["w"] == pytest.approx(10e-6)
    assert e["J1"].nodes == ("vdd", "in", "s1")
    assert e["E1"].nodes == ("e_out", "0", "in", "0") and e["E1"].value.si == 2
    assert e["F1"].params["control"] == "Vsense" and e["F1"].value.si == 2
    assert e["K1"].nodes == () and e["K1"].params["inductors"] == ("L1", "L2")
    assert e["K1"].value.si == pytest.approx(0.9)
    assert e["T1"].nodes == ("in", "0", "t_out", "0")
    assert e["B1"].nodes == ("b_out", "0") and e["B1"].params["v"] == "v(in)*2"
    assert e["S1"].kind == "S" and len(e["S1"].nodes) == 4 and e["S1"].model == "swmod"
    assert e["W1"].nodes == ("vdd", "w_out") and e["W1"].model == "wmod"
    assert e["V2"].value is None and e["V2"].params["pulse"].startswith("0 5 1n")
    assert e["I1"].value.si == pytest.approx(1e-3)
    assert set(n.models) == {"dmod", "npn1", "nmod", "jmod", "swmod", "wmod"}


def test_contacts_are_two_node_s_lines():
    n = read_netlist(CORPUS / "board_export.cir")
    e = by(n)
    assert e["SW1"].kind == "S" and e["SW1"].nodes == ("Net-(SW1-Pad1)", "0")
    assert e["SW1"].model == "TACTILE"
    assert e["SW2"].model is None and e["SW2"].nodes == ("Net-(SW2-Pad1)", "0")
    assert e["R1"].value.si == 4700 and e["R1"].value.spice_si == 4000
    # an undefined subcircuit is a part, not an error
    assert e["XU1"].kind == "X" and e["XU1"].model == "74HC14" and len(e["XU1"].nodes) == 14


def test_sources_dc_value():
    n = read_netlist_text("t\nV1 a 0 DC 5 AC 1\nV2 b 0 3.3\nV3 c 0 SIN(0 1 1k)\nI1 d 0 dc=2m\n")
    e = by(n)
    assert e["V1"].value.si == 5 and e["V1"].params["ac"] == 1
    assert e["V2"].value.si == 3.3
    assert e["V3"].value is None and e["V3"].params["sin"] == "0 1 1k"
    assert e["I1"].value.si == pytest.approx(2e-3)


def test_flattening_names_ports_and_nesting():
    n = read_netlist(CORPUS / "rc_hier.cir")
    e = by(n)
    rs = e["X1/Xs/Rs"]
    assert rs.nodes == ("in", "X1/m") and rs.instance_path == ("X1", "X1/Xs")
    assert e["X1/Xt/Rs"].nodes == ("X1/m", "out")
    assert e["X1/Xs/Rb"].nodes == ("vcc", "X1/m")
    assert e["X1/Xs/Cs"].nodes == ("X1/m", "0")
    assert "stage" in n.subcircuit_names and "filt" in n.subcircuit_names
    assert e["C9"].value.si == pytest.approx(1e-6)  # continuation line
    assert e["X1/Xs/Rs"].location.line == 14


def test_ground_globals_and_zero_port():
    n = read_netlist(CORPUS / "globals.cir")
    e = by(n)
    assert e["Vs"].nodes == ("vcc", "0")          # GND is ground
    assert e["R1"].nodes == ("c", "0")             # gnd is ground
    assert e["X1/Ra"].nodes == ("vcc", "a")       # .global net stays global
    assert e["X3/R1"].nodes == ("c", "0")         # a `0` port stays ground
    assert n.global_nets == ("vcc",)


def test_case_canonicalisation_to_first_spelling():
    n = read_netlist_text("t\nR1 VCC a 1k\nR2 vcc A 1k\nX1 vcc sub\n.subckt SUB p\nR1 p 0 1\n.ends\n"
                          "D1 a 0 DMod\nD2 a 0 dmod\n.model dmod D\n")
    e = by(n)
    assert e["R2"].nodes == ("VCC", "a")
    assert e["X1/R1"].nodes == ("VCC", "0")
    assert e["D2"].model == "DMod" and list(n.models) == ["DMod"]
    assert n.subcircuit_names == ("sub",)  # first seen on the X1 line


def test_params_order_free_and_subckt_scopes():
    n = read_netlist(CORPUS / "params.cir")
    e = by(n)
    assert e["R1"].value.si == pytest.approx(4400) and e["R1"].value.text == "{rtot}"
    assert e["C1"].value.si == pytest.approx(0.5e-6)
    assert e["V1"].value.si == 5
    assert e["X1/R1"].value.si == pytest.approx(10e3)     # instance override
    assert e["X1/R3"].value.si == pytest.approx(20e3)     # default using an override
    assert e["X1/R2"].value.si == pytest.approx(5e3)      # local .param
    assert e["X2/R1"].value.si == pytest.approx(1e3)      # header default
    assert e["X2/R3"].value.si == pytest.approx(2e3)


def test_letter_digit_inside_param_keeps_both_readings():
    n = read_netlist_text("t\n.param rp=4k7\nR1 a b {rp}\n")
    assert by(n)["R1"].value.si == 4700 and by(n)["R1"].value.spice_si == 4000


def test_includes_and_library_sections():
    n = read_netlist(CORPUS / "includes.cir")
    e = by(n)
    assert e["X1/R1"].value.si == pytest.approx(4700)
    assert n.models["dfast"].params["is"] == pytest.approx(1e-14)  # section "typical"
    assert "R_never" not in e
    assert [Path(f).name for f in n.files] == ["includes.cir", "parts.inc", "models.lib"]
    assert e["X1/R1"].location.file.endswith("parts.inc")


def test_keep_as_part_callback():
    text = "t\nX1 a b opamp\nX2 a b filt\n.subckt opamp p q\nR1 p q 1\n.ends\n" \
           ".subckt filt p q\nR1 p q 1\n.ends\n"
    n = read_netlist_text(text, keep_as_part=lambda name: name.lower() == "opamp")
    e = by(n)
    assert e["X1"].kind == "X" and e["X1"].model == "opamp" and e["X1"].nodes == ("a", "b")
    assert "X2/R1" in e and "X2" not in e


def test_skipped_directives_and_letters():
    text = ("t\n.tran 1u 1m\n.option reltol=1e-3\n.control\nrun\nplot v(a)\n.endc\n"
            "A1 a b amod\nR1 a 0 1k\n.end\nR2 a 0 1k\n")
    n = read_netlist_text(text)
    assert [s.name for s in n.skipped] == ["tran", "option", "control"]
    messages = [d.message for d in n.diagnostics]
    assert any(".end" in m for m in messages)
    # ngspice reads after .end too; an XSPICE A device is an element like any other
    assert {e.designator for e in n.elements} == {"A1", "R1", "R2"}
    assert by(n)["A1"].nodes == ("a", "b") and by(n)["A1"].model == "amod"


def test_unknown_instance_param_warns():
    n = read_netlist_text("t\nX1 a sub foo=1\n.subckt sub p params: r=1\nR1 p 0 {r}\n.ends\n")
    assert any("foo" in d.message for d in n.diagnostics)


def test_netlist_location_columns():
    n = read_netlist_text("t\n   R1 a b 1k\n\tC1 a 0 1n\n")
    assert (by(n)["R1"].location.line, by(n)["R1"].location.column) == (2, 4)
    assert by(n)["C1"].location.column == 2
