"""The change log of reference values: each value from what to what, by whom, in which version."""

from __future__ import annotations

from model.reference import DEFAULT_REFERENCE
from model.store import Store
from model.store.changelog import default_value, reference_changes, shown


def test_change_log_lists_each_value_from_what_to_what(isolated_store):
    s = Store(isolated_store)
    s.save_overrides({"prices": {"oxygen_per_1000_l": 3.0}}, author="a")
    s.save_overrides({"prices": {"oxygen_per_1000_l": 4.0}, "agents": {"sevoflurane": {"mac40": 2.1}}}, author="b")
    s.save_overrides({}, note="back to built-in defaults", author="a")
    rows = [(c.version, c.author, c.path, c.old, c.new) for c in reference_changes(s.history("overrides", "dashboard"))]
    assert rows == [
        (3, "a", "agents.sevoflurane.mac40", 2.1, None),
        (3, "a", "prices.oxygen_per_1000_l", 4.0, None),
        (2, "b", "agents.sevoflurane.mac40", None, 2.1),
        (2, "b", "prices.oxygen_per_1000_l", 3.0, 4.0),
        (1, "a", "prices.oxygen_per_1000_l", None, 3.0),
    ]
    assert default_value(DEFAULT_REFERENCE, "agents.sevoflurane.mac40") == DEFAULT_REFERENCE.agents["sevoflurane"].mac40
    assert default_value(DEFAULT_REFERENCE, "gwp.user.sevoflurane") is None
    # The currency label is text, not a number.
    assert (
        shown(DEFAULT_REFERENCE, "prices.currency", None) == f"{DEFAULT_REFERENCE.prices.currency} (built-in default)"
    )
    assert shown(DEFAULT_REFERENCE, "prices.currency", "EUR") == "EUR"
    assert shown(DEFAULT_REFERENCE, "gwp.user.sevoflurane", None) == "none (built-in default)"


def test_change_log_shows_the_built_in_mac_set_a_change_replaced():
    # The default MAC set is Mapleson 1996's own values (docs/methods.md, Depth: age-adjusted MAC).
    assert default_value(DEFAULT_REFERENCE, "mac.set") == "mapleson_1996"
    assert shown(DEFAULT_REFERENCE, "mac.set", None) == "mapleson_1996 (built-in default)"
    assert shown(DEFAULT_REFERENCE, "mac.set", "prescribing_information") == "prescribing_information"
