"""The dialects real decks use, each read with its usual meaning (issue 12, item 3).

Meanings: the ngspice manual (expressions and built-in functions, `.func`,
`.if`, POLY/TABLE/VALUE controlled sources, XSPICE `A` lines, VDMOS), the
PSpice reference for its digital `U` primitives (from memory), and what
ngspice-39 prints for the same lines (`listing expand`, observed; the
corpus agreement tests in test_ngspice_agreement.py hold the inventories).
Expected values are worked by hand beside each case.
"""

import math

import pytest

from drc.netlist.expressions import ExpressionError, compile_expression, evaluate
from drc.netlist.reader import read_netlist_text


def by(netlist):
    return {e.designator: e for e in netlist.elements}


def value(text, functions=None, **scope):
    return evaluate(compile_expression(text), {k: (v, v) for k, v in scope.items()},
                    functions)[0]


# ---------------------------------------------------------------- expressions

@pytest.mark.parametrize("text, expected", [
    ("1 + a * {b}", 1 + 2 * 3),            # braces group like parentheses
    ("{a}*{b}", 6), ("a > 1 ? 1k : 2k", 1000), ("a < 1 ? 1k : 2k", 2000),
    ("a == 2 && b != 2", 1), ("a == 3 || !(b == 3)", 0), ("a >= 2", 1), ("a <= 1", 0),
    ("ternary_fcn(a > 1, 10, 20)", 10), ("if(0, 10, 20)", 20),
    ("agauss(1k, 0.1k, 3)", 1000), ("gauss(1k, 0.1, 3)", 1000), ("aunif(1k, 100)", 1000),
    ("unif(1k, 0.1)", 1000), ("limit(1k, 100)", 1000), ("mc(4.7k, 0.05)", 4700),
    ("gauss(0.1)", 0), ("flat(5)", 0),
    ("limit(7, 0, 5)", 5), ("limit(-1, 0, 5)", 0),               # the 3-argument clamp
    ("1k*(1+0.001*(TEMPER-27))", 1000), ("temp", 27), ("pi", math.pi),
    ("ln(exp(2))", 2), ("sgn(-3)", -1), ("int(2.7)", 2), ("nint(2.5)", 2), ("floor(-1.5)", -2),
    ("ceil(1.2)", 2), ("u(1)", 1), ("uramp(-2)", 0), ("atan2(1, 1)", math.pi / 4),
    ("pwr(-2, 2)", 4), ("pwrs(-2, 2)", -4), ("table(1.5, 1, 10, 2, 20)", 15),
    ("table(5, 1, 10, 2, 20)", 20),
    ("a > 1 ? 1/(a-2) + 1 : 0", None),     # the branch not taken is not evaluated...
])
def test_expression_dialect(text, expected):
    if expected is None:
        with pytest.raises(ExpressionError, match="division by zero"):
            value(text, a=2, b=3)
        assert value(text.replace("a > 1", "a > 5"), a=2, b=3) == 0   # ...and here it is not
        return
    assert value(text, a=2, b=3) == pytest.approx(expected)


@pytest.mark.parametrize("text, words", [
    ("V(in)*2", "circuit quantity"), ("I(Vsense)*1k", "circuit quantity"),
    ("v(Net-(R1-Pad2), 0)", "circuit quantity"), ("time*2", "circuit quantity"),
    ("ddt(x)", "depends on the circuit"), ("rand()", "on chance"),
])
def test_behavioural_values_are_not_evaluated(text, words):
    with pytest.raises(ExpressionError) as info:
        value(text, x=1)
    assert info.value.behavioural and words in info.value.message


def test_user_functions_and_their_limits():
    n = read_netlist_text("t\n.func dbl(x) {2*x}\n.func add(x, y) = x + y + k\n.param k=1\n"
                          ".param c={dbl(add(2, 3))}\nR1 a 0 {c}\nR2 a 0 {add(1,1)}\n"
                          ".func loop(x) {loop(x)+1}\nR3 a 0 {loop(1)}\nR4 a 0 {nofunc(1)}\n")
    e = by(n)
    assert e["R1"].value.si == 2 * (2 + 3 + 1) and e["R2"].value.si == 3
    assert "more than 64 deep" in e["R3"].problem   # bounded, and not the whole board
    assert "unknown function 'nofunc'" in e["R4"].problem


def test_a_bare_parameter_name_is_a_value():
    n = read_netlist_text("t\n.param rval=4k7 vsup=5\nR1 a b rval\nV1 vcc 0 vsup\n"
                          "R2 a b r=rval*2\nR3 a b nosuch\n")
    e = by(n)
    assert e["R1"].value.si == 4700 and e["R1"].value.spice_si == 4000
    assert e["V1"].value.si == 5 and e["R2"].value.si == 9400
    assert "undefined parameter 'nosuch'" in e["R3"].problem


def test_behavioural_values_leave_the_element_unevaluated():
    n = read_netlist_text("t\nR1 a b R=V(c)*1k\nC1 a 0 {I(V1)*1n}\nB1 a 0 V=V(c)*2\n"
                          "E1 e 0 VALUE={V(c)*2}\n")
    e = by(n)
    assert "circuit quantity" in e["R1"].problem and e["R1"].nodes == ("a", "b")
    assert "circuit quantity" in e["C1"].problem
    # behavioural sources are read as what they are (their expression kept as text)
    assert e["B1"].problem is None and e["B1"].params["v"] == "V(c)*2"
    assert e["E1"].problem is None and e["E1"].params["value"] == "{V(c)*2}"


# ---------------------------------------------------------------- .if blocks

def test_if_blocks_at_the_top_level_read_only_the_branch_that_holds():
    # ngspice-39 reads R11 1k and no R12 for this block (observed, listing expand).
    text = ("t\n.param a=2\n.if (a == 2)\nR11 n1 0 1k\n.include missing.lib\n.elseif (a == 3)\n"
            "R11 n1 0 3k\n.else\nR11 n1 0 2k\nR12 n1 0 2k\n.endif\n")
    n = read_netlist_text(text)
    assert [(e.designator, e.value.si) for e in n.elements] == [("R11", 1000)]
    n = read_netlist_text(text.replace("a=2", "a=5"))
    assert [(e.designator, e.value.si) for e in n.elements] == [("R11", 2000), ("R12", 2000)]
    # the branch not read is not read at all: no note about its library
    assert not [d for d in n.diagnostics if d.group == "library-not-read"]


def test_if_blocks_inside_a_subcircuit_are_decided_per_instance():
    text = ("t\n.subckt cell p params: fast=0\n.if (fast)\nR1 p 0 1k\n.param rr=10\n.else\n"
            "R1 p 0 10k\n.param rr=20\n.endif\nR2 p 0 {rr}\n.ends\nX1 a cell fast=1\nX2 b cell\n")
    e = by(read_netlist_text(text))
    assert (e["X1/R1"].value.si, e["X1/R2"].value.si) == (1000, 10)
    assert (e["X2/R1"].value.si, e["X2/R2"].value.si) == (10_000, 20)


def test_if_using_a_parameter_defined_later_is_decided_when_flattening():
    e = by(read_netlist_text("t\n.if (late > 1)\nR1 a 0 1k\n.else\nR1 a 0 2k\n.endif\n"
                             ".param late=2\n"))
    assert e["R1"].value.si == 1000


def test_unbalanced_blocks_are_located_warnings():
    n = read_netlist_text("t\n.endif\n.else\n.if 1\nR1 a 0 1k\n")
    assert [(d.location.line, d.message.split(";")[0]) for d in n.diagnostics] == [
        (2, ".endif without .if"), (3, ".else without .if"),
        (4, ".if block has no .endif at the end of the file")]
    assert [e.designator for e in n.elements] == ["R1"]


# ---------------------------------------------------------------- element lines

def test_controlled_sources_poly_table_value():
    # Node lists as ngspice-39 expands them (E1: in, 0, n1, 0 are its control nodes).
    n = read_netlist_text("t\nE1 e1 0 POLY(2) in 0 n1 0 0 1 1\nF1 f1 0 POLY(2) V1 V2 0 1 1\n"
                          "G1 g1 0 TABLE {V(in)} = (0,0) (5,1m)\nE2 e2 0 VALUE = {V(in)*2}\n"
                          "H1 h1 0 Vsense 1k\nE3 e3 0 poly (1) in 0 0 2\n")
    e = by(n)
    assert e["E1"].nodes == ("e1", "0", "in", "0", "n1", "0") and e["E1"].params["poly"] == 2
    assert e["F1"].nodes == ("f1", "0") and e["F1"].params["controls"] == "V1 V2"
    assert e["G1"].nodes == ("g1", "0") and e["G1"].params["table"] == "{V(in)} = (0,0) (5,1m)"
    assert e["E2"].nodes == ("e2", "0")
    assert e["H1"].value.si == 1000 and e["H1"].params["control"] == "Vsense"
    assert e["E3"].nodes == ("e3", "0", "in", "0")
    assert not n.diagnostics


def test_parenthesised_source_specifications():
    e = by(read_netlist_text("t\nV1 in 0 (PWL 0 0 1m 5) (AC 1v)\nV2 a 0 PWL (0 0 1m 5)\n"
                             "V3 b 0 DC 3.3 (SIN 0 1 1k)\n"))
    assert e["V1"].params["pwl"] == "0 0 1m 5" and e["V1"].params["ac"] == 1
    assert e["V2"].params["pwl"] == "0 0 1m 5"
    assert e["V3"].value.si == 3.3 and e["V3"].params["sin"] == "0 1 1k"


def test_double_quoted_strings():
    n = read_netlist_text('t\n.model src1 d_source(input_file = "clk.stim")\n'
                          '.subckt sub p params: file="x y.txt" r=1k\nR1 p 0 {r}\n.ends\n'
                          'X1 a sub params: file="a b.txt" r=2k\nX2 a part file="c d.txt"\n'
                          '.include "lib with blanks/cells.lib"\n')
    e = by(n)
    assert n.models["src1"].params["input_file"] == "clk.stim"
    assert e["X1/R1"].value.si == 2000 and e["X2"].params["file"] == "c d.txt"


def test_three_terminal_mosfets_and_more():
    n = read_netlist_text("t\nM1 d g s vd\n.model vd VDMOS\nM2 d g s b nch w=1u\n"
                          ".model nch NMOS\nM3 d g s b nch\nM4 d g s e b nch\n")
    e = by(n)
    assert e["M1"].nodes == ("d", "g", "s") and e["M1"].model == "vd"
    assert e["M2"].nodes == ("d", "g", "s", "b") and e["M2"].params["w"] == pytest.approx(1e-6)
    assert e["M4"].nodes == ("d", "g", "s", "e", "b")
    assert not n.diagnostics


def test_xspice_and_u_lines():
    n = read_netlist_text("t\nA1 [in clk] y nand1\nA2 y ~yb inv1\nA3 %v(in) %vd(o1 o2) gain1\n"
                          "A4 [a NULL b] %d c dff1\nU1 in mid 0 urc1 l=1m n=4\n"
                          "U2 NAND(2) $G_DPWR $G_DGND a b y D0_GATE IO_STD\n"
                          "U3 INV $G_DPWR $G_DGND y yb D0_GATE IO_STD IO_LEVEL=0\n")
    e = by(n)
    assert e["A1"].nodes == ("in", "clk", "y") and e["A1"].model == "nand1"
    assert e["A2"].nodes == ("y", "yb")
    assert e["A3"].nodes == ("in", "o1", "o2") and e["A3"].model == "gain1"
    assert e["A4"].nodes == ("a", "b", "c")
    assert e["U1"].nodes == ("in", "mid", "0") and e["U1"].model == "urc1"
    assert e["U2"].nodes == ("$G_DPWR", "$G_DGND", "a", "b", "y")
    assert e["U2"].model == "D0_GATE" and e["U2"].params["primitive"] == "nand(2)"
    assert e["U3"].nodes == ("$G_DPWR", "$G_DGND", "y", "yb")
    assert e["U3"].params["io_model"] == "IO_STD"


def test_couplings_name_inductors_and_relays_get_a_hint():
    n = read_netlist_text("t\nL1 a b 1u\nL2 c d 1u\nK1 L1 L2 0.9\nK2 L1 L9 0.9\n"
                          "K3 coil 0 com no RELAY_SPDT\nK4 a b 0.5\nK5 L1 L2 k=0.2\n")
    e = by(n)
    assert e["K1"].problem is None and e["K1"].params["inductors"] == ("L1", "L2")
    assert e["K5"].value.si == 0.2
    assert "L9 is not an inductor" in e["K2"].problem and "relay" not in e["K2"].problem
    assert "relay" in e["K3"].problem and e["K3"].nodes == ("coil", "0", "com", "no")
    assert e["K3"].model == "RELAY_SPDT"
    assert "a, b are not inductors" in e["K4"].problem and "relay" in e["K4"].problem
    assert e["K4"].nodes == ("a", "b")


def test_ends_naming_another_subcircuit_closes_the_open_one():
    n = read_netlist_text("t\n.subckt inner p\nR1 p 0 1k\n.ends outer\nX1 a inner\n")
    assert [e.designator for e in n.elements] == ["X1/R1"]
    assert [d.location.line for d in n.diagnostics] == [4]
    assert "names another subcircuit" in n.diagnostics[0].message


def test_continuation_lines_holding_only_a_comment():
    # ngspice-39 reads `+;note` and `+ $ note` as comments (observed)
    n = read_netlist_text("t\nR1 a 0\n+ 1k\n+;note\n+ $ note\n+ // note\nR2 a 0 2k\n")
    assert [(e.designator, e.value.si) for e in n.elements] == [("R1", 1000), ("R2", 2000)]
    assert not n.diagnostics


def test_one_argument_lib_is_a_whole_file_include(write):
    write("p/cells.lib", ".subckt cell a\nR1 a 0 1k\n.ends\n")
    write("p/sect.lib", ".lib typ\nR7 x 0 7\n.endl\n")
    top = write("p/top.cir", "t\n.lib cells.lib\n.lib sect.lib typ\n.lib local\nR8 y 0 8\n"
                             ".endl\nX1 n cell\n")
    from drc.netlist.reader import read_netlist
    n = read_netlist(top)
    # `.lib local ... .endl` is a section defined here (not read straight through)
    assert sorted(e.designator for e in n.elements) == ["R7", "X1/R1"]
    assert not n.diagnostics


def test_many_transistors_whose_model_is_not_read_are_one_warning():
    lines = ["t", '.lib "C:\\Program Files\\Sim\\lib\\standard.bjt"']
    lines += [f"Q{k} c{k} b{k} 0 2N3904" for k in range(5000)]
    n = read_netlist_text("\n".join(lines) + "\n", "b.cir")
    assert [d.group for d in n.diagnostics] == ["library-not-read", "model-not-defined"]
    grouped = n.diagnostics[1]
    assert grouped.count == 5000 and grouped.location.line == 3
    assert grouped.message.startswith("Q0: model 2N3904 is not defined")
