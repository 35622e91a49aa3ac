"""bounce-window on first-edge stages: a capacitor straight across the contact.

Check values: the RC law by hand (*Lessons In Electric Circuits*, Vol. I,
ch. 16) for the recharge after the closure: at the fastest corner of the
10 kΩ / 1 µF stage below, R 9.5 kΩ, C 0.8 µF, the rail at either end and
VT+ at the 74HC14's minimum at that rail, t = R·C·ln(Vf / (Vf - VT+ min))
with Vf the rail lifted by R × 1 µA of input leakage (the closure leaves the
pin at tens of µV). The 74HC14's thresholds are the library's
(rules/families.toml).
"""

from __future__ import annotations

import math

import pytest

from drc.config.settings import Config
from drc.pipeline import check_netlist_text


def _deck(r: str, c: str, part: str = "74HC14") -> str:
    return (f"* C across the contact\nV1 vcc 0 DC 5\nR1 vcc in {r}\nSW1 in 0 TACTILE\nC1 in 0 {c}\n"
            f"XU1 in y1 0 y2 0 y3 0 y4 0 y5 0 y6 0 vcc {part}\n.end\n")


def _bounce(findings):
    return [f for f in findings if f.rule == "bounce-window"]


def test_capacitor_across_the_contact_recharging_within_the_bounce_fails_by_the_closure_reading():
    _, results, findings = check_netlist_text(_deck("10k", "1u"))
    press = [f for f in _bounce(findings) if f.message.startswith("press")]
    assert len(press) == 1
    f = press[0]
    assert "closure-and-opening reading" in f.message and "first-edge" in f.message
    rx = results[0].receiver_electrical
    # VT+ follows the rail (the 74HC14 is supplied from vcc); the input leakage (1 uA at most)
    # flows into the pin and lifts the final level by R x 1 uA. Every rail end worked by hand:
    hand = min(9.5e3 * 0.8e-6 * math.log((v + 9.5e3 * 1e-6) / (v + 9.5e3 * 1e-6 - rx.at_supply(v).rising[0]))
               for v in (4.75, 5.25))
    assert f.measured.value == pytest.approx(hand, rel=1e-4)  # the closure leaves tens of uV
    assert f.limit.value == pytest.approx(10e-3)
    # The press edge itself crosses within nanoseconds: the old reading's figure is in the text.
    assert results[0].edges["press"].fastest_s < 1e-6


def test_capacitor_across_the_contact_that_cannot_recharge_within_the_bounce_passes():
    # 100 kOhm x 1 uF: the recharge to VT+ takes tens of ms; the release edge too.
    _, _, findings = check_netlist_text(_deck("100k", "1u"))
    assert not _bounce(findings)


def test_a_plain_input_keeps_the_time_to_threshold_reading():
    _, _, findings = check_netlist_text(_deck("100k", "1u", part="74HC04"))
    press = [f for f in _bounce(findings) if f.message.startswith("press")]
    assert len(press) == 1 and "time-to-threshold reading" in press[0].message
    assert "closure-and-opening" not in press[0].message and "None" not in press[0].message  # no reading to quote
    assert press[0].measured.value < 1e-6


def test_the_minimum_closure_is_a_limit():
    # A 1 ns minimum closure does not empty the capacitor (tau about 80 ns): the recharge
    # starts higher and is faster than with the default 1 us.
    _, _, default = check_netlist_text(_deck("10k", "1u"))
    _, _, short = check_netlist_text(_deck("10k", "1u"), config=Config(limits={"min_closure": 1e-9}))
    a = next(f for f in _bounce(default) if f.message.startswith("press"))
    b = next(f for f in _bounce(short) if f.message.startswith("press"))
    assert b.measured.value < a.measured.value
    assert "from the crossing threshold itself" in b.message  # not crossed after 1 ns: slow path


def test_min_closure_is_read_from_the_config_with_its_unit(tmp_path):
    from drc.errors import ConfigError
    from drc.pipeline import load_config_file
    (tmp_path / "drc.toml").write_text('[limits]\nmin-closure = "20 us"\n', encoding="utf-8")
    assert load_config_file(tmp_path / "drc.toml").limits["min_closure"] == pytest.approx(20e-6)
    (tmp_path / "drc.toml").write_text('[limits]\nmin-closure = "20 V"\n', encoding="utf-8")
    with pytest.raises(ConfigError, match="min-closure"):
        load_config_file(tmp_path / "drc.toml")


def test_the_batch_step_reads_what_the_first_edge_solver_reads():
    # bounce_window.pull_backs (the batch step's solver, imported when first used) against
    # first_edge.pull_back of each edge alone, and the RC law by hand, with a minimum closure
    # other than the default (20 ns, two closure time constants; 1 us empties the capacitor).
    from drc.analysis import first_edge
    from drc.board.stage import Capacitor, Resistor, Throw
    from drc.caching import clear_caches
    from drc.checks import bounce_window
    from tests.analysis.builders import receiver_electrical, stage
    st = stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role="pull"),),
               capacitors=(Capacitor("C1", "rx", "0", 100e-9),), throws=(Throw("rx", "0", "pressed", 0.1),))
    rx = receiver_electrical(leak_high=(0.0, 0.0), leak_low=(0.0, 0.0))
    clear_caches()
    press, release = bounce_window.pull_backs([(st, rx, "press"), (st, rx, "release")], 20e-9)
    # By hand, nominal: the closure is 5 V x 0.1 / (10k + 0.1) behind 10k || 0.1 ohm (tau 10 ns);
    # after 20 ns it leaves v1 = v_th + (5 - v_th) e^(-20 ns / tau) (about 0.68 V); the opening
    # recharges through 10k x 100 nF towards 5 V, to VT+ typ 2.9 V: t = RC ln((5 - v1) / (5 - 2.9)).
    tau = 10e3 * 0.1 / (10e3 + 0.1) * 100e-9
    v_th = 5.0 * 0.1 / (10e3 + 0.1)
    v1 = v_th + (5.0 - v_th) * math.exp(-20e-9 / tau)
    assert press.min_closure_s == 20e-9 and press.closure_tau_s == pytest.approx(tau, rel=1e-9)
    assert press.nominal_s == pytest.approx(10e3 * 100e-9 * math.log((5.0 - v1) / (5.0 - 2.9)), rel=1e-9)
    for got, edge in ((press, "press"), (release, "release")):
        clear_caches()
        alone = first_edge.pull_back(st, rx, edge, 20e-9)
        assert (got.edge, got.bounce_state, got.at_threshold) == (alone.edge, alone.bounce_state, alone.at_threshold)
        for name in ("left_v", "opposite_v", "fastest_s", "nominal_s", "bounce_tau_s"):
            assert getattr(got, name) == pytest.approx(getattr(alone, name), rel=1e-9), name
