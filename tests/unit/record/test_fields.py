"""The vocabulary of a run record (vpkit.record.fields): every quantity has a known kind
and every default uncertainty belongs to a quantity a run can give.

Expectations are the record's documented behaviour (ours, no source)."""

import vpkit
from vpkit.record.fields import DEFAULT_UNCERTAINTY, FIELDS, Entry
from vpkit.units import SI_UNITS


def test_every_quantity_has_a_known_kind_and_a_description():
    for name, (kind, required, text) in FIELDS.items():
        assert kind in ("text", "reading") or kind in SI_UNITS, name
        assert isinstance(required, bool) and text.strip(), name
    assert [n for n, (_, req, _) in FIELDS.items() if req] == [
        "liquid", "barometric_pressure", "room_temperature"]


def test_every_default_uncertainty_belongs_to_a_quantity():
    per_point = {"pressure"}  # the readings' own pressure column
    relative = {"liquid_density_relative"}
    for key, value in DEFAULT_UNCERTAINTY.items():
        key = key.removesuffix("_length")  # the same quantity when readings are lengths
        assert key in FIELDS or key in per_point | relative, key
        assert value > 0, key


def test_entries_compare_by_value_unit_and_uncertainty():
    assert Entry(100.2, "kPa", 0.1) == Entry(100.2, "kPa", 0.1)
    assert Entry(100.2, "kPa", 0.1) != Entry(100.2, "hPa", 0.1)
    assert vpkit.Entry is Entry
