import pytest
from helpers.office import require_office


@pytest.fixture(scope="session")
def office(tmp_path_factory):
    return require_office(tmp_path_factory)
