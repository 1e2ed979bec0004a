"""Reference data against outside sources, provenance of every value, and user overrides."""

import math

import globalwarmingpotentials as gwp_tables
import pytest
from molmass import Formula

from model.base.errors import InputError
from model.reference import (
    AGENT_FIELDS,
    AGENTS,
    AIR_O2_FRACTION,
    COMMON_PRACTICE,
    DEFAULT_MAC_SET,
    DEFAULT_REFERENCE,
    FROM_MEMORY,
    GWP_SOURCES,
    INVENTED,
    MAC_SETS,
    PUBLISHED,
    USER,
    VOLATILES,
    Reference,
    load_settings,
)

FORMULAS = {
    "sevoflurane": "C4H3F7O",
    "desflurane": "C3H2F6O",
    "isoflurane": "C3H2ClF5O",
    "halothane": "C2HBrClF3",
    "nitrous_oxide": "N2O",
    "oxygen": "O2",
}


@pytest.mark.parametrize("name, formula", FORMULAS.items())
def test_molar_mass_matches_molmass(name, formula):
    assert AGENTS[name].formula == formula
    # Source: molmass (PyPI), Formula(...).mass from IUPAC standard atomic weights.
    assert AGENTS[name].molar_mass == pytest.approx(Formula(formula).mass, rel=1e-4)


def test_air_molar_mass_matches_its_composition():
    # Source: molmass (PyPI) for N2, O2, Ar and CO2; dry-air mole fractions from the
    # US Standard Atmosphere 1976 (N2 0.78084, O2 0.20946, Ar 0.00934, CO2 ~0.00036), from memory.
    air = (
        0.78084 * Formula("N2").mass
        + 0.20946 * Formula("O2").mass
        + 0.00934 * Formula("Ar").mass
        + 0.00036 * Formula("CO2").mass
    )
    assert AGENTS["air"].molar_mass == pytest.approx(air, rel=1e-3)
    # Source: US Standard Atmosphere 1976 (O2 20.946 % of dry air), from memory.
    assert AIR_O2_FRACTION == pytest.approx(0.20946)


# (our GWP source, the package's table key)
GWP_TABLES = [("ar6_gwp100", "AR6GWP100"), ("ar6_gwp20", "AR6GWP20"), ("ar5_gwp100", "AR5GWP100")]
# (our agent name, the IPCC name as carried by the package)
IPCC_NAMES = [("nitrous_oxide", "N2O"), ("desflurane", "HFE236ea2"), ("isoflurane", "HCFE235da2")]


@pytest.mark.parametrize("source, table", GWP_TABLES)
@pytest.mark.parametrize("agent, ipcc_name", IPCC_NAMES)
def test_gwp_matches_ipcc_tables(source, table, agent, ipcc_name):
    # Source: globalwarmingpotentials (PyPI), its `data` dict of the IPCC tables.
    expected = gwp_tables.data[table][ipcc_name]
    assert DEFAULT_REFERENCE.gwp(agent, source) == pytest.approx(expected, rel=1e-9)


@pytest.mark.filterwarnings("ignore:open_text is deprecated:DeprecationWarning")
@pytest.mark.parametrize("source, table", GWP_TABLES)
def test_gwp_matches_ipcc_tables_as_frame(source, table):
    frame = gwp_tables.as_frame()
    for agent, ipcc_name in IPCC_NAMES:
        # Source: globalwarmingpotentials (PyPI), as_frame() (the CSV the package ships).
        assert DEFAULT_REFERENCE.gwp(agent, source) == pytest.approx(frame.loc[ipcc_name, table])


def test_gwp_horizons_order_as_published():
    # Source: IPCC AR6 WG1 Ch. 7 (agents with lifetimes far below 100 years weigh more over
    # 20 years than over 100 years); common practice, no source for the comparison itself.
    for agent in VOLATILES:
        assert DEFAULT_REFERENCE.gwp(agent, "ar6_gwp20") > DEFAULT_REFERENCE.gwp(agent, "ar6_gwp100")


# Textbook values (docs/methods.md, Reference values), from memory, with a tolerance
# that catches a typo or a wrong unit but not the spread between handbooks.
TEXTBOOK_TABLE = {
    "sevoflurane": dict(liquid_density=1.52, svp_20c=21, blood_gas=0.65, vaporizer_max=8),
    "desflurane": dict(liquid_density=1.465, svp_20c=89, blood_gas=0.42, vaporizer_max=18),
    "isoflurane": dict(liquid_density=1.496, svp_20c=32, blood_gas=1.4, vaporizer_max=5),
    "halothane": dict(liquid_density=1.86, svp_20c=32, blood_gas=2.4, vaporizer_max=5),
}


@pytest.mark.parametrize("agent", TEXTBOOK_TABLE)
def test_agent_values_match_textbook_table(agent):
    for fname, expected in TEXTBOOK_TABLE[agent].items():
        # Source: textbook values (docs/methods.md, Reference values), from memory.
        assert getattr(AGENTS[agent], fname) == pytest.approx(expected, rel=0.05), fname


def test_boiling_points_order_and_values():
    # Source: product labelling of each agent, from memory (22.8, 58.6, 48.5, 50.2 °C).
    expected = {"desflurane": 22.8, "sevoflurane": 58.6, "isoflurane": 48.5, "halothane": 50.2}
    for agent, bp in expected.items():
        assert AGENTS[agent].boiling_point == pytest.approx(bp, abs=0.5)


def test_svp_matches_mmhg_values_on_labels():
    # Source: product labelling, from memory: 157, 669, 238, 243 mmHg at 20 °C; 1 mmHg =
    # 0.133322 kPa (definition of the mmHg).
    mmhg = {"sevoflurane": 157, "desflurane": 669, "isoflurane": 238, "halothane": 243}
    for agent, p in mmhg.items():
        assert AGENTS[agent].svp_20c == pytest.approx(p * 0.133322, rel=0.01)


def test_nitrous_oxide_mac_from_mapleson():
    # Source: Mapleson WW, Br J Anaesth 1996;76:179-85, abstract (N2O MAC40 104 %).
    assert AGENTS["nitrous_oxide"].mac40 == pytest.approx(104.0)


def test_default_mac_values_are_the_age_equations_own():
    # Source: Mapleson WW, Br J Anaesth 1996;76:179-85, abstract (PubMed 8777094): MAC at 40
    # of the age equation: halothane 0.75, isoflurane 1.17, sevoflurane 1.80, desflurane 6.6,
    # N2O 104 %.
    mapleson = {"halothane": 0.75, "isoflurane": 1.17, "sevoflurane": 1.80, "desflurane": 6.6, "nitrous_oxide": 104.0}
    assert DEFAULT_REFERENCE.mac_set == DEFAULT_MAC_SET == "mapleson_1996"
    for agent, value in mapleson.items():
        assert AGENTS[agent].mac40 == pytest.approx(value, rel=1e-12), agent
        assert AGENTS[agent].values["mac40"].basis == PUBLISHED


def test_mac_set_from_the_settings_changes_every_mac_and_says_so():
    ref = DEFAULT_REFERENCE.with_overrides({"mac": {"set": "prescribing_information"}}, "s.toml")
    # Source: sevoflurane prescribing information (2.1 % at 40 y in O2); desflurane
    # prescribing information as stated by Gold MI et al., Anesthesiology 1993;79:710-4
    # (6.0 % at 31-65 y in O2).
    assert ref.agents["sevoflurane"].mac40 == pytest.approx(2.1)
    assert ref.agents["desflurane"].mac40 == pytest.approx(6.0)
    assert ref.mac_set == "prescribing_information"
    assert "prescribing information" in ref.mac_label
    assert "Mapleson 1996" in DEFAULT_REFERENCE.mac_label
    in_use = [r for r in ref.table() if r["field"].endswith("(in use)")]
    assert {r["item"] for r in in_use} == {AGENTS[a].label for a in MAC_SETS["prescribing_information"].values}


def test_own_mac_stays_in_use_whichever_set_and_is_named():
    ref = DEFAULT_REFERENCE.with_overrides(
        {"mac": {"set": "prescribing_information"}, "agents": {"isoflurane": {"mac40": 1.2}}}, "s.toml"
    )
    assert ref.agents["isoflurane"].mac40 == 1.2
    assert ref.agents["isoflurane"].values["mac40"].default.value == pytest.approx(1.15)
    assert "your own MAC at 40 for Isoflurane" in ref.mac_label
    again = ref.with_mac_set("mapleson_1996")
    assert again.agents["isoflurane"].mac40 == 1.2
    assert again.agents["isoflurane"].values["mac40"].default.value == pytest.approx(1.17)


@pytest.mark.parametrize("bad", ["labels", 3, ""])
def test_unknown_mac_set_is_an_input_error_naming_the_sets(bad):
    with pytest.raises(InputError) as err:
        DEFAULT_REFERENCE.with_overrides({"mac": {"set": bad}}, "s.toml")
    assert "s.toml: mac.set" in str(err.value) and "mapleson_1996" in str(err.value)
    with pytest.raises(InputError, match="the only field of"):
        DEFAULT_REFERENCE.with_overrides({"mac": {"name": "mapleson_1996"}}, "s.toml")


def test_desflurane_svp_is_below_one_atmosphere_and_boils_near_room_temperature():
    # Source: ISO 2533 (1 atm = 101.325 kPa); desflurane labelling (boils at 22.8 °C), from memory.
    des = AGENTS["desflurane"]
    assert des.svp_20c < 101.325
    assert 20.0 < des.boiling_point < 25.0


def test_every_value_names_its_source():
    allowed = {PUBLISHED, FROM_MEMORY, COMMON_PRACTICE}
    for agent in AGENTS.values():
        for fname, v in agent.values.items():
            assert fname in AGENT_FIELDS
            assert v.source.strip(), (agent.name, fname)
            assert v.basis in allowed, (agent.name, fname, v.basis)
            assert v.unit == AGENT_FIELDS[fname][0]
    for src in GWP_SOURCES.values():
        for aname, v in src.values.items():
            assert aname in AGENTS
            assert v.source.strip()
            assert v.basis in allowed


def test_memory_values_say_so_in_their_source():
    for agent in AGENTS.values():
        for fname, v in agent.values.items():
            if v.basis == FROM_MEMORY:
                assert "from memory" in v.source, (agent.name, fname)
    for src in GWP_SOURCES.values():
        for aname, v in src.values.items():
            if v.basis == FROM_MEMORY:
                assert "from memory" in v.source or v.value is None, (src.key, aname)


def test_volatiles_have_every_field():
    for name in VOLATILES:
        values = AGENTS[name].values
        assert set(AGENT_FIELDS) <= set(values), name
        for fname in AGENT_FIELDS:
            assert values[fname].value is not None and math.isfinite(values[fname].value)


def test_default_prices_are_marked_invented():
    rows = [r for r in DEFAULT_REFERENCE.table() if r["field"].startswith("price")]
    assert rows and all(r["basis"] == INVENTED for r in rows)


def test_reference_table_has_a_source_on_every_row():
    rows = DEFAULT_REFERENCE.table()
    assert len(rows) > 60
    for r in rows:
        assert r["source"] and r["basis"]
        assert r["default"] is None


def test_halothane_has_no_sulbaek_andersen_value_and_says_what_to_do():
    with pytest.raises(InputError, match=r"gwp\.user"):
        DEFAULT_REFERENCE.gwp("halothane", "sulbaek_andersen_2012")


def test_agent_lookup_accepts_aliases_and_rejects_unknown():
    assert DEFAULT_REFERENCE.agent("N2O").name == "nitrous_oxide"
    assert DEFAULT_REFERENCE.agent(" Sevo ").name == "sevoflurane"
    with pytest.raises(InputError, match="allowed agents are"):
        DEFAULT_REFERENCE.agent("xenon")
    with pytest.raises(InputError, match="allowed volatile agents"):
        DEFAULT_REFERENCE.volatile("oxygen")


def test_unknown_gwp_source_names_the_allowed_ones():
    with pytest.raises(InputError, match="ar6_gwp100"):
        DEFAULT_REFERENCE.gwp("desflurane", "ar7")


# --- user overrides -----------------------------------------------------------------------


def test_override_replaces_value_and_keeps_default_with_its_source():
    ref = Reference().with_overrides(
        {
            "agents": {"sevoflurane": {"mac40": 2.0}},
            "gwp": {"ar6_gwp100": {"desflurane": 2500}},
            "prices": {"currency": "EUR", "bottle": {"sevoflurane": 99.0}, "oxygen_per_1000_l": 4.5},
        },
        "local.toml",
    )
    sevo = ref.agents["sevoflurane"].values["mac40"]
    assert sevo.value == 2.0 and sevo.basis == USER and "local.toml" in sevo.source
    assert sevo.default.value == AGENTS["sevoflurane"].mac40
    assert sevo.default.source == AGENTS["sevoflurane"].values["mac40"].source
    assert ref.gwp("desflurane") == 2500
    assert ref.gwp_sources["ar6_gwp100"].values["desflurane"].default.value == 2590.0
    assert ref.prices.currency == "EUR" and ref.prices.bottle["sevoflurane"] == 99.0
    assert ref.prices.bottle["desflurane"] == DEFAULT_REFERENCE.prices.bottle["desflurane"]
    assert ref.override_origins == ("local.toml",)
    # the built-in reference is untouched
    assert DEFAULT_REFERENCE.agents["sevoflurane"].mac40 == AGENTS["sevoflurane"].mac40
    rows = {(r["item"], r["field"]): r for r in ref.table()}
    assert rows[("Sevoflurane", "MAC at age 40 in O2")]["default"] == AGENTS["sevoflurane"].mac40
    assert rows[("Oxygen", "price per 1000 L")]["default"] == DEFAULT_REFERENCE.prices.oxygen_per_1000_l


def test_second_override_keeps_the_first_default():
    ref = Reference().with_overrides({"agents": {"isoflurane": {"mac40": 1.2}}}, "a.toml")
    ref = ref.with_overrides({"agents": {"isoflurane": {"mac40": 1.3}}}, "b.toml")
    v = ref.agents["isoflurane"].values["mac40"]
    assert v.value == 1.3 and v.default.value == AGENTS["isoflurane"].mac40


def test_user_gwp_source_takes_values_from_settings():
    ref = Reference().with_overrides({"gwp": {"user": {"sevoflurane": 130, "N2O": 273}}}, "s.toml")
    assert ref.gwp("sevoflurane", "user") == 130
    assert ref.gwp("nitrous_oxide", "user") == 273
    with pytest.raises(InputError, match="no value for desflurane"):
        ref.gwp("desflurane", "user")


@pytest.mark.parametrize(
    "overrides, field",
    [
        ({"colours": {}}, "[colours]"),
        ({"agents": {"xenon": {"mac40": 1}}}, "agents.xenon"),
        ({"agents": {"sevoflurane": {"colour": 1}}}, "agents.sevoflurane.colour"),
        ({"agents": {"sevoflurane": {"mac40": "two"}}}, "agents.sevoflurane.mac40"),
        ({"agents": {"sevoflurane": {"mac40": -1}}}, "agents.sevoflurane.mac40"),
        ({"agents": {"sevoflurane": {"mac40": float("nan")}}}, "agents.sevoflurane.mac40"),
        ({"gwp": {"ar9": {"sevoflurane": 1}}}, "gwp_source"),
        ({"gwp": {"user": {"sevoflurane": -5}}}, "gwp.user.sevoflurane"),
        ({"prices": {"bottle": {"oxygen": 3}}}, "prices.bottle.oxygen"),
        ({"prices": {"gold_per_kg": 3}}, "prices.gold_per_kg"),
        ({"prices": {"currency": ""}}, "prices.currency"),
        ({"prices": {"absorbent_per_kg": -1}}, "prices.absorbent_per_kg"),
        ({"prices": 5}, "[prices]"),
    ],
)
def test_bad_override_names_the_field(overrides, field):
    with pytest.raises(InputError) as info:
        Reference().with_overrides(overrides, "my.toml")
    message = str(info.value)
    assert field in message, message
    assert "\n" not in message


def test_load_settings_reads_file_and_environment(tmp_path, monkeypatch):
    path = tmp_path / "settings.toml"
    path.write_text('[prices]\ncurrency = "CHF"\n', encoding="utf-8")
    assert load_settings(path).prices.currency == "CHF"
    monkeypatch.setenv("GAS_LEDGER_SETTINGS", str(path))
    assert load_settings().prices.currency == "CHF"
    monkeypatch.delenv("GAS_LEDGER_SETTINGS")
    assert load_settings().prices.currency == DEFAULT_REFERENCE.prices.currency


@pytest.mark.parametrize(
    "content, expected",
    [
        (None, "no such file"),
        ("[prices\n", "not valid TOML"),
        (b"\xff\xfe\x00", "not UTF-8"),
    ],
)
def test_bad_settings_file_is_one_clear_line(tmp_path, content, expected):
    path = tmp_path / "settings.toml"
    if isinstance(content, bytes):
        path.write_bytes(content)
    elif content is not None:
        path.write_text(content, encoding="utf-8")
    with pytest.raises(InputError) as info:
        load_settings(path)
    message = str(info.value)
    assert expected in message and "settings file" in message and "\n" not in message


def test_demo_settings_file_loads_and_is_invented():
    from pathlib import Path

    path = Path(__file__).resolve().parents[2] / "demo_data" / "settings.toml"
    text = path.read_text(encoding="utf-8")
    assert "Fernhollow" in text and "invented" in text.lower()
    ref = load_settings(path)
    assert ref.prices.basis.startswith("user prices")
    assert ref.gwp("sevoflurane", "user") > 0
