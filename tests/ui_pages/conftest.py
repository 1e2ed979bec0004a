"""Every page test (Streamlit AppTest) runs with a store file of its own, and runs app.py as a server does."""

import pytest
from streamlit.runtime.pages_manager import PagesManager


@pytest.fixture(autouse=True)
def _own_store(isolated_store):
    return isolated_store


@pytest.fixture(autouse=True)
def _entry_point_runs_every_time(monkeypatch):
    """Every run of ``AppTest.from_file("app.py")`` runs app.py, as a server does.

    AppTest forgets before each run that ``st.navigation`` has been called, and with a
    ``pages/`` folder beside app.py Streamlit then runs the page's file alone, as its older
    folder-based navigation did: after the first run app.py (its sidebar, its navigation,
    ``ui.state``) never ran again, and ``ui.common._leave_pages_folder_mode``'s rerun hid it.
    A server forgets nothing: its first run of app.py calls ``st.navigation``, which ends
    that mode for the life of the process. Ending it as each run starts does the same.
    """
    init = PagesManager.__init__

    def init_as_a_server_runs(self, *args, **kwargs):
        init(self, *args, **kwargs)
        PagesManager.uses_pages_directory = False

    monkeypatch.setattr(PagesManager, "__init__", init_as_a_server_runs)
