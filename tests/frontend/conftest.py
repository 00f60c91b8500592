import pytest

from . import scenario as scenario_module


@pytest.fixture
def scenario(db):
    return scenario_module.build()


@pytest.fixture
def login(client):
    def _login(user):
        client.force_login(user)
        return client

    return _login
