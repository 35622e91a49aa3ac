"""slow-edge on a plain input whose family records no transition limit: fail closed.

A slow RC edge into a plain LVX, 4000B or LVCMOS input is no safer than into a
plain HC input; that the limit is not recorded means the edge was not checked,
which the gate must say (a finding), never pass in silence. An edge within the
strictest limit recorded for any family passes whatever the part's own limit.

Check values: the RC law by hand (*Lessons In Electric Circuits*, Vol. I,
ch. 16): a capacitor charging through R towards Vf crosses a threshold Vth at a
rate dV/dt = (Vf - Vth) / (R C), so its edge rate is R C / (Vf - Vth) in s/V.
Tolerances as rules/limits.toml states them (R ±5 %, C ±20 %, rails ±5 %).
"""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

from drc.library.catalogue import load_library
from drc.pipeline import check_netlist_text


def _deck(part: str, r: str = "10k", c: str = "100n", vcc: str = "3.3") -> str:
    return (f"* pull-up and a capacitor at a plain input\nV1 vcc 0 DC {vcc}\nR1 vcc in {r}\n"
            f"SW1 in 0 TACTILE\nC1 in 0 {c}\n"
            f"XU1 in y1 0 y2 0 y3 0 y4 0 y5 0 y6 0 vcc {part}\n.end\n")


def _slow(findings, edge: str | None = None):
    return [f for f in findings if f.rule == "slow-edge" and (edge is None or f.message.startswith(edge))]


def test_a_slow_release_into_a_plain_input_without_a_recorded_limit_is_a_finding():
    _, results, findings = check_netlist_text(_deck("74LVX04"))
    assert results[0].receiver_electrical.transition_limit_s_per_v is None  # LVX: none recorded
    [f] = _slow(findings, "release")
    assert f.severity == "error" and f.limit is None and f.contact == "SW1"
    # The release charges C1 through R1 towards the rail. By hand, over the tolerance box
    # and any threshold between 30 % and 70 % of the rail (JESD8-style CMOS levels):
    # fastest rate 9.5k x 80n / 3.465 V = 0.219 ms/V; slowest 10.5k x 120n / (0.3 x 3.135 V)
    # = 1.34 ms/V. The rule reads the slowest corner's rate.
    assert 0.219e-3 <= f.measured.value <= 1.34e-3
    assert f.measured.value == 1.0 / results[0].edges["release"].slowest_slope_v_per_s


def test_the_same_stage_into_a_schmitt_input_of_a_family_without_a_limit_is_not_a_slow_edge():
    # The 4000B family records no gate-input limit, but the 40106 is its Schmitt inverter.
    _, results, findings = check_netlist_text(_deck("CD40106B", vcc="5"))
    assert results[0].receiver_electrical.schmitt
    assert _slow(findings) == []


def test_an_edge_within_the_strictest_recorded_limit_passes_without_one():
    # 470 ohm and 4.7 pF: slowest release 493.5 x 5.64 pF / (3.135 V - 0.7 x 3.465 V)
    # = 3.6 ns/V by hand, inside the strictest recorded limit (8 ns/V); the press goes
    # through the bare contact, faster still.
    _, _, findings = check_netlist_text(_deck("74LVX04", r="470", c="4.7p"))
    assert _slow(findings) == []


def test_the_stand_in_limit_is_the_strictest_any_family_records():
    lib = load_library()
    stand_in = lib.limits["transition_limit_unknown"].value
    strictest = min(lim for fam in lib.families.values()
                    for v in (fam.supply_min, fam.supply_max)
                    if (lim := fam.transition_limit_at(v)) is not None)
    assert stand_in <= strictest * (1 + 1e-12)
    assert stand_in == strictest  # not stricter than needed either


def test_the_gate_fails_on_it(tmp_path):
    deck = tmp_path / "lvx_panel.cir"
    deck.write_text(_deck("74LVX04"), encoding="utf-8")
    got = subprocess.run([sys.executable, "-m", "drc.cli", "check", str(deck), "--format", "json",
                          "--no-fixes"], capture_output=True, text=True, cwd=tmp_path)
    assert got.returncode == 1, got.stderr
    board = json.loads(got.stdout)["boards"][0]
    slow = [f for f in board["findings"] if f["rule"] == "slow-edge"]
    assert slow and all(f["limit"] is None and f["severity"] == "error" for f in slow)


@pytest.mark.parametrize("part, vcc", [("74HC04", "5"), ("74LVX04", "3.3")])
def test_a_press_within_the_limit_does_not_stop_the_release_being_judged(part, vcc):
    # 1 nF at the pin, the contact straight across it: the press discharges C1 through the
    # contact's 0.1 ohm (tau 0.1 ns, far within any limit); the release charges it through
    # R1 10k (tau 10 us: 10.5k x 1.2n / (0.3 x 3.135 V) = 13.4 us/V at most, 8 us/(1.05 x 5 V)
    # = 1.5 us/V at least by the RC law), slower than HC's 117 ns/V and the 8 ns/V stand-in.
    _, _, findings = check_netlist_text(_deck(part, r="10k", c="1n", vcc=vcc))
    assert _slow(findings, "press") == []
    [release] = _slow(findings, "release")
    assert 1.5e-6 <= release.measured.value <= 13.4e-6
