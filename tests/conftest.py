import pytest
from cloakview.optics.materials import ConstantIndex, Material


@pytest.fixture
def glass_n15():
    """A non-dispersive n = 1.5 glass, the index of the textbook worked examples."""
    return Material("n1.5", ConstantIndex(1.5), 2.5, "textbook n = 1.5")


@pytest.fixture(autouse=True, scope="session")
def _job_cache(tmp_path_factory):
    """The test session's sweep cache, so the tests leave the user's cache alone."""
    with pytest.MonkeyPatch.context() as patch:
        patch.setenv("CLOAKVIEW_CACHE", str(tmp_path_factory.mktemp("cache")))
        yield
