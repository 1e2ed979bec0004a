"""The Streamlit configuration shipped with the project keeps the hospital-network choices."""

import json
import subprocess
import sys
import tomllib
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
CONFIG = ROOT / ".streamlit" / "config.toml"


@pytest.fixture(scope="module")
def config() -> dict:
    return tomllib.loads(CONFIG.read_text(encoding="utf-8"))


def test_cross_site_protections_stay_on(config):
    assert config["server"]["enableXsrfProtection"] is True
    assert config["server"]["enableCORS"] is True
    # Nothing in the file relaxes them again (origin allow-lists, SameSite=None cookies).
    assert "corsAllowedOrigins" not in config["server"]
    assert config["server"].get("xsrfCookieSameSite", "lax") in ("lax", "strict")


def test_upload_limit_is_set_and_small(config):
    limit = config["server"]["maxUploadSize"]
    assert isinstance(limit, int) and not isinstance(limit, bool)
    # Streamlit's default is 200 MB; ours is deliberately smaller.
    assert limit in range(1, 51)


def test_usage_statistics_are_off(config):
    assert config["browser"]["gatherUsageStats"] is False


def test_no_reload_from_disk_and_no_developer_surface(config):
    assert config["server"]["runOnSave"] is False
    assert config["server"]["fileWatcherType"] == "none"
    assert config["server"]["enableAgentApi"] is False
    assert config["server"]["enableStaticServing"] is False
    assert config["server"]["headless"] is True
    assert config["server"]["address"] in ("localhost", "127.0.0.1")


def test_users_see_no_tracebacks_or_outside_links(config):
    assert config["client"]["showErrorDetails"] == "none"
    assert config["client"]["showErrorLinks"] is False
    assert config["client"]["toolbarMode"] == "viewer"


def test_streamlit_reads_every_setting_from_the_shipped_file(config):
    # Source: Streamlit's own configuration loader (streamlit.config), run from the project
    # folder as `streamlit run` is: each key must be an option it knows, with our value.
    flat = {f"{section}.{key}": value for section, table in config.items() for key, value in table.items()}
    code = (
        "import json, sys\n"
        "from streamlit import config\n"
        "config.get_config_options(force_reparse=True)\n"
        "keys = json.loads(sys.argv[1])\n"
        "out = {k: [k in config._config_options,\n"
        "           config.get_option(k) if k in config._config_options else None,\n"
        "           config._config_options[k].where_defined if k in config._config_options else None]\n"
        "       for k in keys}\n"
        "print(json.dumps(out))\n"
    )
    done = subprocess.run(
        [sys.executable, "-c", code, json.dumps(sorted(flat))],
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=120,
        check=True,
    )
    seen = json.loads(done.stdout.strip().splitlines()[-1])
    for key, value in flat.items():
        known, actual, where = seen[key]
        assert known, f"{key} is not a Streamlit option"
        assert actual == value, key
        assert Path(where).resolve() == CONFIG, key


def test_upload_guard_uses_the_configured_limit(config):
    from model.io.uploads import upload_limit_bytes

    assert upload_limit_bytes() == config["server"]["maxUploadSize"] * 1024 * 1024


def _luminance(hex_colour: str) -> float:
    # Source: W3C, Web Content Accessibility Guidelines 2.1, definition of relative luminance.
    h = hex_colour.lstrip("#")
    lin = [
        (c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4)
        for c in (int(h[i : i + 2], 16) / 255 for i in (0, 2, 4))
    ]
    return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2]


def _hue(hex_colour: str) -> float:
    import colorsys

    h = hex_colour.lstrip("#")
    r, g, b = (int(h[i : i + 2], 16) / 255 for i in (0, 2, 4))
    return colorsys.rgb_to_hls(r, g, b)[0] * 360


def test_theme_is_calm_and_our_own_with_red_kept_for_danger(config):
    """Defect 17 of issue 12: the stock red primary colour made buttons read as danger."""
    from model.present.palette import DANGER, PALETTE, PRIMARY, TEXT

    theme = config["theme"]
    assert theme["base"] == "light"
    # The accent is the house colour, the same in the charts (model/present/palette.py,
    # re-exported as model.present.palette).
    assert theme["primaryColor"].lower() == PRIMARY.lower()
    assert theme["textColor"].lower() == TEXT.lower()
    assert [c.lower() for c in theme["chartCategoricalColors"]] == [c.lower() for c in PALETTE]
    # Not red: hue away from red (0/360 degrees) by more than 60 degrees (common practice, no source).
    hue = _hue(theme["primaryColor"])
    assert 60 < hue < 300, hue
    # Streamlit's stock accent (#c53948, its light-theme default) is gone, and red stays for danger.
    assert theme["primaryColor"].lower() != "#c53948"
    assert _hue(DANGER) < 15 or _hue(DANGER) > 345
    assert "redColor" not in theme
    # White text on a primary button stays readable: WCAG 2.1 AA asks for a contrast ratio of
    # at least 4.5:1 for normal text.
    assert (1.05) / (_luminance(theme["primaryColor"]) + 0.05) >= 4.5
    assert (_luminance(theme["backgroundColor"]) + 0.05) / (_luminance(theme["textColor"]) + 0.05) >= 7
