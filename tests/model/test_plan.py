"""The TOML plan format: units at the edge, defaults, and one clear line for each bad input."""

from pathlib import Path

import pytest

from model.base.errors import InputError
from model.case import compute_case
from model.io.plans import load_plan, parse_plan_text, plan_from_dict, plan_to_toml
from model.plan import CasePlan, Phase, Settings
from model.reference import DEFAULT_REFERENCE

DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "plans"

GOOD = """
format = "fresh-gas-ledger plan 1"
name = "test plan"
agent = "sevoflurane"

[patient]
weight = "78 kg"
age = "52 year"

[settings]
room_temperature = "22 degC"
min_o2_share = "30 %"
inspired_o2_floor = 0.35
capture_efficiency = "0.25"

[[phases]]
name = "induction"
duration = "10 min"
o2 = "2 L/min"
air = "4000 mL/min"
dial = "6 %"

[[phases]]
name = "maintenance"
duration = "1.25 h"
o2 = 0.3
air = "0.2 L/min"
dial = 3
"""


def plan_dict(**changes):
    """A valid plan as a dict, with top-level or phase-1 changes (``phase_<field>``)."""
    data = {
        "name": "t",
        "agent": "sevoflurane",
        "patient": {"weight": "70 kg", "age": "40 year"},
        "phases": [{"name": "p", "duration": "60 min", "o2": "1 L/min", "air": "1 L/min", "dial": "2 %"}],
    }
    for key, value in changes.items():
        if key.startswith("phase_"):
            field = key[len("phase_") :]
            if value is None:
                data["phases"][0].pop(field, None)
            else:
                data["phases"][0][field] = value
        elif key.startswith("settings_"):
            data.setdefault("settings", {})[key[len("settings_") :]] = value
        elif value is None:
            data.pop(key, None)
        else:
            data[key] = value
    return data


def test_demo_plans_load():
    paths = sorted(DEMO.glob("*.toml"))
    assert len(paths) >= 3
    for path in paths:
        plan = load_plan(path)
        assert plan.phases and plan.minutes > 0


def test_units_are_converted_at_the_edge():
    plan = parse_plan_text(GOOD)
    induction, maintenance = plan.phases
    assert induction.air_l_min == pytest.approx(4.0)
    assert maintenance.minutes == pytest.approx(75.0)
    assert maintenance.oxygen_l_min == pytest.approx(0.3)  # bare number in the default unit, L/min
    assert maintenance.dial_pct == pytest.approx(3.0) and induction.dial_pct == pytest.approx(6.0)
    assert induction.fgf_l_min == pytest.approx(6.0)
    assert plan.minutes == pytest.approx(85.0)
    s = plan.settings
    assert s.temperature_c == pytest.approx(22.0)
    assert s.min_o2_share == pytest.approx(0.30)
    assert s.inspired_o2_floor == pytest.approx(0.35)
    assert s.capture_efficiency == pytest.approx(0.25)
    assert plan.patient.weight_kg == 78.0 and plan.patient.age_years == 52.0


def test_other_units_convert():
    plan = plan_from_dict(
        plan_dict(
            phase_duration="5400 s",
            phase_o2="60 L/h",
            settings_room_temperature="295.15 K",
            settings_pressure="760 mmHg",
        )
    )
    # Source: SI definitions (1 h = 3600 s = 60 min, 1 atm = 760 mmHg = 101.325 kPa).
    assert plan.phases[0].minutes == pytest.approx(90.0)
    assert plan.phases[0].oxygen_l_min == pytest.approx(1.0)
    assert plan.settings.temperature_c == pytest.approx(22.0)
    assert plan.settings.pressure_kpa == pytest.approx(101.325, rel=1e-5)


@pytest.mark.parametrize(
    "typed, share",
    [
        # Reference: pint's definitions (ppm = 1e-6, percent = 0.01); a plain number is a fraction.
        ("1 ppm", 1e-6),
        ("0.5 percent", 0.005),
        ("50 %", 0.5),
        ("0.5", 0.5),
        (0.5, 0.5),
        ("2500 ppm", 0.0025),
    ],
)
def test_a_capture_efficiency_in_ppm_or_percent_keeps_its_meaning(typed, share):
    plan = plan_from_dict(plan_dict(settings_capture_efficiency=typed))
    assert plan.settings.capture_efficiency == pytest.approx(share, rel=1e-12)


def test_a_capture_of_one_ppm_leaves_the_emissions_almost_whole():
    # The case: "1 ppm" was read as 1, so all was captured and CO2e was 0 kg.
    whole = compute_case(plan_from_dict(plan_dict()), DEFAULT_REFERENCE)
    ppm = compute_case(plan_from_dict(plan_dict(settings_capture_efficiency="1 ppm")), DEFAULT_REFERENCE)
    whole_kg, ppm_kg = whole.totals["co2e_total_kg"], ppm.totals["co2e_total_kg"]
    assert whole_kg > 0
    # Emitted = delivered x (1 - capture) (docs/methods.md); no N2O in this plan.
    assert ppm_kg == pytest.approx(whole_kg * (1 - 1e-6), rel=1e-9)


def test_defaults_fill_optional_fields():
    plan = plan_from_dict({"agent": "Sevo", "phases": [{"duration": 30, "o2": 1, "dial": 2}]})
    assert plan.agent == "sevoflurane"
    assert plan.settings == Settings()
    assert plan.phases[0] == Phase("phase", 30.0, 1.0, 0.0, 0.0, dial_pct=2.0)


def test_phase_can_hold_an_end_tidal_target_instead_of_a_dial():
    plan = plan_from_dict(plan_dict(phase_dial=None, phase_target=1.2))
    assert plan.phases[0].mode == "target" and plan.phases[0].target_mac == 1.2


@pytest.mark.parametrize("typed", ["1.2", "1.2 MAC", "1.2 x MAC", "1.2 mac"])
def test_a_target_may_be_typed_as_a_mac_multiple_with_or_without_its_name(typed):
    """Issue 12 defect 3: the MAC multiple is read as typed; only a percent is refused."""
    plan = plan_from_dict(plan_dict(phase_dial=None, phase_target=typed))
    assert plan.phases[0].target_mac == 1.2
    assert plan.phases[0].dial_pct is None


def test_with_phase_changes_one_phase_only():
    plan = parse_plan_text(GOOD)
    changed = plan.with_phase(1, oxygen_l_min=0.5)
    assert changed.phases[1].oxygen_l_min == 0.5 and changed.phases[0] == plan.phases[0]
    assert plan.phases[1].oxygen_l_min == pytest.approx(0.3)


def test_written_plan_reads_back_and_keeps_units():
    plan = parse_plan_text(GOOD)
    text = plan_to_toml(plan)
    assert 'duration = "75 min"' in text and 'o2 = "0.3 L/min"' in text
    assert parse_plan_text(text) == plan


def test_demo_plans_round_trip():
    for path in sorted(DEMO.glob("*.toml")):
        plan = load_plan(path)
        assert parse_plan_text(plan_to_toml(plan)) == plan


# Each bad input: (changes, text the one-line message must hold: the field path, the value,
# and what is allowed).
BAD = {
    "unknown agent": (dict(agent="xenonium"), ["agent", "xenonium", "sevoflurane, desflurane"]),
    "gas as the agent": (dict(agent="N2O"), ["agent", "N2O", "allowed agents"]),
    "negative flow": (dict(phase_o2="-1 L/min"), ["phases[1].o2", "-1 L/min", "[0, 20] L/min"]),
    "absurd flow": (dict(phase_air="500 L/min"), ["phases[1].air", "500 L/min", "[0, 20] L/min"]),
    "absurd total flow": (dict(phase_o2=15, phase_air=15, phase_n2o=5), ["o2/air/n2o", "35 L/min total", "30 L/min"]),
    "no flow": (dict(phase_o2=0, phase_air=0), ["o2/air/n2o", "some fresh gas flow"]),
    "dial above the vaporizer": (dict(phase_dial="9 %"), ["phases[1].dial", "9 %", "up to 8 %"]),
    "dial above 100 %": (dict(phase_dial="120 %"), ["phases[1].dial", "120 %", "[0, 100] %"]),
    "desflurane dial above 18": (dict(agent="desflurane", phase_dial=19), ["phases[1].dial", "19 %", "up to 18 %"]),
    "negative dial": (dict(phase_dial=-1), ["phases[1].dial", "-1", "[0, 100] %"]),
    "O2 share above 1": (dict(settings_min_o2_share=1.5), ["settings.min_o2_share", "1.5", "share from 0 to 1"]),
    "O2 share above 100 %": (
        dict(settings_min_o2_share="120 %"),
        ["settings.min_o2_share", "120 %", "share from 0 to 1"],
    ),
    "O2 floor above 1": (dict(settings_inspired_o2_floor=1.2), ["settings.inspired_o2_floor", "1.2", "0 to 1"]),
    "O2 floor under air": (dict(settings_inspired_o2_floor="15 %"), ["inspired_o2_floor", "'15 %'", "0.21"]),
    "flow typed in mL/min": (
        dict(phase_o2="900000 mL/min"),
        ["phases[1].o2", "'900000 mL/min'", "[0, 20] L/min (that is 900 L/min)"],
    ),
    "zero O2 share": (dict(settings_min_o2_share=0), ["settings.min_o2_share", "at least 0.01"]),
    "capture above 1": (dict(settings_capture_efficiency=2), ["settings.capture_efficiency", "2", "0 to 1"]),
    "missing duration": (dict(phase_duration=None), ["phases[1].duration", "nothing", "required"]),
    "missing agent": (dict(agent=None), ["agent", "nothing", "required"]),
    "no phases": (dict(phases=[]), ["phases", "no phases", "[[phases]]"]),
    "wrong unit for flow": (dict(phase_o2="1 kg"), ["phases[1].o2", "1 kg", "convertible to L/min"]),
    "wrong unit for duration": (dict(phase_duration="60 kg"), ["phases[1].duration", "60 kg", "min"]),
    "wrong unit for weight": (dict(patient={"weight": "70 L"}), ["patient.weight", "70 L", "kg"]),
    "not a quantity": (dict(phase_o2="lots"), ["phases[1].o2", "lots", "quantity"]),
    "boolean flow": (dict(phase_o2=True), ["phases[1].o2", "true", "not true or false"]),
    "zero duration": (dict(phase_duration=0), ["phases[1].duration", "0 min", "(0, 1440] min"]),
    "both dial and target": (dict(phase_target=1.0), ["phases[1]", "dial/target", "exactly one"]),
    "neither dial nor target": (dict(phase_dial=None), ["phases[1]", "dial/target", "exactly one"]),
    # Issue 12 defect 3: a target in % is a dial setting, never read as a MAC multiple.
    "target in percent": (
        dict(phase_dial=None, phase_target="2 %"),
        ["phases[1].target", "2 %", "MAC multiple", "not a percent"],
    ),
    "unknown field": (dict(phase_colour="red"), ["phases[1].colour", "red", "unknown field"]),
    "unknown top-level table": (dict(extras={"a": 1}), ["extras", "unknown field"]),
    "unknown GWP source": (dict(settings_gwp_source="ar7"), ["settings.gwp_source", "ar7", "ar6_gwp100"]),
    "unknown ratio behaviour": (dict(settings_ratio_limit="shout"), ["settings.ratio_limit", "shout", "cap_n2o"]),
    "wrong format version": (dict(format="other 2"), ["format", "other 2", "fresh-gas-ledger plan 1"]),
    "age out of range": (dict(patient={"age": 200}), ["patient.age", "200", "[0, 120]"]),
    # A dimensionless unit is not a plain number: it must have the field's dimension.
    "weight in percent": (dict(patient={"weight": "80 %"}), ["patient.weight", "80 %", "convertible to kg"]),
    "flow in ppm": (dict(phase_o2="2 ppm"), ["phases[1].o2", "2 ppm", "convertible to L/min"]),
    "temperature as a ratio": (
        dict(settings_room_temperature="22.5 degC/degC"),
        ["settings.room_temperature", "22.5 degC/degC", "temperature unit"],
    ),
    "target in ppm": (dict(phase_dial=None, phase_target="1.2 ppm"), ["phases[1].target", "1.2 ppm", "MAC multiple"]),
    "capture in L/min": (
        dict(settings_capture_efficiency="0.5 L/min"),
        ["settings.capture_efficiency", "0.5 L/min", "fraction in %, percent or ppm"],
    ),
}


@pytest.mark.parametrize("changes, expected", BAD.values(), ids=BAD.keys())
def test_bad_plan_gives_one_line_naming_field_value_and_allowed(changes, expected):
    with pytest.raises(InputError) as info:
        plan_from_dict(plan_dict(**changes), "plan.toml", DEFAULT_REFERENCE)
    message = str(info.value)
    assert message.startswith("plan.toml: ")
    assert "\n" not in message
    for part in expected:
        assert part in message, (part, message)


def test_malformed_toml_names_file_line_and_column():
    with pytest.raises(InputError) as info:
        parse_plan_text('name = "x\nagent = 3\n', "broken.toml")
    message = str(info.value)
    assert message.startswith("broken.toml (line 1, column 10): ")
    assert "not valid TOML" in message and "\n" not in message


def test_missing_file(tmp_path):
    with pytest.raises(InputError, match=r"^plan file: got '.*nope\.toml'; no such file"):
        load_plan(tmp_path / "nope.toml")


def test_folder_instead_of_file(tmp_path):
    with pytest.raises(InputError, match="that is a folder"):
        load_plan(tmp_path)


def test_file_that_is_not_text(tmp_path):
    path = tmp_path / "plan.toml"
    path.write_bytes(b"\xff\xfe\x00\x01")
    with pytest.raises(InputError, match="not UTF-8 text"):
        load_plan(path)


def test_unreadable_file(tmp_path, monkeypatch):
    path = tmp_path / "plan.toml"
    path.write_text(GOOD, encoding="utf-8")

    def refuse(self):
        raise PermissionError(13, "Permission denied")

    # (tests may run as root, where chmod 000 does not stop reading)
    monkeypatch.setattr(Path, "read_bytes", refuse)
    with pytest.raises(InputError, match=r"plan file: .*cannot be read \(Permission denied\)"):
        load_plan(path)


def test_oversized_file_is_refused(tmp_path):
    path = tmp_path / "big.toml"
    path.write_text("#" * 1_100_000, encoding="utf-8")
    with pytest.raises(InputError, match="at most"):
        load_plan(path)


def test_plan_dataclasses_are_immutable():
    plan = parse_plan_text(GOOD)
    assert isinstance(plan, CasePlan)
    with pytest.raises(AttributeError):
        plan.agent = "desflurane"


def test_the_vaporizer_maximum_is_that_of_the_values_in_use_so_a_settings_file_may_raise_it():
    # A plan is read without reference values; its dials meet the maximum where it is worked out.
    plan = plan_from_dict(plan_dict(phase_dial="9 %"), "plan.toml")
    with pytest.raises(InputError, match=r"phases\[1\]\.dial: got '9 %'; the sevoflurane vaporizer goes up to 8 %"):
        compute_case(plan)
    # A 10 % vaporizer (a settings file's [agents.sevoflurane] vaporizer_max) takes it.
    wide = DEFAULT_REFERENCE.with_overrides({"agents": {"sevoflurane": {"vaporizer_max": 10}}}, "local.toml")
    assert plan_from_dict(plan_dict(phase_dial="9 %"), "plan.toml", wide).phases[0].dial_pct == 9.0
    at_9 = compute_case(plan, wide).totals["liquid_agent_ml"]
    at_2 = compute_case(plan_from_dict(plan_dict(), "plan.toml"), wide).totals["liquid_agent_ml"]
    # Dion's formula (docs/methods.md) is linear in the dial: 4.5 times the dial, 4.5 times the liquid.
    assert at_9 == pytest.approx(4.5 * at_2, rel=0.02)
