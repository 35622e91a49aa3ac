"""Forward design: proposed stages pass every stage rule at worst case, in IEC 60063 values."""

from __future__ import annotations

from dataclasses import replace

import eseries as oracle
import pytest

from drc.checks import run_stage_rules
from drc.design.forward import DesignRequest, design_stage
from tests.checks.builders import LIMITS, analysed, hc


def member(series, value):
    # IEC 60063 tables via the eseries package
    return any(abs(v - value) <= 1e-9 * value for v in oracle.erange(series, value / 2, value * 2))


@pytest.mark.parametrize("topology", ["pull-up", "pull-down"])
@pytest.mark.parametrize("series,eseries_key", [("E24", oracle.E24), ("E96", oracle.E96)])
def test_design_passes_and_uses_series_values(topology, series, eseries_key):
    d = design_stage(DesignRequest(5.0, "HC", True, 0.010, 0.100, series=series, topology=topology),
                     rx=hc(), limits=LIMITS)
    assert d.ok, d.reason
    assert member(eseries_key, d.pull.ohms) and member(eseries_key, d.series_resistor.ohms)
    assert member(oracle.E12, d.capacitor.farads)
    # Independent re-check: analyse the proposed stage afresh and run every stage rule.
    assert run_stage_rules(analysed(d.stage, hc()), LIMITS) == []
    for e in d.edges:
        assert e.fastest_s >= 0.010 and e.slowest_s <= 0.100
        assert e.fastest_s <= e.nominal_s <= e.slowest_s
    assert all(m.spare is not None and m.spare >= 0 for m in d.margins)


def test_design_with_a_given_capacitor():
    d = design_stage(DesignRequest(5.0, "HC", True, 0.010, 0.100, capacitor=1e-6), rx=hc(), limits=LIMITS)
    assert d.ok and d.capacitor.farads == pytest.approx(1e-6)


def test_plain_input_design_is_refused_honestly():
    d = design_stage(DesignRequest(5.0, "HC", False, 0.010, 0.100, design_budget=50), rx=hc(schmitt=False),
                     limits=LIMITS)
    assert not d.ok and "Schmitt" in d.reason and "NOT PASSING" in d.netlist_fragment()


def test_netlist_fragment_follows_our_conventions():
    d = design_stage(DesignRequest(5.0, "HC", True, 0.010, 0.100), rx=hc(), limits=LIMITS)
    lines = d.netlist_fragment().splitlines()
    assert lines[1] == "* passes every rule at worst case"
    assert lines[2] == "V1 vcc 0 DC 5"
    # The contact: a switch element ngspice reads, named a contact of its class by our annotation.
    assert lines[4] == "*@drc contact SW1 class=tactile" and lines[5] == "SW1 n1 0 sw1_ctl 0 TACTILE"
    r1, r2, c1 = (next(line for line in lines if line.startswith(p)) for p in ("R1 ", "R2 ", "C1 "))
    assert r1.startswith("R1 vcc n1 ") and r2.startswith("R2 n1 in ") and c1.startswith("C1 in 0 ")
    assert ".end" not in lines  # a fragment: `drc design --netlist` ends the whole netlist
    from drc.netlist.values import parse_value
    assert parse_value(r1.split()[3]).si == pytest.approx(d.pull.ohms)
    assert parse_value(c1.split()[3]).si == pytest.approx(d.capacitor.farads)
    assert not parse_value(r1.split()[3]).differs_from_spice


@pytest.mark.parametrize("contact_class", ["tactile", "reed", "relay-power", "toggle"])
def test_netlist_fragment_keeps_the_contact_class_asked_for(contact_class, tmp_path):
    # Reading the fragment back (with a 74HC14 on net 'in') gives the class and bounce asked for:
    # the bounce is the class's own from rules/contacts.toml, or the one given.
    from drc.library.catalogue import load_library
    from drc.pipeline import CheckOptions, check_board_in_memory
    lib = load_library()
    for bounce, given in ((lib.contact_classes[contact_class].bounce_s, False), (0.0035, True)):
        d = design_stage(DesignRequest(5.0, "HC", True, bounce, 0.100, contact_class=contact_class,
                                       bounce_given=given), rx=hc(), limits=LIMITS)
        board = tmp_path / f"{contact_class}{int(given)}.cir"
        board.write_text("* design read back\n" + d.netlist_fragment()
                         + "XU1 in out 0 0 0 0 0 0 0 0 0 0 0 vcc 74HC14\n.end\n", encoding="utf-8")
        results = check_board_in_memory(board, CheckOptions(propose_fixes=False)).results
        [result] = [r for r in results if r.stage.contact.designator == "SW1"]
        assert result.stage.contact.contact_class == contact_class
        assert result.stage.contact.bounce_s == pytest.approx(bounce)


def test_a_12_v_4000b_toggle_stage_has_a_passing_design():
    # Issue 13, item 3: with the receiver on the pulled-up rail, its thresholds are
    # those of the corner's VCC (one rail, one variable); pairing a high rail with
    # the nominal 12 V's thresholds left no passing design. The library's data
    # (rules/families.toml 4000B, rules/contacts.toml toggle 20 ms) and limits.
    from drc.library.catalogue import load_library
    lib = load_library()
    limits = {k: v.value for k, v in lib.limits.items()}
    req = DesignRequest(rail_v=12.0, family="4000B", schmitt=True, bounce_s=0.020,
                        latency_s=limits["latency_limit"])
    res = design_stage(req)
    assert res.ok, res.reason
    assert not run_stage_rules(res.result, {**limits, "latency_limit": req.latency_s})
    # The designed receiver is supplied from the designed rail.
    assert res.stage.circuit.supply_of_receiver() == "vcc"
    assert res.result.receiver_electrical.tracks_supply


def test_drc_design_finds_the_12_v_4000b_toggle_stage():
    # The same request through the command line, as a user asks it: exit 0 on a pass.
    from tests.cli.helpers import drc
    proc = drc("design", "--rail", "12V", "--family", "4000B", "--contact", "toggle")
    assert proc.returncode == 0, proc.stdout + proc.stderr
    assert "not passing" not in proc.stdout


@pytest.mark.parametrize("topology", ["pull-up", "pull-down"])
@pytest.mark.parametrize("contact_class", ["tactile", "relay-power", "dip"])
def test_the_fragment_reads_back_as_the_designed_stage_with_its_verdict(contact_class, topology, tmp_path):
    # The design is analysed as a board is (module docstring): checking the fragment (with a
    # 74HC14 on net 'in') must give the stage designed, contact included (its class's wetting
    # minimum and rating from rules/contacts.toml, the switch's terminals, named by the
    # annotation), and the design's verdict. relay-power's 10 mA wetting minimum against the
    # 1 mA pull current budget: no values pass both, and the design must not say it passes.
    from drc.library.catalogue import load_library
    from drc.pipeline import CheckOptions, check_board_in_memory
    lib = load_library()
    d = design_stage(DesignRequest(5.0, "HC", True, lib.contact_classes[contact_class].bounce_s, 0.100,
                                   topology=topology, contact_class=contact_class))
    board = tmp_path / "design.cir"
    board.write_text("* design read back\n" + d.netlist_fragment()
                     + "XU1 in out 0 0 0 0 0 0 0 0 0 0 0 vcc 74HC14\n.end\n", encoding="utf-8")
    check = check_board_in_memory(board, CheckOptions(propose_fixes=False))
    [result] = [r for r in check.results if r.stage.contact.designator == "SW1"]
    got, want = result.stage, d.stage
    assert replace(got.contact, location=want.contact.location) == want.contact
    assert (got.kind, set(got.parts), got.circuit.throws, got.circuit.rails) == \
        (want.kind, set(want.parts), want.circuit.throws, want.circuit.rails)
    assert set(got.circuit.resistors) == set(want.circuit.resistors)
    assert got.circuit.capacitors == want.circuit.capacitors
    assert set(d.failing_rules) == {f.rule for f in check.findings if f.contact == "SW1"}
    assert d.ok == (contact_class != "relay-power")
