import pytest
from cloakview.optics.materials import ConstantIndex, Material


@pytest.fixture
def glass_n15():
    """A non-dispersive n = 1.5 glass, the index of the textbook worked examples."""
    return Material("n1.5", ConstantIndex(1.5), 2.5, "textbook n = 1.5")
