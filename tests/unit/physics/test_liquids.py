"""The bundled liquids (vpkit.physics.liquids): names, aliases and CAS numbers people type.

Expected values: the names and CAS numbers of Poling et al. (2001), App. A."""


import pytest

from vpkit.errors import InputError
from vpkit.physics.liquids import canonical_name, liquids


def test_aliases():
    assert canonical_name("Isopropanol") == "2-propanol"
    assert canonical_name("67-64-1") == "acetone"
    assert len(liquids()) >= 12
    with pytest.raises(InputError, match="no reference"):
        canonical_name("unobtainium")


@pytest.mark.parametrize("typed,name", [("ethyl_acetate", "ethyl acetate"), ("IPA", "2-propanol"),
                                        ("isopropanol", "2-propanol"), ("Ethyl alcohol", "ethanol"),
                                        ("H2O", "water"), ("propan-1-ol", "1-propanol"),
                                        ("141-78-6", "ethyl acetate")])
def test_names_people_type(typed, name):
    """Synonyms and CAS numbers as in the Poling et al. (2001) table and common usage."""
    assert canonical_name(typed) == name
