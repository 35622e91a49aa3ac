"""VIH/VIL in rules/families.toml against the JEDEC standards' figures.

Each check value is the standard's widely used figure, recalled (from
memory), as families.md marks them; the standard is named beside each.
"""

import pytest

from drc.analysis.receiver import receiver_electrical

CASES = [
    # family, VCC, VIH min, VIL max, standard
    ("HC", 2.0, 1.5, 0.5, "JESD7A, from memory"),
    ("HC", 4.5, 3.15, 1.35, "JESD7A, from memory"),
    ("HC", 6.0, 4.2, 1.8, "JESD7A, from memory"),
    ("HCT", 4.5, 2.0, 0.8, "JESD7A, from memory"),
    ("HCT", 5.5, 2.0, 0.8, "JESD7A, from memory"),
    ("LVCMOS33", 3.3, 2.0, 0.8, "JESD8C, from memory"),
    ("LVCMOS33", 3.0, 2.0, 0.8, "JESD8C, from memory"),
    ("LVC", 3.3, 2.0, 0.8, "JESD8C, from memory"),
    ("LVCMOS25", 2.5, 1.7, 0.7, "JESD8-5, from memory"),
    ("LVC", 2.5, 1.7, 0.7, "JESD8-5, from memory"),
    ("LVCMOS18", 1.8, 0.65 * 1.8, 0.35 * 1.8, "JESD8-7, from memory (0.65/0.35 VDD)"),
    ("LVC", 1.8, 0.65 * 1.8, 0.35 * 1.8, "JESD8-7, from memory (0.65/0.35 VDD)"),
    ("4000B", 5.0, 3.5, 1.5, "JEDEC No. 13-B, from memory"),
    ("4000B", 10.0, 7.0, 3.0, "JEDEC No. 13-B, from memory"),
    ("4000B", 15.0, 11.0, 4.0, "JEDEC No. 13-B, from memory"),
]


@pytest.mark.parametrize("family,vcc,vih,vil,standard", CASES,
                         ids=[f"{c[0]}@{c[1]}V" for c in CASES])
def test_levels_follow_the_standard(library, family, vcc, vih, vil, standard):
    electrical = receiver_electrical(library, family, vcc, schmitt=False)
    assert electrical.vih_min == pytest.approx(vih, abs=1e-9), standard
    assert electrical.vil_max == pytest.approx(vil, abs=1e-9), standard
    # A plain input may switch anywhere in the band (electrical.py convention).
    assert electrical.rising_threshold == pytest.approx((vil, (vil + vih) / 2, vih)), standard


def test_jedec_sources_are_named_in_the_data(library):
    # The data names the standard its levels follow (brief: JEDEC values in families.toml).
    for family, standard in (("HC", "JESD7A"), ("HCT", "JESD7A"), ("LVCMOS33", "JESD8C"),
                             ("LVCMOS25", "JESD8-5"), ("LVCMOS18", "JESD8-7"),
                             ("4000B", "JEDEC No. 13-B")):
        source = library.family(family).source("vih_v")
        assert standard in source and "from memory" in source, (family, source)
