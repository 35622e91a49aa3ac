"""Contact classes: name patterns, forms and defaults."""

import pytest

MATCHES = [
    # name, class, form, terminals
    ("TACTILE", "tactile", "SPST-NO", 2),
    ("tactile_6mm", "tactile", "SPST-NO", 2),
    ("SW_PUSH", "tactile", "SPST-NO", 2),
    ("SW_Push_Dual", "tactile", "SPST-NO", 2),
    ("PUSHBUTTON", "tactile", "SPST-NO", 2),
    ("SW_PUSH_SPDT", "tactile", "SPDT", 3),
    ("KEY", "key", "SPST-NO", 2),
    ("KEYSWITCH_MX", "key", "SPST-NO", 2),
    ("TOGGLE", "toggle", "SPST-NO", 2),
    ("TOGGLE_SPDT", "toggle", "SPDT", 3),
    ("SW_SPDT", "toggle", "SPDT", 3),
    ("SLIDE_SPDT", "slide", "SPDT", 3),
    ("SW_DIP_x08", "dip", "SPST-NO", 2),
    ("DIP4", "dip", "SPST-NO", 2),
    ("REED", "reed", "SPST-NO", 2),
    ("REED_NC", "reed", "SPST-NC", 2),
    ("SNAP_ACTION", "snap", "SPST-NO", 2),
    ("LIMIT_SW_NC", "snap", "SPST-NC", 2),
    ("MICROSWITCH", "snap", "SPST-NO", 2),
    ("RELAY", "relay", "SPST-NO", 2),
    ("RELAY_SPDT", "relay", "SPDT", 3),
    ("RELAY_POWER_NO", "relay-power", "SPST-NO", 2),
    ("ENCODER", "encoder", "SPST-NO", 2),
]

NO_MATCH = ["74HC14", "R", "OPAMP", "IC_KEYPAD", "XENCODER", "MY_TACTILE"]


@pytest.mark.parametrize("name,cls,form,terminals", MATCHES, ids=[m[0] for m in MATCHES])
def test_contact_patterns(library, name, cls, form, terminals):
    match = library.contact_class_for(name)
    assert match is not None, name
    assert (match.contact_class.name, match.form, match.terminal_count) == (cls, form, terminals)


@pytest.mark.parametrize("name", NO_MATCH)
def test_names_that_are_not_contacts(library, name):
    assert library.contact_class_for(name) is None


def test_terminal_count_sets_the_form_when_the_name_does_not(library):
    assert library.contact_class_for("TOGGLE", terminals=3).form == "SPDT"
    assert library.contact_class_for("TOGGLE", terminals=2).form == "SPST-NO"
    # A name that says the form wins over the count (the caller reports a mismatch).
    assert library.contact_class_for("REED_NC", terminals=2).form == "SPST-NC"
    assert library.contact_class_for("TOGGLE_SPDT", terminals=2).terminal_count == 3


def test_bounce_defaults_are_a_few_ms(library):
    # common practice, no source: a switch bounces for at most a few ms, noisy
    # push-buttons for up to about 10-15 ms; relays and toggles up to 20 ms.
    for cls in library.contact_classes.values():
        assert 1e-3 <= cls.bounce_s <= 20e-3, cls.name
    # components-and-contacts.md: reed bounce under about 1 ms -> shortest default.
    reed = library.contact_classes["reed"].bounce_s
    assert reed == min(c.bounce_s for c in library.contact_classes.values())


def test_wetting_current_only_where_the_class_sets_one(library):
    # from memory / common practice: silver power contacts about 10-100 mA;
    # gold-plated signal parts have no minimum worth a rule.
    classes = library.contact_classes
    assert classes["relay-power"].wetting_a == pytest.approx(10e-3)
    for name in ("tactile", "key", "dip", "reed", "relay", "encoder"):
        assert classes[name].wetting_a is None, name
    for cls in classes.values():
        assert cls.bounce_source
        assert (cls.wetting_a is None) == (cls.wetting_source is None)
        assert cls.rating_a is None or cls.rating_source


def test_lookups_are_cached(library):
    assert library.contact_class_for("SW_PUSH") is library.contact_class_for("SW_PUSH")
    assert library.resolve_part("74HC14") is library.resolve_part("74HC14")
