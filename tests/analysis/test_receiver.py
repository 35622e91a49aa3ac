"""receiver_electrical(): thresholds, leakage and limits of one pin at its VCC.

(drc/analysis/receiver.py, read from the rules library: it lives beside the
analysis tests so that the analysis package's mutation run judges it too.)"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from drc.analysis.receiver import ReceiverElectrical, receiver_electrical, receiver_notes
from drc.library.catalogue import Library, load_library
from drc.library.entries import AbsMaxInput, SupplyOutOfRange, UnknownFamily


@pytest.fixture(scope="module")
def library() -> Library:
    return load_library()


def lerp(x, x0, y0, x1, y1):
    return y0 + (x - x0) * (y1 - y0) / (x1 - x0)


def test_hc_levels_interpolate_linearly_between_jedec_points(library):
    # JESD7A, from memory: VIH 1.5 V at 2.0 V and 3.15 V at 4.5 V; VIL 0.5 / 1.35 V.
    e = receiver_electrical(library, "HC", 3.0, schmitt=False)
    assert e.vih_min == pytest.approx(lerp(3.0, 2.0, 1.5, 4.5, 3.15))
    assert e.vil_max == pytest.approx(lerp(3.0, 2.0, 0.5, 4.5, 1.35))
    # Between 4.5 V and 6.0 V the points are 3.15/4.2 and 1.35/1.8: 0.7/0.3 VCC
    # at both ends, so 5.0 V gives the familiar 3.5 / 1.5 V (families.md Table 1).
    e5 = receiver_electrical(library, "HC", 5.0, schmitt=False)
    assert e5.vih_min == pytest.approx(3.5)
    assert e5.vil_max == pytest.approx(1.5)


def test_hc_transition_limit_converts_rise_time(library):
    # JESD7A, from memory: tr <= 500 ns at 4.5 V; families.md note 3:
    # 500 ns / (0.8 x 4.5 V) = about 139 ns/V.
    e = receiver_electrical(library, "HC", 4.5, schmitt=False)
    assert e.transition_limit_s_per_v == pytest.approx(500e-9 / (0.8 * 4.5))
    assert e.transition_limit_s_per_v == pytest.approx(139e-9, rel=0.01)
    # 1000 ns at 2.0 V and 400 ns at 6.0 V (JESD7A, from memory).
    assert receiver_electrical(library, "HC", 2.0, False).transition_limit_s_per_v == \
        pytest.approx(1000e-9 / 1.6)
    assert receiver_electrical(library, "HC", 6.0, False).transition_limit_s_per_v == \
        pytest.approx(400e-9 / 4.8)
    # Between table points the rise time interpolates, then converts at VCC.
    t5 = lerp(5.0, 4.5, 500e-9, 6.0, 400e-9)
    assert receiver_electrical(library, "HC", 5.0, False).transition_limit_s_per_v == \
        pytest.approx(t5 / (0.8 * 5.0))


def test_slope_limits_and_band_gaps(library):
    # from memory, typical of the family: AHC 100 ns/V at 3.3 V, 20 ns/V at 5 V.
    assert receiver_electrical(library, "AHC", 3.3, False).transition_limit_s_per_v == \
        pytest.approx(100e-9)
    assert receiver_electrical(library, "AHC", 5.0, False).transition_limit_s_per_v == \
        pytest.approx(20e-9)
    # 4.0 V lies between the bands: the stricter neighbour applies.
    assert receiver_electrical(library, "AHC", 4.0, False).transition_limit_s_per_v == \
        pytest.approx(20e-9)
    # from memory, typical of the family: AC 8 ns/V, LVC 10 ns/V.
    assert receiver_electrical(library, "AC", 5.0, False).transition_limit_s_per_v == \
        pytest.approx(8e-9)
    assert receiver_electrical(library, "LVC", 3.3, False).transition_limit_s_per_v == \
        pytest.approx(10e-9)
    # 4000B: no family-wide limit for gate inputs (from memory) -> None.
    assert receiver_electrical(library, "4000B", 5.0, False).transition_limit_s_per_v is None


def test_schmitt_inputs_have_no_transition_limit(library):
    assert receiver_electrical(library, "HC", 4.5, schmitt=True).transition_limit_s_per_v is None


def test_hc_schmitt_thresholds_at_table_points_and_between(library):
    # families.md Table 2 (HC14 class) widened to the widest range across makers
    # (families.md Table 4: "use the widest range across makers"), from memory:
    # VT+ min 1.55 V and VT- max 2.45 V at 4.5 V, VT- max 3.2 V at 6 V.
    e = receiver_electrical(library, "HC", 4.5, schmitt=True)
    assert e.rising_threshold == pytest.approx((1.55, (1.55 + 3.15) / 2, 3.15))
    assert e.falling_threshold == pytest.approx((0.9, (0.9 + 2.45) / 2, 2.45))
    e5 = receiver_electrical(library, "HC", 5.0, schmitt=True)
    assert e5.rising_threshold[0] == pytest.approx(lerp(5.0, 4.5, 1.55, 6.0, 2.1))
    assert e5.rising_threshold[2] == pytest.approx(lerp(5.0, 4.5, 3.15, 6.0, 4.2))
    assert e5.falling_threshold[0] == pytest.approx(lerp(5.0, 4.5, 0.9, 6.0, 1.2))
    assert e5.falling_threshold[2] == pytest.approx(lerp(5.0, 4.5, 2.45, 6.0, 3.2))
    # Every limit at least as wide as the HC14 row of families.md Table 2.
    table2 = {4.5: ((1.7, 3.15), (0.9, 2.0)), 6.0: ((2.1, 4.2), (1.2, 2.6)), 2.0: ((0.7, 1.5), (0.3, 0.9))}
    for vcc, ((p_lo, p_hi), (m_lo, m_hi)) in table2.items():
        t = receiver_electrical(library, "HC", vcc, schmitt=True)
        assert t.rising_threshold[0] <= p_lo + 1e-12 and t.rising_threshold[2] >= p_hi - 1e-12
        assert t.falling_threshold[0] <= m_lo + 1e-12 and t.falling_threshold[2] >= m_hi - 1e-12
    # The steady-level requirements follow the Schmitt outer limits.
    assert e5.high_required_v == e5.rising_threshold[2]
    assert e5.low_required_v == e5.falling_threshold[0]


def test_ls_schmitt_typicals(library):
    # families.md Table 2 (LS14 at 5 V), from memory, typical of the family.
    e = receiver_electrical(library, "LS", 5.0, schmitt=True)
    assert e.rising_threshold == pytest.approx((1.4, 1.6, 1.9))
    assert e.falling_threshold == pytest.approx((0.5, 0.8, 1.0))


def test_4000b_schmitt_at_10_v(library):
    # families.md Table 2 (4093B/40106B at 10 V), from memory, typical of the family.
    e = receiver_electrical(library, "4000B", 10.0, schmitt=True)
    assert (e.rising_threshold[0], e.rising_threshold[2]) == pytest.approx((4.6, 7.1))
    assert (e.falling_threshold[0], e.falling_threshold[2]) == pytest.approx((2.5, 5.2))


def test_derived_schmitt_bounds_where_only_outer_limits_are_known(library):
    # families.md: VT+ in [VT-min + VHmin, VT+max], VT- in [VT-min, VT+max - VHmin].
    # AHC14 class at 4.5 V (from memory): VT+max 3.15, VT-min 1.35, VHmin 0.4.
    e = receiver_electrical(library, "AHC", 4.5, schmitt=True)
    assert e.rising_threshold[0] == pytest.approx(1.35 + 0.4)
    assert e.rising_threshold[2] == pytest.approx(3.15)
    assert e.falling_threshold[0] == pytest.approx(1.35)
    assert e.falling_threshold[2] == pytest.approx(3.15 - 0.4)
    notes = receiver_notes(library, "AHC", 4.5, schmitt=True)
    assert any("derived" in n for n in notes)
    # MCU pins (common practice, no source): 0.7 / 0.3 VDD, VH >= 0.05 VDD.
    m = receiver_electrical(library, "MCU-3V3", 3.3, schmitt=True)
    assert m.rising_threshold == pytest.approx((0.35 * 3.3, 0.525 * 3.3, 0.7 * 3.3))
    assert m.falling_threshold == pytest.approx((0.3 * 3.3, 0.475 * 3.3, 0.65 * 3.3))


def test_schmitt_part_of_a_family_without_schmitt_data_falls_back_to_the_band(library):
    # Conservative fallback: VIL/VIH band, no hysteresis credited, and a note.
    for family, vcc in (("LVC", 3.3), ("AC", 5.0), ("4000UB", 5.0), ("ALS", 5.0)):
        assert not library.schmitt_data_known(family)
        plain = receiver_electrical(library, family, vcc, schmitt=False)
        e = receiver_electrical(library, family, vcc, schmitt=True)
        assert e.schmitt is True
        assert e.rising_threshold == plain.rising_threshold
        assert e.falling_threshold == plain.rising_threshold
        assert e.transition_limit_s_per_v is None
        assert any("no Schmitt threshold data" in n
                   for n in receiver_notes(library, family, vcc, schmitt=True))
    assert receiver_notes(library, "HC", 5.0, schmitt=True) == ()


def test_a_plain_input_without_a_known_transition_limit_carries_a_note(library):
    # Fail closed: slow-edge cannot judge a plain input of a family whose transition limit
    # families.toml does not record (LVX, 4000B, LVCMOS33: `transition_note` only), so the
    # receiver's caveats say so, naming the family; a family with a limit (HC, AC, LVC: a rise
    # time in families.toml) has nothing to say about a plain input.
    for family, vcc in (("LVX", 3.3), ("4000B", 10.0), ("LVCMOS33", 3.3)):
        assert receiver_electrical(library, family, vcc, schmitt=False).transition_limit_s_per_v is None
        notes = receiver_notes(library, family, vcc, schmitt=False)
        assert len(notes) == 1 and family in notes[0]
    for family, vcc in (("HC", 5.0), ("AC", 5.0), ("LVC", 3.3)):
        assert receiver_electrical(library, family, vcc, schmitt=False).transition_limit_s_per_v is not None
        assert receiver_notes(library, family, vcc, schmitt=False) == ()


def test_leakage_is_current_into_the_pin(library):
    # common practice, no source: about 20 uA IIH into an LS input, about
    # -0.4 mA IIL out of it (families.md Table 1, from memory).
    ls = receiver_electrical(library, "LS", 5.0, schmitt=False)
    assert ls.leak_high_a == pytest.approx((0.0, 20e-6))
    assert ls.leak_low_a == pytest.approx((-0.4e-3, 0.0))
    # families.md note 4: |IIL| x R < VIL max gives R < 2 kohm for LS.
    assert ls.vil_max / abs(ls.leak_low_a[0]) == pytest.approx(2000.0)
    # CMOS: +-1 uA over temperature at both levels (JESD7A, from memory).
    hc = receiver_electrical(library, "HC", 5.0, schmitt=False)
    assert hc.leak_high_a == pytest.approx((-1e-6, 1e-6))
    assert hc.leak_low_a == pytest.approx((-1e-6, 1e-6))


def test_abs_max_and_tolerance(library):
    # JESD7A, from memory: VCC + 0.5 V, not tolerant.
    hc = receiver_electrical(library, "HC", 5.0, False)
    assert (hc.abs_max_input_v, hc.tolerant) == (pytest.approx(5.5), False)
    # from memory, typical of the family: LVC 6.5 V and AHC 7.0 V, 5 V tolerant.
    lvc = receiver_electrical(library, "LVC", 3.3, False)
    assert (lvc.abs_max_input_v, lvc.tolerant) == (pytest.approx(6.5), True)
    assert receiver_electrical(library, "AHC", 3.3, False).abs_max_input_v == pytest.approx(7.0)
    # JESD8C, from memory: min(VDD + 0.5 V, 4.6 V).
    assert receiver_electrical(library, "LVCMOS33", 3.3, False).abs_max_input_v == \
        pytest.approx(3.8)
    assert AbsMaxInput(None, 0.5, 4.6).at(4.3) == pytest.approx(4.6)
    # 4000B: VDD + 0.5 V, +-10 mA clamp (from memory).
    assert library.family("4000B").clamp_current_a == pytest.approx(10e-3)


def test_supply_outside_the_family_range_is_a_clear_error(library):
    with pytest.raises(SupplyOutOfRange) as info:
        receiver_electrical(library, "HC", 7.0, False)
    assert (info.value.family, info.value.vcc_min, info.value.vcc_max) == ("HC", 2.0, 6.0)
    assert "7 V" in str(info.value) and "HC" in str(info.value)
    with pytest.raises(SupplyOutOfRange):
        receiver_electrical(library, "LS", 3.3, False)
    # A VCC at the edge, reached by arithmetic, is inside.
    receiver_electrical(library, "LS", 5.0 * 1.05, False)


def test_family_lookup_is_case_insensitive_and_reports_close_names(library):
    assert library.family("hc").name == "HC"
    assert library.family("74hct").name == "HCT"
    assert library.family("lvttl").name == "LVCMOS33"
    with pytest.raises(UnknownFamily) as info:
        library.family("HCX")
    assert isinstance(info.value, KeyError)
    assert "HC" in info.value.matches or "HCT" in info.value.matches
    assert "HCX" in str(info.value)
    with pytest.raises(UnknownFamily):
        receiver_electrical(library, "NOPE", 5.0, False)


def _families():
    return sorted(load_library().families)


@settings(max_examples=300, deadline=None)
@given(name=st.sampled_from(_families()), position=st.floats(0.0, 1.0), schmitt=st.booleans())
def test_every_family_gives_ordered_figures_across_its_supply(name, position, schmitt):
    library = load_library()
    family = library.family(name)
    vcc = family.supply_min + position * (family.supply_max - family.supply_min)
    e = receiver_electrical(library, name, vcc, schmitt)
    assert isinstance(e, ReceiverElectrical)
    for low, typ, high in (e.rising_threshold, e.falling_threshold):
        assert 0.0 < low <= typ <= high <= vcc + 1e-9
    assert e.falling_threshold[0] <= e.rising_threshold[0]
    assert e.falling_threshold[2] <= e.rising_threshold[2]
    assert 0.0 < e.vil_max < e.vih_min <= vcc
    assert e.abs_max_input_v > vcc
    for lo, hi in (e.leak_high_a, e.leak_low_a):
        assert lo <= hi
    limit = e.transition_limit_s_per_v
    assert limit is None or (math.isfinite(limit) and limit > 0)


def test_single_gate_lvc_schmitt_parts_have_their_own_thresholds(library):
    # families.md Table 4 (LVC single-gate Schmitt '1G14 '1G17 '2G14), from memory:
    # at 3.0-3.6 V VT+ 1.3-2.2 V and VT- 0.6-1.55 V; at 5 V VT+ 2.0-3.2 V, VT- 1.0-2.2 V.
    for part in ("1G14", "1G17", "2G14"):
        e = receiver_electrical(library, "LVC", 3.3, schmitt=True, part_type=part)
        assert (e.rising_threshold[0], e.rising_threshold[2]) == pytest.approx((1.3, 2.2))
        assert (e.falling_threshold[0], e.falling_threshold[2]) == pytest.approx((0.6, 1.55))
        assert e.hysteresis_min_v == pytest.approx(0.4)
        # They run at 5 V, outside the multi-gate family's 1.65-3.6 V.
        e5 = receiver_electrical(library, "LVC", 5.0, schmitt=True, part_type=part)
        assert (e5.rising_threshold[0], e5.rising_threshold[2]) == pytest.approx((2.0, 3.2))
        assert (e5.falling_threshold[0], e5.falling_threshold[2]) == pytest.approx((1.0, 2.2))
        assert any("thresholds and supply range of their own" in n
                   for n in receiver_notes(library, "LVC", 5.0, True, part_type=part))
    assert library.family("LVC").supply_range_for("1G14") == (1.65, 5.5)
    with pytest.raises(SupplyOutOfRange):
        receiver_electrical(library, "LVC", 5.0, schmitt=True)  # a multi-gate LVC part
    # Other part types of the family keep the family's data (no Schmitt table: the band).
    plain = receiver_electrical(library, "LVC", 3.3, schmitt=True, part_type="14")
    assert plain.rising_threshold == receiver_electrical(library, "LVC", 3.3, False).rising_threshold


def test_hct_extra_supply_current_per_ttl_level_input(library):
    # from memory (rechecked): HCT about 0.36 mA max at 25 C, about 0.49 mA over
    # temperature per unit load; the 1.5 mA figure is the ACT class's.
    assert library.family("HCT").ttl_high_extra_supply_a == pytest.approx(0.5e-3)
    assert library.family("ACT").ttl_high_extra_supply_a == pytest.approx(1.5e-3)


def test_thresholds_follow_the_supply_across_its_tolerance(library):
    # families.md Table 2 (HC14 class), the VT+ min line from 2.0 V (0.7 V) to
    # 4.5 V (1.55 V): at 3.3 V -5 % (3.135 V) it reads 1.164 V, below the
    # 1.21 V at the nominal 3.3 V (issue 13, item 2).
    e = receiver_electrical(library, "HC", 3.3, True, supply_tolerance=0.05)
    assert e.tracks_supply
    lo = e.at_supply(3.3 * 0.95)
    assert lo.rising[0] == pytest.approx(lerp(3.135, 2.0, 0.7, 4.5, 1.55))
    assert e.at_supply(3.3).rising == pytest.approx(e.rising_threshold)
    # A table point inside the band is a sample point (the curve bends there).
    e45 = receiver_electrical(library, "HC", 4.5, True, supply_tolerance=0.1)
    assert 4.5 in [p.vcc for p in e45.supply_points]
    assert e45.supply_breaks(4.05, 4.95) == (4.5,)
    # Between two sample points the curve is linear: interpolation is exact.
    mid = e45.at_supply(4.2)
    assert mid.rising[0] == pytest.approx(lerp(4.2, 2.0, 0.7, 4.5, 1.55))


@pytest.mark.parametrize("schmitt", [False, True])
def test_thresholds_across_the_supply_band_follow_the_jedec_points(library, schmitt):
    # HC at 4.5 V +-10 % (4.05-4.95 V) spans the 4.5 V point of the JESD7A tables (from memory:
    # VIH 1.5/3.15/4.2 V and VIL 0.5/1.35/1.8 V at 2.0/4.5/6.0 V; the HC14 class VT+ and VT- rows
    # of rules/families.toml): linear between the points, the band's end value beyond it.
    e = receiver_electrical(library, "HC", 4.5, schmitt=schmitt, supply_tolerance=0.1)
    assert [p.vcc for p in e.supply_points] == pytest.approx([4.05, 4.5, 4.95])
    pts = [2.0, 4.5, 6.0]

    def hand(v, values):
        return float(np.interp(min(max(v, 4.05), 4.95), pts, values))

    for v in (3.9, 4.05, 4.2, 4.5, 4.6, 4.95, 5.2):
        got = e.at_supply(v)
        assert got.vih_min == pytest.approx(hand(v, [1.5, 3.15, 4.2]), abs=1e-12)
        assert got.vil_max == pytest.approx(hand(v, [0.5, 1.35, 1.8]), abs=1e-12)
        if schmitt:
            assert got.rising[0] == pytest.approx(hand(v, [0.7, 1.55, 2.1]), abs=1e-12)
            assert got.rising[2] == pytest.approx(hand(v, [1.5, 3.15, 4.2]), abs=1e-12)
            assert got.falling[0] == pytest.approx(hand(v, [0.3, 0.9, 1.2]), abs=1e-12)
            assert got.falling[2] == pytest.approx(hand(v, [1.0, 2.45, 3.2]), abs=1e-12)
        else:  # a plain input: the VIL-VIH band, its midpoint typical
            lo, hi = hand(v, [0.5, 1.35, 1.8]), hand(v, [1.5, 3.15, 4.2])
            assert got.rising == pytest.approx((lo, 0.5 * (lo + hi), hi), abs=1e-12)
            assert got.falling == got.rising
    assert e.supply_breaks(4.05, 4.95) == pytest.approx((4.5,))
    assert e.supply_breaks(4.5, 4.95) == ()


def test_hand_built_thresholds_hold_at_any_supply():
    # No supply points: the figures given are the figures, whatever the VCC asked about.
    e = ReceiverElectrical("T", 5.0, True, (2.0, 2.9, 3.5), (0.9, 1.6, 2.2), 3.5, 1.5, (0.0, 1e-6),
                           (-1e-6, 0.0), 5.5, False, None)
    got = e.at_supply(4.2)
    assert (got.vcc, got.rising, got.falling, got.vih_min, got.vil_max) == \
        (5.0, (2.0, 2.9, 3.5), (0.9, 1.6, 2.2), 3.5, 1.5)
    assert not e.tracks_supply


def test_a_band_edge_inside_the_supply_range_is_a_step(library):
    # LVC at 2.7 V +-5 % (2.565-2.835 V) spans the edge of two JESD8 bands (rules/families.toml,
    # from memory): VIH 1.7 V and VIL 0.7 V up to 2.7 V (JESD8-5), 2.0 V and 0.8 V from 2.7 V
    # (JESD8C); at 2.7 V itself the more demanding neighbour (VIH 2.0 V, VIL 0.7 V). Either side
    # of the edge each band's value holds: a step, not a ramp across the range.
    e = receiver_electrical(library, "LVC", 2.7, schmitt=False, supply_tolerance=0.05)
    for v, vih, vil in ((2.6, 1.7, 0.7), (2.7 - 1e-3, 1.7, 0.7), (2.7, 2.0, 0.7), (2.7 + 1e-3, 2.0, 0.8),
                        (2.8, 2.0, 0.8)):
        got = e.at_supply(v)
        assert got.vih_min == pytest.approx(vih, abs=1e-12) and got.vil_max == pytest.approx(vil, abs=1e-12)
