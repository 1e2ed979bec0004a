"""The model beside published values: one list of checks used by the test and by the page.

Each ``Check`` names a quantity, the model's value (a function), the published value (a
number, or a function that asks a general-purpose library), its source, the tolerance and
the methods section it belongs to. ``tests/test_validation.py`` runs every check, and
``scripts/validation_page.py`` writes ``docs/validation.md`` from the same list, so the page
shows exactly what the tests check (``test_validation_page_is_current`` fails if it drifts).

A source of "from memory" or "common practice, no source" says so, as everywhere in the
project.
"""

from __future__ import annotations

import functools
import tempfile
from collections.abc import Callable
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

#: The test that runs every check (the page names it beside each row).
TEST = "tests/test_validation.py::test_model_matches_published_value"


@dataclass(frozen=True)
class Check:
    """One comparison of a model result with a published value."""

    id: str  # test id (unique, no spaces)
    section: str  # heading on the validation page
    quantity: str  # what is compared, with its conditions
    model: Callable[[], object]  # the model's value
    published: object  # a number, a tuple of names, or a function giving one
    unit: str
    source: str
    rel: float | None = None  # relative tolerance
    abs: float | None = None  # absolute tolerance
    methods: str = ""  # anchor on docs/methods.md
    #: Why the model is known to miss this value (its test is then an expected failure with
    #: strict=True, and the page lists it); None where it should hold.
    shortfall: str | None = None

    def model_value(self):
        return self.model()

    def published_value(self):
        return self.published() if callable(self.published) else self.published

    @property
    def test_name(self) -> str:
        return f"{TEST}[{self.id}]"


# --- helpers (model calls kept small and explicit) -------------------------------------------


def _ref():
    from model.reference import DEFAULT_REFERENCE

    return DEFAULT_REFERENCE


def _agent(name):
    return _ref().agents[name]


def _o2_air_for(fd_o2, fgf):
    """O2 and air flows that give a fresh gas O2 fraction (air 20.946 % O2)."""
    from model.reference import AIR_O2_FRACTION

    o2 = fgf * (fd_o2 - AIR_O2_FRACTION) / (1 - AIR_O2_FRACTION)
    return o2, fgf - o2


def _plan(phases, patient=None, **settings):
    from model.plan import CasePlan, Patient, Settings

    return CasePlan(
        "validation", "sevoflurane", tuple(phases), patient or Patient(70.0, 40.0), replace(Settings(), **settings)
    )


def _vapour_per_ml(name):
    from model.vapour import vapour_per_ml_liquid

    return float(vapour_per_ml_liquid(_agent(name), 20.0))


def _dion(fgf, dial, minutes, name, temperature_c):
    from model.vapour import liquid_used_ml

    return float(liquid_used_ml(fgf, dial, minutes, _agent(name), temperature_c))


def _molmass(formula):
    from molmass import Formula

    return Formula(formula).mass


def _ipcc(table, name):
    import globalwarmingpotentials

    return float(globalwarmingpotentials.data[table][name])


def _gwp(agent, source):
    return float(_ref().gwp(agent, source))


def _mac40_of_set(mac_set, agent):
    """An agent's MAC at 40 [%] with ``mac_set`` in use."""
    return float(_ref().with_mac_set(mac_set).agents[agent].mac40)


def _reference_number(agent, field):
    """A reference value of the model: an agent's lifetime or its GWP under an IPCC source."""
    if field == "lifetime":
        return float(_agent(agent).lifetime)
    source = {"gwp20": "ar6_gwp20", "gwp100": "ar6_gwp100"}.get(field, field)
    return float(_ref().gwp(agent, source))


def _codata_molar_volume_0c():
    import scipy.constants

    return scipy.constants.physical_constants["molar volume of ideal gas (273.15 K, 101.325 kPa)"][0] * 1000.0


def _flow_bands():
    from model.freshgas import flow_band

    return tuple(flow_band([0.25, 0.5, 1.0, 2.0, 4.0, 6.0]))


def _lowe_quad():
    from scipy.integrate import quad

    from model.uptake import lowe_uptake_rate_ml_min

    q = _q70()
    return quad(lambda t: float(lowe_uptake_rate_ml_min(t, 2.05, 0.65, q)), 0.0, 60.0)[0]


def _q70():
    from model.patient import resolve_patient

    return float(resolve_patient(70.0, 40.0).cardiac_output_l_min)


def _lowe_closed_form(alveolar_pct, blood_gas):
    """Lowe's cumulative uptake over 60 min of a 70 kg adult [mL vapour]."""
    from model.uptake import lowe_cumulative_ml

    return float(lowe_cumulative_ml(60.0, alveolar_pct, blood_gas, _q70()))


def _lowe_compartments_60min(name):
    from model.uptake import constant_alveolar_uptake_l, tissue_compartments

    g, c = tissue_compartments("lowe", name, _agent(name).blood_gas, 70.0, _q70())
    return float(constant_alveolar_uptake_l([60.0], g, c)[0, 0] * 0.01 * 1000.0)  # mL at 1 % alveolar


def _n2o_uptake_l_min(model, t_min):
    from model.uptake import tissue_compartments

    g, c = tissue_compartments(model, "nitrous_oxide", _agent("nitrous_oxide").blood_gas, 70.0, _q70())
    return float((g[:, 0] * np.exp(-g[:, 0] * t_min / c[:, 0])).sum()) * 0.75  # at 75 % alveolar N2O


@functools.cache
def _fa_fi_30min(name):
    """End-tidal over inspired after 30 min at 8 L/min (N2O: 3 L/min O2 + 5 L/min N2O)."""
    from model.circle import simulate_cases

    ref = _ref()
    if name == "nitrous_oxide":
        s = simulate_cases(ref.volatile("sevoflurane"), [[30.0]], [[3.0]], 0.0, [[5.0]], [[0.0]], record=True)["series"]
        return float(s["end_tidal_n2o"][-1, 0] / s["inspired_n2o"][-1, 0])
    agent = ref.volatile(name)
    s = simulate_cases(agent, [[30.0]], [[8.0]], 0.0, 0.0, [[agent.mac40 / 2]], record=True)["series"]
    return float(s["end_tidal_agent"][-1, 0] / s["inspired_agent"][-1, 0])


def _settled_fio2():
    from model.circle import simulate_cases

    o2, air = _o2_air_for(0.5, 1.0)
    sim = simulate_cases(
        _ref().volatile("sevoflurane"), [[600.0]], [[o2]], [[air]], 0.0, [[0.0]], vo2_ml_min=250.0, record=True
    )
    return float(sim["series"]["inspired_o2"][-1, 0])


def _high_flow_n2o_inspired_o2():
    from model.case import compute_case
    from model.plan import Phase

    timecourse = compute_case(_plan([Phase("m", 90.0, 1.8, 0.0, 4.2, dial_pct=1.0)])).timecourse
    return float(timecourse["inspired_o2_pct"].iloc[-1])


@functools.cache
def _absorbent_case():
    from model.case import compute_case
    from model.plan import Patient, Phase

    p = _plan(
        [Phase("maintenance", 60.0, 0.5, 0.0, 0.0, dial_pct=2.0)],
        patient=Patient(70.0, 40.0, vo2_ml_min=250.0, minute_ventilation_l_min=6.0),
        absorbent_capacity_l_per_kg=150.0,
    )
    return compute_case(p).totals


def _demo_conservation():
    from model import compute_case, load_plan

    root = Path(__file__).resolve().parents[1] / "demo_data" / "plans"
    return max(compute_case(load_plan(p)).totals["conservation_error_rel"] for p in sorted(root.glob("*.toml")))


def _audit_liquid_ml():
    """Record audit of one case: sevoflurane 2 % at 2 L/min O2, sampled each minute for 60 min, at 21 °C."""
    from model.audit import audit_records

    lines = ["case_id,elapsed,agent,o2,dial"] + [f"c1,{t},sevoflurane,2,2" for t in range(61)]
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "records.csv"
        path.write_text("\n".join(lines) + "\n", encoding="utf-8")
        result = audit_records([path], temperature_c=21.0)
        return float(result.cases["liquid_agent_ml"].sum())


def _mac(mac40, age):
    from model.mac import mac_at_age

    return float(mac_at_age(mac40, age))


def _fn(path, *args, item=None, attr=None):
    """A model call by dotted name, e.g. ``_fn("model.patient.brody_vo2_ml_min", 70.0)``.

    ``item`` picks one element of a tuple result, ``attr`` one attribute of the result.
    """

    def call():
        import importlib

        module, name = path.rsplit(".", 1)
        out = getattr(importlib.import_module(module), name)(*args)
        if item is not None:
            out = out[item]
        if attr is not None:
            out = getattr(out, attr)
        return float(np.asarray(out).ravel()[0])

    return call


# --- the checks ----------------------------------------------------------------------------------

_DION = "Dion P, Can J Anaesth 1992;39:633-4: mL = FGF x dial x t x M / (2412 x rho), worked by hand"
_FORMULAS = {
    "sevoflurane": "C4H3F7O",
    "desflurane": "C3H2F6O",
    "isoflurane": "C3H2ClF5O",
    "halothane": "C2HBrClF3",
    "nitrous_oxide": "N2O",
}
_IPCC_NAMES = {"nitrous_oxide": "N2O", "desflurane": "HFE236ea2", "isoflurane": "HCFE235da2"}
_IPCC_TABLES = {
    "ar6_gwp100": ("AR6GWP100", "IPCC AR6 GWP100"),
    "ar6_gwp20": ("AR6GWP20", "IPCC AR6 GWP20"),
    "ar5_gwp100": ("AR5GWP100", "IPCC AR5 GWP100"),
}
# IPCC AR6 WG1 Ch. 7 Supplementary Table 7.SM.7: (lifetime yr, GWP20, GWP100) of each agent
# and N2O, read in the chapter's published metrics data (Smith C et al., repository
# chrisroadmap/ar6, file data_output/7sm/metrics_supplement_cleaned.csv at commit 24f2792,
# doi:10.5281/zenodo.5211357), which reproduces Table 7.SM.7. Enflurane (HCFE-235ca2: 4.42 yr,
# 2320, 654) is in the table but not an agent of the model.
AR6_TABLE_7SM7 = {
    "nitrous_oxide": ("N2O", 109.0, 273.0, 273.0),
    "desflurane": ("HFE-236ea2", 14.1, 7020.0, 2590.0),
    "isoflurane": ("HCFE-235da2", 3.5, 1930.0, 539.0),
    "sevoflurane": ("HFE-347mmz1", 1.9, 702.0, 195.0),
    "halothane": ("Halon-2311", 1.0, 162.0, 45.0),
}
_AR6_FIELDS = (
    ("lifetime", "atmospheric lifetime", "yr"),
    ("gwp20", "AR6 GWP20", "kg CO2e/kg"),
    ("gwp100", "AR6 GWP100", "kg CO2e/kg"),
)
_AR6_READ = "IPCC AR6 WG1 Table 7.SM.7, read in the chapter's data (doi:10.5281/zenodo.5211357)"
# IPCC AR5 WG1 Table 8.A.1, GWP100: N2O, desflurane and isoflurane read in the GHG Protocol's
# table of AR5 values (as carried by globalwarmingpotentials, checked below too); sevoflurane
# and halothane read in US EPA 40 CFR Part 98 Subpart A Table A-1, which gives the AR5 values.
# The IPCC table itself could not be read here.
AR5_TABLE_8A1_GWP100 = {
    "nitrous_oxide": ("N2O", 265.0, "GHG Protocol table of AR5 values"),
    "desflurane": ("HFE-236ea2", 1790.0, "GHG Protocol table of AR5 values"),
    "isoflurane": ("HCFE-235da2", 491.0, "GHG Protocol table of AR5 values"),
    "sevoflurane": ("HFE-347mmz1", 216.0, "US EPA 40 CFR 98 Table A-1"),
    "halothane": ("Halon-2311", 41.0, "US EPA 40 CFR 98 Table A-1"),
}
# MAC at age 40 (%, in O2) of each MAC set, as its source states it: Mapleson WW, Br J Anaesth
# 1996;76:179-85, the constant a of his age equation, read in the abstract (PubMed 8777094);
# the sevoflurane label's table of MAC by age (2.1 % at 40, read in the label text of the US
# National Library of Medicine); the desflurane label's 6.0 % at 31-65 y as stated in Gold MI
# et al., Anesthesiology 1993;79:710-4 (abstract); the isoflurane label's 1.15 % in middle age,
# as stated in Eger EI II, Anesth Analg 1992;75(4 Suppl):S3-7 (abstract, PubMed 1524237).
MAC40_TABLES = {
    "mapleson_1996": {
        "sevoflurane": (1.80, "Mapleson 1996, abstract (PubMed 8777094)"),
        "desflurane": (6.6, "Mapleson 1996, abstract (PubMed 8777094)"),
        "isoflurane": (1.17, "Mapleson 1996, abstract (PubMed 8777094)"),
        "halothane": (0.75, "Mapleson 1996, abstract (PubMed 8777094)"),
        "nitrous_oxide": (104.0, "Mapleson 1996, abstract (PubMed 8777094)"),
    },
    "prescribing_information": {
        "sevoflurane": (2.1, "sevoflurane prescribing information, MAC by age (2.1 % at 40 y)"),
        "desflurane": (6.0, "desflurane prescribing information as stated in Gold MI et al. 1993 (6.0 % at 31-65 y)"),
        "isoflurane": (1.15, "isoflurane prescribing information as stated in Eger 1992 (1.15 % in middle age)"),
        "halothane": (0.75, "Mapleson 1996, abstract (PubMed 8777094)"),
        "nitrous_oxide": (104.0, "Mapleson 1996, abstract (PubMed 8777094)"),
    },
}
# Published FA/FI after 30 min, (low, high): Yasuda N, Lockhart SH, Eger EI II et al.,
# Anesthesiology 1991;74:489-98, and Yasuda N et al., Anesth Analg 1991;72:316-24 (values
# and ranges from memory).
_FA_FI = {
    "nitrous_oxide": (0.85, 1.0),
    "desflurane": (0.85, 0.95),
    "sevoflurane": (0.80, 0.90),
    "isoflurane": (0.66, 0.80),
    "halothane": (0.50, 0.68),
}

CHECKS: tuple[Check, ...] = (
    # Liquid and vapour
    Check(
        "molar-volume-0c",
        "Liquid and vapour",
        "molar volume of an ideal gas at 0 °C, 101.325 kPa",
        _fn("model.vapour.molar_volume_l", 0.0, 101.325),
        _codata_molar_volume_0c,
        "L/mol",
        "CODATA 2018 via scipy.constants ('molar volume of ideal gas (273.15 K, 101.325 kPa)')",
        rel=1e-9,
        methods="vapour-from-liquid",
    ),
    *(
        Check(
            f"vapour-per-ml-{name}",
            "Liquid and vapour",
            f"vapour per mL of liquid {name} at 20 °C",
            functools.partial(_vapour_per_ml, name),
            value,
            "mL/mL",
            "textbook values (about 183, 210, 195 and 227 mL per mL at 20 °C), from memory",
            rel=0.005,
            methods="vapour-from-liquid",
        )
        for name, value in (("sevoflurane", 183), ("desflurane", 210), ("isoflurane", 195), ("halothane", 227))
    ),
    *(
        Check(
            f"molar-mass-{name}",
            "Liquid and vapour",
            f"molar mass of {name.replace('_', ' ')} ({formula})",
            functools.partial(lambda n: float(_agent(n).molar_mass), name),
            functools.partial(_molmass, formula),
            "g/mol",
            "molmass (general-purpose formula library), IUPAC standard atomic weights",
            rel=1e-4,
            methods="vapour-from-liquid",
        )
        for name, formula in _FORMULAS.items()
    ),
    Check(
        "dion-sevoflurane",
        "Liquid and vapour",
        "liquid sevoflurane, 2 L/min at 2 % for 60 min, 21 °C",
        functools.partial(_dion, 2.0, 2.0, 60.0, "sevoflurane", 21.0),
        13.0957,
        "mL",
        _DION + " (2 x 2 x 60 x 200.05 / (2412 x 1.52))",
        rel=1e-3,
        methods="dions-formula",
    ),
    Check(
        "dion-desflurane",
        "Liquid and vapour",
        "liquid desflurane, 1 L/min at 6 % for 60 min, 21 °C",
        functools.partial(_dion, 1.0, 6.0, 60.0, "desflurane", 21.0),
        17.120,
        "mL",
        _DION + " (1 x 6 x 60 x 168.04 / (2412 x 1.465))",
        rel=1e-3,
        methods="dions-formula",
    ),
    Check(
        "rule-of-thumb-sevoflurane",
        "Liquid and vapour",
        "liquid sevoflurane per hour, 2 L/min at 2 %, 20 °C, against 3 x dial x FGF",
        functools.partial(_dion, 2.0, 2.0, 60.0, "sevoflurane", 20.0),
        12.0,
        "mL/h",
        "bedside rule mL/h = 3 x dial % x FGF L/min; common practice, no source",
        rel=0.10,
        methods="rule-of-thumb",
    ),
    Check(
        "audit-dion-sevoflurane",
        "Liquid and vapour",
        "record audit: 60 one-minute samples of 2 L/min O2 at 2 % sevoflurane, 21 °C",
        _audit_liquid_ml,
        13.0957,
        "mL",
        _DION + " (as above: the audit integrates the same formula)",
        rel=1e-3,
        methods="record-audit",
    ),
    # Fresh gas
    Check(
        "fresh-gas-o2-air",
        "Fresh gas",
        "delivered O2 fraction of 1 L/min O2 + 1 L/min air",
        _fn("model.freshgas.delivered_fractions", 1.0, 1.0, 0.0, item=1),
        (1 + 0.20946) / 2,
        "1",
        "US Standard Atmosphere 1976 (dry air 20.946 % O2), worked by hand",
        rel=1e-9,
        methods="fresh-gas-fractions",
    ),
    Check(
        "ratio-limit-cap-n2o",
        "Fresh gas",
        "N2O delivered when 4 L/min N2O is asked with 1 L/min O2 (25 % limit)",
        _fn("model.freshgas.apply_ratio_limit", 1.0, 4.0, item=1),
        3.0,
        "L/min",
        "workstation O2/N2O proportioning (N2O at most 3 x O2); common practice, no source",
        abs=1e-12,
        methods="ratio-limit",
    ),
    Check(
        "flow-bands-baker",
        "Fresh gas",
        "flow bands of 0.25, 0.5, 1, 2, 4 and 6 L/min",
        _flow_bands,
        ("metabolic", "minimal", "low", "medium", "high", "very high"),
        "",
        "Baker AB, Anaesth Intensive Care 1994;22:341-2",
        methods="flow-bands",
    ),
    # Patient
    Check(
        "brody-vo2-70kg",
        "Patient",
        "O2 consumption of a 70 kg adult (10 x kg^0.75)",
        _fn("model.patient.brody_vo2_ml_min", 70.0),
        242.0,
        "mL/min",
        "Lowe HJ, Ernst EA, The Quantitative Practice of Anesthesia, 1981 (Brody's scaling)",
        abs=0.5,
        methods="brody",
    ),
    Check(
        "brody-cardiac-output-70kg",
        "Patient",
        "cardiac output of a 70 kg adult (2 x kg^0.75 dL/min)",
        _fn("model.patient.brody_cardiac_output_l_min", 70.0),
        4.84,
        "L/min",
        "Lowe and Ernst 1981 (48.4 dL/min at 70 kg)",
        abs=0.01,
        methods="brody",
    ),
    Check(
        "minute-ventilation-70kg",
        "Patient",
        "normocapnic minute ventilation of a 70 kg adult",
        _fn("model.patient.resolve_patient", 70.0, 40.0, attr="minute_ventilation_l_min"),
        5.97,
        "L/min",
        "West JB, Respiratory Physiology (VA = 0.863 VCO2/PaCO2), worked by hand: 0.863 x 193.6 / 40 / 0.7",
        abs=0.02,
        methods="brody",
    ),
    # MAC
    Check(
        "mapleson-sevoflurane-80y",
        "Age-adjusted MAC",
        "MAC of sevoflurane (2.1 % at 40) at age 80",
        functools.partial(_mac, 2.1, 80.0),
        1.63918,
        "%",
        "Mapleson WW, Br J Anaesth 1996;76:179-85, worked by hand: 2.1 x 10^(-0.00269 x 40)",
        abs=1e-4,
        methods="mac",
    ),
    Check(
        "mapleson-per-decade",
        "Age-adjusted MAC",
        "MAC at 50 as a share of MAC at 40",
        functools.partial(_mac, 1.0, 50.0),
        1 - 0.0601,
        "1",
        "Mapleson 1996 (about 6 % less per decade: 1 - 10^-0.0269)",
        abs=5e-4,
        methods="mac",
    ),
    Check(
        "mapleson-n2o-60y",
        "Age-adjusted MAC",
        "MAC of N2O (104 % at 40) at age 60",
        functools.partial(_mac, 104.0, 60.0),
        91.883,
        "%",
        "Mapleson 1996, worked by hand: 104 x 10^(-0.00269 x 20)",
        abs=0.01,
        methods="mac",
    ),
    *(
        Check(
            f"mac40-{mac_set}-{agent}",
            "Age-adjusted MAC",
            f"MAC at 40 of {agent.replace('_', ' ')}, set {mac_set}",
            functools.partial(_mac40_of_set, mac_set, agent),
            value,
            "%",
            source,
            rel=1e-9,
            methods="mac",
        )
        for mac_set, table in MAC40_TABLES.items()
        for agent, (value, source) in table.items()
    ),
    # Uptake
    Check(
        "lowe-rate-isoflurane",
        "Uptake",
        "Lowe's uptake rate in the first minute, 1.3 MAC isoflurane",
        _fn("model.uptake.lowe_uptake_rate_ml_min", 1.0, 1.495, 1.4, 4.84),
        101.3,
        "mL/min",
        "Lowe and Ernst 1981 (q = f MAC lambda Q t^-0.5), worked by hand: 1.495 x 1.4 x 48.4",
        abs=0.2,
        methods="lowe",
    ),
    Check(
        "lowe-cumulative-integral",
        "Uptake",
        "Lowe's cumulative sevoflurane uptake over 60 min at 2.05 %",
        functools.partial(_lowe_closed_form, 2.05, 0.65),
        _lowe_quad,
        "mL",
        "scipy.integrate.quad (general-purpose library) on Lowe's rate",
        rel=1e-6,
        methods="lowe",
    ),
    Check(
        "lowe-compartments-sevoflurane",
        "Uptake",
        "exponential-sum uptake of sevoflurane over 60 min at 1 % alveolar, against Lowe's closed form",
        functools.partial(_lowe_compartments_60min, "sevoflurane"),
        functools.partial(_lowe_closed_form, 1.0, 0.65),
        "mL",
        "Lowe and Ernst 1981 (cumulative 2 F lambda Q sqrt(t))",
        rel=0.01,
        methods="lowe",
    ),
    *(
        Check(
            f"severinghaus-n2o-{model}",
            "Uptake",
            f"N2O uptake of a 70 kg adult at 4 min, 75 % N2O ({model} model)",
            functools.partial(_n2o_uptake_l_min, model, 4.0),
            0.5,
            "L/min",
            "Severinghaus JW, J Clin Invest 1954;33:1183-9 (about 1000 t^-0.5 mL/min), from memory",
            rel=tol,
            methods="compartment-model" if model == "compartment" else "lowe",
        )
        for model, tol in (("lowe", 0.02), ("compartment", 0.30))
    ),
    *(
        Check(
            f"wash-in-{name}",
            "Uptake",
            f"FA/FI of {name.replace('_', ' ')} after 30 min at 8 L/min",
            functools.partial(_fa_fi_30min, name),
            (low + high) / 2,
            "1",
            f"Yasuda N et al. 1991 (Anesthesiology 74:489-98; Anesth Analg 72:316-24): {low:g}-{high:g}, from memory",
            abs=(high - low) / 2 + 1e-12,
            methods="compartment-model",
        )
        for name, (low, high) in _FA_FI.items()
    ),
    # Circle system and inspired O2
    Check(
        "conservation-demo-plans",
        "Circle system",
        "largest relative mass-balance error of the demo plans",
        _demo_conservation,
        0.0,
        "1",
        "conservation of mass: delivered = taken up + vented + change held",
        abs=1e-9,
        methods="circle-system",
    ),
    Check(
        "fio2-steady-1l",
        "Inspired oxygen",
        "steady-state inspired O2 at 1 L/min, 50 % O2, VO2 0.25 L/min",
        _fn("model.circle.steady_state_fio2", 1.0, 0.5, 0.25),
        1 / 3,
        "1",
        "textbook mass balance of the circle, worked by hand: (1 x 0.5 - 0.25) / (1 - 0.25)",
        rel=1e-9,
        methods="inspired-oxygen",
    ),
    Check(
        "fio2-steady-hypoxic",
        "Inspired oxygen",
        "steady-state inspired O2 at 0.5 L/min, 50 % O2, VO2 0.25 L/min",
        _fn("model.circle.steady_state_fio2", 0.5, 0.5, 0.25),
        0.0,
        "1",
        "textbook mass balance of the circle: the numerator 0.5 x 0.5 - 0.25 is zero (hypoxic)",
        abs=1e-12,
        methods="inspired-oxygen",
    ),
    Check(
        "fio2-simulated-settles",
        "Inspired oxygen",
        "simulated inspired O2 after 600 min at 1 L/min, 50 % O2, VO2 0.25 L/min",
        _settled_fio2,
        1 / 3,
        "1",
        "textbook mass balance of the circle (steady state 1/3)",
        abs=0.002,
        methods="inspired-oxygen",
    ),
    Check(
        "lowest-safe-fdo2",
        "Inspired oxygen",
        "lowest fresh gas O2 for a 30 % floor at 1 L/min, VO2 0.25 L/min",
        _fn("model.circle.lowest_safe_fd_o2", 1.0, 0.25, 0.30),
        0.475,
        "1",
        "the same balance solved for FdO2, worked by hand: (0.25 + 0.3 x 0.75) / 1",
        rel=1e-9,
        methods="inspired-oxygen",
    ),
    Check(
        "fio2-n2o-high-flow",
        "Inspired oxygen",
        "inspired O2 after 90 min of 1.8 L/min O2 + 4.2 L/min N2O (70 kg adult)",
        _high_flow_n2o_inspired_o2,
        27.1,
        "%",
        "textbook mass balance of the circle, worked by hand: (6 x 0.3 - 0.242) / (6 - 0.242)",
        abs=1.0,
        methods="inspired-oxygen",
    ),
    # Absorbent
    Check(
        "co2-absorbed",
        "Absorbent",
        "CO2 absorbed in 60 min at 0.5 L/min, VCO2 0.2 L/min, VE 6 L/min",
        lambda: float(_absorbent_case()["co2_absorbed_l"]),
        11.0,
        "L",
        "rebreathed share 1 - FGF/VE (common practice, no source), worked by hand: 0.2 x (1 - 0.5/6) x 60",
        rel=1e-9,
        methods="absorbent",
    ),
    Check(
        "absorbent-used",
        "Absorbent",
        "absorbent used for that CO2 at 150 L/kg",
        lambda: float(_absorbent_case()["absorbent_g"]),
        73.33,
        "g",
        "soda lime 10-20 L CO2 per 100 g in practice (from memory), worked by hand: 11.0 / 150",
        abs=0.01,
        methods="absorbent",
    ),
    # Emissions
    Check(
        "n2o-mass-per-litre",
        "Emissions",
        "mass of 1 L of N2O at 20 °C, 101.325 kPa",
        _fn("model.emissions.gas_mass_g", 1.0, 44.013),
        lambda: _molmass("N2O") / 24.055,
        "g",
        "ideal gas: molmass (N2O) over the molar volume 24.055 L/mol",
        rel=1e-3,
        methods="emitted-mass",
    ),
    *(
        Check(
            f"ar6-table-{field}-{agent}",
            "Reference values against their tables",
            f"{label} of {agent.replace('_', ' ')} ({ipcc})",
            functools.partial(_reference_number, agent, field),
            row[i],
            unit,
            _AR6_READ,
            rel=1e-9,
            methods="gwp",
        )
        for agent, (ipcc, *row) in AR6_TABLE_7SM7.items()
        for i, (field, label, unit) in enumerate(_AR6_FIELDS)
    ),
    *(
        Check(
            f"blood-gas-{agent}",
            "Reference values against their tables",
            f"blood/gas partition coefficient of {agent} at 37 °C",
            functools.partial(lambda a: float(_agent(a).blood_gas), agent),
            value,
            "1",
            "Eger EI II, Anesth Analg 1992;75(4 Suppl):S3-7, abstract (PubMed 1524237)",
            rel=1e-9,
            methods="reference-values",
        )
        for agent, value in (("desflurane", 0.42), ("isoflurane", 1.4))
    ),
    *(
        Check(
            f"ar5-table-gwp100-{agent}",
            "Reference values against their tables",
            f"AR5 GWP100 of {agent.replace('_', ' ')} ({ipcc})",
            functools.partial(_reference_number, agent, "ar5_gwp100"),
            value,
            "kg CO2e/kg",
            f"IPCC AR5 WG1 Table 8.A.1, read in the {where}",
            rel=1e-9,
            methods="gwp",
        )
        for agent, (ipcc, value, where) in AR5_TABLE_8A1_GWP100.items()
    ),
    *(
        Check(
            f"gwp-{source}-{agent}",
            "Emissions",
            f"GWP of {agent.replace('_', ' ')}, {label}",
            functools.partial(_gwp, agent, source),
            functools.partial(_ipcc, table, ipcc),
            "kg CO2e/kg",
            f"globalwarmingpotentials (package of the IPCC tables), {table} {ipcc}",
            rel=1e-9,
            methods="gwp",
        )
        for source, (table, label) in _IPCC_TABLES.items()
        for agent, ipcc in _IPCC_NAMES.items()
    ),
)


# --- published clinical studies (tests/clinical_studies.py) -----------------------------------------


def _clinical_checks() -> tuple[Check, ...]:
    """One check per value measured in a published clinical study (tests/clinical_studies.py)."""
    from tests.clinical_studies import STUDIES, model_value

    checks = []
    for study in STUDIES:
        for m in study.measurements:
            absolute, relative = m.tolerance
            spread = f"{m.value:g} ± {m.sd:g} {m.unit} (mean ± SD)" if m.sd is not None else "no spread reported"
            checks.append(
                Check(
                    f"clinical-{study.key}-{m.id}",
                    "Clinical studies",
                    m.label,
                    functools.partial(model_value, study, m),
                    m.value,
                    m.unit,
                    f"{study.citation}; {study.where_read}: {spread}",
                    rel=relative,
                    abs=absolute,
                    methods="compartment-model",
                    shortfall=m.shortfall,
                )
            )
    return tuple(checks)


CHECKS = CHECKS + _clinical_checks()


def matches(check: Check, value, expected) -> bool:
    """Whether a model value meets the published value within the check's tolerance."""
    if isinstance(expected, tuple):
        return tuple(value) == expected
    tol = max(check.abs or 0.0, (check.rel or 0.0) * abs(expected))
    return abs(value - expected) <= tol
