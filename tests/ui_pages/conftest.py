"""Every page test (Streamlit AppTest) runs with a store file of its own."""

import pytest


@pytest.fixture(autouse=True)
def _own_store(isolated_store):
    return isolated_store
