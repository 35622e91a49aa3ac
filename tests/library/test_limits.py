"""Default rule limits: values, units and sources."""

import pytest

from drc.library.entries import Limit

EXPECTED = {
    # key: (value, unit); all common practice, no source, unless the file says otherwise
    "bounce_margin": (1.0, "1"),
    "min_closure": (1e-6, "s"),
    "latency_limit": (0.100, "s"),
    "leakage_headroom_margin": (0.1, "VCC"),
    "pull_current_budget": (1e-3, "A"),
    "resistance_min": (1e3, "ohm"),     # the 1 k-50 k window: common practice, no source
    "resistance_max": (50e3, "ohm"),
    "tolerance_resistor": (0.05, "1"),
    "tolerance_capacitor": (0.20, "1"),
    "tolerance_rail": (0.05, "1"),
    "contact_closed_resistance": (0.1, "ohm"),
    "diode_forward_voltage": (0.6, "V"),
    "diode_on_resistance": (10.0, "ohm"),
}


@pytest.mark.parametrize("key", sorted(EXPECTED))
def test_limit_values(library, key):
    value, unit = EXPECTED[key]
    limit = library.limits[key]
    assert isinstance(limit, Limit)
    assert (limit.value, limit.unit) == (pytest.approx(value), unit)
    assert library.limit(key) == pytest.approx(value)


def test_every_limit_is_documented(library):
    for limit in library.limits.values():
        assert limit.description.strip() and limit.source.strip(), limit.key
    assert library.limits["resistance_min"].source == "common practice, no source"


def test_latency_warn_below_limit(library):
    assert library.limit("latency_warn") < library.limit("latency_limit")


def test_unknown_limit_names_the_key(library):
    with pytest.raises(KeyError, match="no_such_limit"):
        library.limit("no_such_limit")
