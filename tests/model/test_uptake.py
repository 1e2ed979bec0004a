"""Uptake models: Lowe's square-root-of-time law and the physiological compartment model."""

import numpy as np
import pytest
from scipy.integrate import quad

from model.patient import resolve_patient
from model.reference import AGENTS, FROM_MEMORY, VOLATILES
from model.uptake import (
    TISSUE_BLOOD,
    TISSUE_FLOW_SHARE,
    TISSUE_GROUPS,
    TISSUE_VOLUME_L_PER_KG,
    constant_alveolar_uptake_l,
    lowe_cumulative_ml,
    lowe_priming_ml,
    lowe_uptake_rate_ml_min,
    tissue_compartments,
)

Q70 = float(resolve_patient(70.0, 40.0).cardiac_output_l_min)
SPECIES = VOLATILES + ("nitrous_oxide",)


def tissue_table():
    """Rows (dicts) of the compartment model's values with their sources, for reports."""
    rows = []
    for g in TISSUE_GROUPS:
        for label, table in (("volume per kg", TISSUE_VOLUME_L_PER_KG), ("share of cardiac output", TISSUE_FLOW_SHARE)):
            v = table[g]
            rows.append(dict(item=g, field=label, value=v.value, unit=v.unit, source=v.source, basis=v.basis))
        for species, t in TISSUE_BLOOD.items():
            v = t[g]
            rows.append(
                dict(
                    item=g, field=f"tissue/blood {species}", value=v.value, unit=v.unit, source=v.source, basis=v.basis
                )
            )
    return rows


def test_lowe_rate_at_a_worked_point():
    # Source: Lowe and Ernst 1981, q = f MAC lambda Q t^-0.5; hand-worked for 1.3 MAC isoflurane
    # (1.495 %), lambda 1.4, Q 48.4 dL/min: 101.3 mL/min in the first minute, half that at 4 min
    assert lowe_uptake_rate_ml_min(1.0, 1.495, 1.4, 4.84) == pytest.approx(101.3, abs=0.2)
    assert lowe_uptake_rate_ml_min(4.0, 1.495, 1.4, 4.84) == pytest.approx(101.3 / 2, abs=0.1)


def test_lowe_cumulative_is_the_integral_of_the_rate():
    # Source: scipy.integrate.quad (general-purpose reference library) on Lowe's rate
    exact, _ = quad(lambda t: float(lowe_uptake_rate_ml_min(t, 2.05, 0.65, Q70)), 0.0, 60.0)
    assert lowe_cumulative_ml(60.0, 2.05, 0.65, Q70) == pytest.approx(exact, rel=1e-6)


def test_lowe_priming_fills_circuit_and_lungs():
    # Source: Lowe and Ernst 1981 (priming dose = (circuit + FRC) x concentration); 8 L at 2 % = 160 mL
    assert lowe_priming_ml(2.0, 6.0, 2.0) == pytest.approx(160.0)


@pytest.mark.parametrize("species", SPECIES)
def test_lowe_compartments_uptake_grows_as_square_root_of_time(species):
    g, c = tissue_compartments("lowe", species, AGENTS[species].blood_gas, 70.0, Q70)
    t = np.geomspace(10.0, 60.0, 20)
    cumulative = constant_alveolar_uptake_l(t, g, c)[:, 0]
    slope = np.polyfit(np.log(t), np.log(cumulative), 1)[0]
    # Source: Lowe and Ernst 1981: cumulative uptake at constant alveolar level is 2 f MAC lambda Q sqrt(t)
    assert slope == pytest.approx(0.5, abs=0.05)


@pytest.mark.parametrize("agent", VOLATILES)
def test_lowe_compartments_match_the_closed_form(agent):
    g, c = tissue_compartments("lowe", agent, AGENTS[agent].blood_gas, 70.0, Q70)
    litres = constant_alveolar_uptake_l([60.0], g, c)[0, 0] * 0.01  # at 1 % alveolar
    # Source: Lowe and Ernst 1981 (closed form 2 F lambda Q sqrt(t))
    assert litres * 1000 == pytest.approx(lowe_cumulative_ml(60.0, 1.0, AGENTS[agent].blood_gas, Q70), rel=0.01)


@pytest.mark.parametrize("agent", VOLATILES)
def test_compartment_model_first_hour_uptake_is_within_a_quarter_of_lowe(agent):
    lam = AGENTS[agent].blood_gas
    gc, cc = tissue_compartments("compartment", agent, lam, 70.0, Q70)
    gl, cl = tissue_compartments("lowe", agent, lam, 70.0, Q70)
    ratio = constant_alveolar_uptake_l([60.0], gc, cc)[0, 0] / constant_alveolar_uptake_l([60.0], gl, cl)[0, 0]
    # Source: tolerance from memory: Lowe's law is an empirical approximation, and measured
    # closed-circuit uptake of individual patients and of the less soluble agents departs from
    # it by up to about a quarter (Lowe and Ernst 1981 and later closed-circuit studies).
    assert 0.75 <= ratio <= 1.25


def test_n2o_uptake_follows_severinghaus_in_both_models():
    for model, tol in (("lowe", 0.02), ("compartment", 0.30)):
        g, c = tissue_compartments(model, "nitrous_oxide", AGENTS["nitrous_oxide"].blood_gas, 70.0, Q70)
        rates = [float((g[:, 0] * np.exp(-g[:, 0] * t / c[:, 0])).sum()) * 0.75 for t in (1.0, 4.0, 9.0, 16.0)]
        # Source: Severinghaus JW, J Clin Invest 1954;33:1183-9 (about 1000 t^-0.5 mL/min in an
        # adult at some 75 % N2O), from memory
        assert rates == pytest.approx([1.0, 0.5, 1 / 3, 0.25], rel=tol), model


def test_every_compartment_value_names_its_source():
    for table in (TISSUE_VOLUME_L_PER_KG, TISSUE_FLOW_SHARE):
        for g in TISSUE_GROUPS:
            assert table[g].source and table[g].basis == FROM_MEMORY
    for species in SPECIES:
        for g in TISSUE_GROUPS:
            assert TISSUE_BLOOD[species][g].source
    assert len(tissue_table()) == len(TISSUE_GROUPS) * (2 + len(TISSUE_BLOOD))


def test_blood_flow_shares_add_to_one():
    # Source: Eger 1974 (tissue groups share the whole cardiac output), from memory
    assert sum(TISSUE_FLOW_SHARE[g].value for g in TISSUE_GROUPS) == pytest.approx(1.0)


def test_fat_is_the_slowest_compartment_for_every_volatile():
    for agent in VOLATILES:
        g, c = tissue_compartments("compartment", agent, AGENTS[agent].blood_gas, 70.0, Q70)
        tau = (c / g)[:, 0]
        # Source: Eger 1974 (time constants: vessel-rich minutes, muscle hours, fat days), from memory
        assert tau[0] < 10 < tau[1] < tau[2]


def test_unknown_uptake_model_is_refused():
    with pytest.raises(ValueError, match="compartment"):
        tissue_compartments("guess", "sevoflurane", 0.65, 70.0, Q70)
