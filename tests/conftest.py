import pytest
from cloakview.optics.materials import ConstantIndex, Material


@pytest.fixture
def glass_n15():
    """A non-dispersive n = 1.5 glass, the index of the textbook worked examples."""
    return Material("n1.5", ConstantIndex(1.5), 2.5, "textbook n = 1.5")


@pytest.fixture(autouse=True)
def _job_cache(tmp_path_factory, monkeypatch):
    """Every test gets its own sweep cache, so no test reuses another's results."""
    monkeypatch.setenv("CLOAKVIEW_CACHE", str(tmp_path_factory.mktemp("cache")))
