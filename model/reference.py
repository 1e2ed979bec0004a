"""Reference data for agents, gases, GWP sources and prices, each value with its provenance."""

from __future__ import annotations

import dataclasses
import math
import os
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from pathlib import Path
from types import MappingProxyType
from typing import Any

from model.base.errors import InputError
from model.base.files import parse_toml, read_user_text

#: Largest settings file read. [bytes]
MAX_SETTINGS_BYTES = 1_000_000

# Provenance labels. Every value in this module carries one of these as its ``basis``.
PUBLISHED = "published"
FROM_MEMORY = "from memory"
COMMON_PRACTICE = "common practice, no source"
INVENTED = "invented example price"
USER = "user override"

#: Molar gas constant. [J/(mol K)] Source: CODATA 2018 (exact since the 2019 SI).
R_GAS = 8.314462618
#: Standard atmosphere. [kPa] Source: ISO 2533 / SI definition of 1 atm.
STANDARD_PRESSURE_KPA = 101.325
#: Oxygen fraction of dry air (by volume). Source: US Standard Atmosphere 1976 (20.946 %).
AIR_O2_FRACTION = 0.20946


@dataclass(frozen=True)
class Sourced:
    """One reference value with its unit and where it came from."""

    value: float | None
    unit: str
    source: str
    basis: str = PUBLISHED
    #: What the value was before a user override (None if never overridden).
    default: Sourced | None = None


def _s(value, unit, source, basis=FROM_MEMORY):
    return Sourced(value, unit, source, basis)


# Field name -> (unit, description); the order is the order of the reference table.
AGENT_FIELDS: Mapping[str, tuple[str, str]] = MappingProxyType(
    {
        "molar_mass": ("g/mol", "molar mass"),
        "liquid_density": ("g/mL", "liquid density"),
        "density_temperature": ("degC", "temperature of the liquid density"),
        "svp_20c": ("kPa", "saturated vapour pressure at 20 °C"),
        "boiling_point": ("degC", "boiling point at 101.325 kPa"),
        "blood_gas": ("1", "blood/gas partition coefficient at 37 °C"),
        "mac40": ("%", "MAC at age 40 in O2"),
        "vaporizer_max": ("%", "highest vaporizer dial setting"),
        "bottle_volume": ("mL", "bottle volume"),
        "metabolised_fraction": ("1", "share of the agent taken up that is metabolised"),
        "lifetime": ("yr", "atmospheric lifetime"),
    }
)

# Field name -> (low, high, low included) of a user override: wide bounds that only keep out
# values no agent or gas can have (a share above 1 is impossible). A value the model divides
# by has a smallest physically sensible value rather than an open 0, so that a number just
# above 0 (5e-324) cannot give an infinite result; each lower bound's basis is on its line.
_AGENT_FIELD_RANGES: Mapping[str, tuple[float, float, bool]] = MappingProxyType(
    {
        # Hydrogen, the lightest atom, 1.008 g/mol (IUPAC standard atomic weights).
        "molar_mass": (1.0, 1000.0, True),
        # Liquid hydrogen, the least dense liquid, about 0.07 g/mL (from memory).
        "liquid_density": (0.05, 5.0, True),
        "density_temperature": (-273.15, 100.0, True),
        # 1 Pa: common practice, no source (no vaporizer gives a liquid this involatile).
        "svp_20c": (0.001, 10000.0, True),
        "boiling_point": (-273.15, 300.0, True),
        # Xenon, the least soluble anaesthetic gas, has about 0.115 (from memory).
        "blood_gas": (0.01, 100.0, True),
        # Methoxyflurane, the most potent volatile agent, has a MAC of about 0.16 % (from memory).
        "mac40": (0.01, 200.0, True),
        # Dials are marked in steps of 0.1 % or more (common practice, no source).
        "vaporizer_max": (0.1, 100.0, True),
        # 1 mL: common practice, no source (agent bottles hold some 100 to 250 mL).
        "bottle_volume": (1.0, 10000.0, True),
        "metabolised_fraction": (0.0, 1.0, True),
        # About 9 hours: common practice, no source (the agents' lifetimes are years).
        "lifetime": (0.001, 100000.0, True),
    }
)

_MOLMASS = "computed from the formula with IUPAC standard atomic weights"


@dataclass(frozen=True)
class Agent:
    """Reference data for one anaesthetic agent or medical gas.

    Numeric attributes are plain floats in the unit of ``AGENT_FIELDS``; ``values`` keeps
    each one with its source. ``kind`` is "volatile" (a liquid given by a vaporizer) or
    "gas" (O2, air, N2O from flowmeters).
    """

    name: str
    label: str
    formula: str
    kind: str
    values: Mapping[str, Sourced]

    def __getattr__(self, item):
        # Called only when normal lookup fails: expose each value as a float attribute.
        values = object.__getattribute__(self, "values")
        if item in values:
            return values[item].value
        raise AttributeError(item)


def _agent(name, label, formula, kind, **values) -> Agent:
    for key in values:
        if key not in AGENT_FIELDS:
            raise KeyError(key)
    return Agent(name, label, formula, kind, MappingProxyType(values))


_LABEL_SEVO = "sevoflurane prescribing information, from memory"
_LABEL_DES = "desflurane prescribing information, from memory"
_LABEL_ISO = "isoflurane prescribing information, from memory"
_LABEL_HAL = "halothane monograph, from memory"
_YASUDA = "Yasuda N et al., Anesth Analg 1989;69:370-3 (blood/gas at 37 °C), from memory"
#: Eger EI II. Desflurane animal and human pharmacology: aspects of kinetics, safety, and MAC.
#: Anesth Analg 1992;75(4 Suppl):S3-7, read in its abstract (PubMed 1524237): desflurane
#: blood/gas 0.42 and isoflurane 1.4; MAC of desflurane 6.0 % and of isoflurane 1.15 % in
#: middle-aged patients.
_EGER_1992 = "Eger EI II, Anesth Analg 1992;75(4 Suppl):S3-7 (abstract, PubMed 1524237)"
#: Where Table 7.SM.7 was read: the chapter's published metrics data (Smith C et al.,
#: github.com/chrisroadmap/ar6, data_output/7sm/metrics_supplement_cleaned.csv,
#: doi:10.5281/zenodo.5211357), which reproduces the table.
_AR6 = "IPCC AR6 WG1 Ch. 7 Supplementary Table 7.SM.7 (read in the chapter's data, doi:10.5281/zenodo.5211357)"
_VAPORIZER = "common vaporizer design (maximum dial mark)"

#: Mapleson's own MAC at age 40 (the constant ``a`` of his age equation), read in the
#: paper's abstract (PubMed 8777094): halothane 0.75 %, isoflurane 1.17 %, enflurane 1.63 %,
#: sevoflurane 1.80 %, desflurane 6.6 %, N2O 104 % (95 % limits about +/- 7 %, desflurane
#: +/- 10 %). Used with his age slope, these keep the age adjustment within one method.
_MAPLESON_A = "Mapleson WW, Br J Anaesth 1996;76:179-85: MAC at 40 y of the age equation (abstract, PubMed 8777094)"


@dataclass(frozen=True)
class MacSet:
    """A named set of MAC values at age 40 (in O2), one ``Sourced`` per agent and N2O.

    The model adjusts every MAC for age with Mapleson's equation (``model.mac``); a set
    taken from another source than that paper mixes two methods, and its label says so.
    """

    key: str
    label: str
    citation: str
    values: Mapping[str, Sourced]


MAC_SETS: Mapping[str, MacSet] = MappingProxyType(
    {
        "mapleson_1996": MacSet(
            "mapleson_1996",
            "Mapleson 1996 (the age equation's own MAC at 40)",
            _MAPLESON_A,
            MappingProxyType(
                {
                    "sevoflurane": _s(1.80, "%", _MAPLESON_A, PUBLISHED),
                    "desflurane": _s(6.6, "%", _MAPLESON_A, PUBLISHED),
                    "isoflurane": _s(1.17, "%", _MAPLESON_A, PUBLISHED),
                    "halothane": _s(0.75, "%", _MAPLESON_A, PUBLISHED),
                    "nitrous_oxide": _s(104.0, "%", _MAPLESON_A, PUBLISHED),
                }
            ),
        ),
        "prescribing_information": MacSet(
            "prescribing_information",
            "prescribing information (MAC at 40 of each label, Mapleson's age slope)",
            "each agent's prescribing information; halothane and N2O from Mapleson 1996",
            MappingProxyType(
                {
                    "sevoflurane": _s(
                        2.1,
                        "%",
                        "sevoflurane prescribing information: 2.1 % at 40 y in O2 (its table of MAC "
                        "by age, read in the label text of the US National Library of Medicine)",
                        PUBLISHED,
                    ),
                    "desflurane": _s(
                        6.0,
                        "%",
                        "desflurane prescribing information: 6.0 % at 31-65 y in O2 (as stated in "
                        "Gold MI et al., Anesthesiology 1993;79:710-4, abstract, and in " + _EGER_1992 + ")",
                        PUBLISHED,
                    ),
                    "isoflurane": _s(
                        1.15,
                        "%",
                        "isoflurane prescribing information: 1.15 % at about 44 y in O2 (as stated in "
                        + _EGER_1992
                        + ": 1.15 % in middle-aged patients)",
                        PUBLISHED,
                    ),
                    "halothane": _s(0.75, "%", _MAPLESON_A, PUBLISHED),
                    "nitrous_oxide": _s(104.0, "%", _MAPLESON_A, PUBLISHED),
                }
            ),
        ),
    }
)
#: The default set: the age equation with its own paper's MAC at 40.
DEFAULT_MAC_SET = "mapleson_1996"


def _mac40(name: str) -> Sourced:
    return MAC_SETS[DEFAULT_MAC_SET].values[name]


_BOTTLE = "common bottle size"
_METAB = "textbook range of in vivo metabolism, from memory"

AGENTS: Mapping[str, Agent] = MappingProxyType(
    {
        "sevoflurane": _agent(
            "sevoflurane",
            "Sevoflurane",
            "C4H3F7O",
            "volatile",
            molar_mass=_s(200.05, "g/mol", _MOLMASS, PUBLISHED),
            liquid_density=_s(1.52, "g/mL", _LABEL_SEVO + " (1.520-1.525 at 20 °C)"),
            density_temperature=_s(20.0, "degC", _LABEL_SEVO),
            svp_20c=_s(20.9, "kPa", _LABEL_SEVO + " (157 mmHg at 20 °C)"),
            boiling_point=_s(58.6, "degC", _LABEL_SEVO),
            blood_gas=_s(0.65, "1", _YASUDA),
            mac40=_mac40("sevoflurane"),
            vaporizer_max=_s(8.0, "%", _VAPORIZER, COMMON_PRACTICE),
            bottle_volume=_s(250.0, "mL", _BOTTLE, COMMON_PRACTICE),
            metabolised_fraction=_s(0.03, "1", _METAB + " (2-5 %)"),
            lifetime=_s(1.9, "yr", _AR6 + " (HFE-347mmz1)", PUBLISHED),
        ),
        "desflurane": _agent(
            "desflurane",
            "Desflurane",
            "C3H2F6O",
            "volatile",
            molar_mass=_s(168.04, "g/mol", _MOLMASS, PUBLISHED),
            liquid_density=_s(1.465, "g/mL", _LABEL_DES + " (1.465 at 20 °C)"),
            density_temperature=_s(20.0, "degC", _LABEL_DES),
            svp_20c=_s(89.2, "kPa", _LABEL_DES + " (669 mmHg at 20 °C)"),
            boiling_point=_s(22.8, "degC", _LABEL_DES),
            blood_gas=_s(0.42, "1", _EGER_1992 + ": blood/gas 0.42", PUBLISHED),
            mac40=_mac40("desflurane"),
            vaporizer_max=_s(18.0, "%", _VAPORIZER, COMMON_PRACTICE),
            bottle_volume=_s(240.0, "mL", _BOTTLE, COMMON_PRACTICE),
            metabolised_fraction=_s(0.0002, "1", _METAB + " (0.02 %)"),
            lifetime=_s(14.1, "yr", _AR6 + " (HFE-236ea2)", PUBLISHED),
        ),
        "isoflurane": _agent(
            "isoflurane",
            "Isoflurane",
            "C3H2ClF5O",
            "volatile",
            molar_mass=_s(184.49, "g/mol", _MOLMASS, PUBLISHED),
            liquid_density=_s(1.496, "g/mL", _LABEL_ISO + " (specific gravity 1.496)"),
            density_temperature=_s(20.0, "degC", _LABEL_ISO),
            svp_20c=_s(31.7, "kPa", _LABEL_ISO + " (238 mmHg at 20 °C)"),
            boiling_point=_s(48.5, "degC", _LABEL_ISO),
            blood_gas=_s(1.4, "1", _EGER_1992 + ": blood/gas 1.4", PUBLISHED),
            mac40=_mac40("isoflurane"),
            vaporizer_max=_s(5.0, "%", _VAPORIZER, COMMON_PRACTICE),
            bottle_volume=_s(250.0, "mL", _BOTTLE, COMMON_PRACTICE),
            metabolised_fraction=_s(0.002, "1", _METAB + " (0.2 %)"),
            lifetime=_s(3.5, "yr", _AR6 + " (HCFE-235da2)", PUBLISHED),
        ),
        "halothane": _agent(
            "halothane",
            "Halothane",
            "C2HBrClF3",
            "volatile",
            molar_mass=_s(197.38, "g/mol", _MOLMASS, PUBLISHED),
            liquid_density=_s(1.86, "g/mL", _LABEL_HAL + " (1.86 at 20 °C)"),
            density_temperature=_s(20.0, "degC", _LABEL_HAL),
            svp_20c=_s(32.4, "kPa", _LABEL_HAL + " (243 mmHg at 20 °C)"),
            boiling_point=_s(50.2, "degC", _LABEL_HAL),
            blood_gas=_s(2.4, "1", _YASUDA + " (2.3-2.5)"),
            mac40=_mac40("halothane"),
            vaporizer_max=_s(5.0, "%", _VAPORIZER, COMMON_PRACTICE),
            bottle_volume=_s(250.0, "mL", _BOTTLE, COMMON_PRACTICE),
            metabolised_fraction=_s(0.20, "1", _METAB + " (about 20 %)"),
            lifetime=_s(1.0, "yr", _AR6 + " (Halon-2311)", PUBLISHED),
        ),
        "nitrous_oxide": _agent(
            "nitrous_oxide",
            "Nitrous oxide",
            "N2O",
            "gas",
            molar_mass=_s(44.013, "g/mol", _MOLMASS, PUBLISHED),
            boiling_point=_s(-88.5, "degC", "CRC Handbook of Chemistry and Physics, from memory"),
            blood_gas=_s(0.47, "1", "Eger EI, Anesthetic Uptake and Action, 1974, from memory"),
            mac40=_mac40("nitrous_oxide"),
            metabolised_fraction=_s(0.00004, "1", "textbook value (0.004 %), from memory"),
            lifetime=_s(109.0, "yr", _AR6 + " (N2O)", PUBLISHED),
        ),
        "oxygen": _agent(
            "oxygen",
            "Oxygen",
            "O2",
            "gas",
            molar_mass=_s(31.998, "g/mol", _MOLMASS, PUBLISHED),
            boiling_point=_s(-183.0, "degC", "CRC Handbook of Chemistry and Physics, from memory"),
        ),
        "air": _agent(
            "air",
            "Medical air",
            "",
            "gas",
            molar_mass=_s(28.965, "g/mol", "US Standard Atmosphere 1976 (dry air), from memory"),
        ),
    }
)

VOLATILES = tuple(name for name, a in AGENTS.items() if a.kind == "volatile")


@dataclass(frozen=True)
class GwpSource:
    """A named set of global warming potentials (kg CO2e per kg emitted)."""

    key: str
    label: str
    horizon_years: int
    citation: str
    values: Mapping[str, Sourced]


def _gwp(value, citation, basis=PUBLISHED):
    return Sourced(value, "kg CO2e/kg", citation, basis)


_AR6_NOTE = "IPCC AR6 WG1 (2021), Ch. 7 Suppl. Table 7.SM.7"
#: Where each AR6 value was read: the chapter's published metrics data (see ``_AR6``).
_AR6_READ = "read in the chapter's data, doi:10.5281/zenodo.5211357"
_AR5_NOTE = "IPCC AR5 WG1 (2013), Ch. 8 Appendix 8.A, Table 8.A.1"
#: Where the AR5 values were read: the GHG Protocol's table of AR5 values (as carried by the
#: globalwarmingpotentials package) for N2O, desflurane and isoflurane; US EPA 40 CFR Part 98
#: Subpart A, Table A-1 (AR5 values) for sevoflurane and halothane, which that package lacks.
_AR5_GHGP = "read in the GHG Protocol table of AR5 values (globalwarmingpotentials package)"
_AR5_EPA = "read in US EPA 40 CFR Part 98 Subpart A Table A-1 (AR5 values), not in the IPCC table itself"
_SA2012 = "Sulbaek Andersen MP et al., Anesth Analg 2012;114:1081-5"


def _ar6(value, name):
    return _gwp(value, f"{_AR6_NOTE} ({name}; {_AR6_READ})")


GWP_SOURCES: Mapping[str, GwpSource] = MappingProxyType(
    {
        "ar6_gwp100": GwpSource(
            "ar6_gwp100",
            "IPCC AR6 GWP100",
            100,
            _AR6_NOTE,
            MappingProxyType(
                {
                    "nitrous_oxide": _ar6(273.0, "N2O"),
                    "desflurane": _ar6(2590.0, "HFE-236ea2"),
                    "isoflurane": _ar6(539.0, "HCFE-235da2"),
                    "sevoflurane": _ar6(195.0, "HFE-347mmz1"),
                    "halothane": _ar6(45.0, "Halon-2311"),
                }
            ),
        ),
        "ar6_gwp20": GwpSource(
            "ar6_gwp20",
            "IPCC AR6 GWP20",
            20,
            _AR6_NOTE,
            MappingProxyType(
                {
                    "nitrous_oxide": _ar6(273.0, "N2O"),
                    "desflurane": _ar6(7020.0, "HFE-236ea2"),
                    "isoflurane": _ar6(1930.0, "HCFE-235da2"),
                    "sevoflurane": _ar6(702.0, "HFE-347mmz1"),
                    "halothane": _ar6(162.0, "Halon-2311"),
                }
            ),
        ),
        "ar5_gwp100": GwpSource(
            "ar5_gwp100",
            "IPCC AR5 GWP100",
            100,
            _AR5_NOTE,
            MappingProxyType(
                {
                    "nitrous_oxide": _gwp(265.0, f"{_AR5_NOTE} (N2O; {_AR5_GHGP})"),
                    "desflurane": _gwp(1790.0, f"{_AR5_NOTE} (HFE-236ea2; {_AR5_GHGP})"),
                    "isoflurane": _gwp(491.0, f"{_AR5_NOTE} (HCFE-235da2; {_AR5_GHGP})"),
                    "sevoflurane": _gwp(216.0, f"{_AR5_NOTE} (HFE-347mmz1; {_AR5_EPA})"),
                    "halothane": _gwp(41.0, f"{_AR5_NOTE} (Halon-2311; {_AR5_EPA})"),
                }
            ),
        ),
        "sulbaek_andersen_2012": GwpSource(
            "sulbaek_andersen_2012",
            "Sulbaek Andersen et al. 2012 GWP100",
            100,
            _SA2012,
            MappingProxyType(
                {
                    "nitrous_oxide": _gwp(298.0, _SA2012 + " (IPCC AR4 value used there), from memory", FROM_MEMORY),
                    "desflurane": _gwp(2540.0, _SA2012 + ", from memory", FROM_MEMORY),
                    "isoflurane": _gwp(510.0, _SA2012 + ", from memory", FROM_MEMORY),
                    "sevoflurane": _gwp(130.0, _SA2012 + ", from memory", FROM_MEMORY),
                    # The paper may list halothane too; its value is not carried here because it
                    # could not be confirmed from memory. Give a user value under [gwp.user].
                    "halothane": _gwp(None, _SA2012 + ": halothane value not carried (unconfirmed)", FROM_MEMORY),
                }
            ),
        ),
        "user": GwpSource("user", "User values", 100, "values from the user's settings file", MappingProxyType({})),
    }
)
DEFAULT_GWP = "ar6_gwp100"


@dataclass(frozen=True)
class Prices:
    """Unit prices in one currency. All defaults are invented example prices."""

    currency: str = "GBP"
    #: Price of one bottle per volatile agent. [currency/bottle]
    bottle: Mapping[str, float] = field(
        default_factory=lambda: MappingProxyType(
            {"sevoflurane": 120.0, "desflurane": 75.0, "isoflurane": 20.0, "halothane": 30.0}
        )
    )
    #: Gas prices. [currency per 1000 L at room conditions]
    oxygen_per_1000_l: float = 3.0
    air_per_1000_l: float = 2.0
    nitrous_oxide_per_1000_l: float = 8.0
    #: CO2 absorbent. [currency/kg]
    absorbent_per_kg: float = 6.0
    #: Where the prices came from.
    basis: str = INVENTED

    def gas_per_1000_l(self, gas: str) -> float:
        """Price of ``gas`` ("oxygen", "air", "nitrous_oxide"), in currency per 1000 L."""
        return {
            "oxygen": self.oxygen_per_1000_l,
            "air": self.air_per_1000_l,
            "nitrous_oxide": self.nitrous_oxide_per_1000_l,
        }[gas]


#: Fields of the settings file's ``[absorbent]`` table: what the record audit assumes for
#: the patient and the absorbent, since records carry neither. Field -> (unit, description,
#: lowest, highest). A field left out takes the case plans' default (see
#: ``model.audit.absorbent``: a 70 kg adult, VCO2 by Brody's scaling, minute ventilation
#: from the alveolar ventilation equation at normocapnia, the plans' absorbent capacity).
ABSORBENT_FIELDS: Mapping[str, tuple[str, str, float, float]] = MappingProxyType(
    {
        "weight_kg": ("kg", "patient weight for VCO2 (Brody's scaling)", 1.0, 300.0),
        "vco2_ml_min": ("mL/min", "CO2 production", 10.0, 2000.0),
        "minute_ventilation_l_min": ("L/min", "minute ventilation", 0.5, 40.0),
        "capacity_l_per_kg": ("L/kg", "CO2 taken up per kg of absorbent", 10.0, 400.0),
    }
)


def _agent_override(old: Sourced | None, fname: str, raw, where: str, origin: str) -> Sourced:
    """A user value of agent field ``fname``, checked against its range, its default beside it."""
    if fname not in AGENT_FIELDS:
        raise InputError(where, fname, "allowed fields are " + ", ".join(AGENT_FIELDS))
    number = _finite(raw, where)
    low, high, closed = _AGENT_FIELD_RANGES[fname]
    if not (low <= number <= high if closed else low < number <= high):
        unit = AGENT_FIELDS[fname][0].replace("1", "").strip()
        raise InputError(where, raw, f"allowed range is {'[' if closed else '('}{low:g}, {high:g}] {unit}".rstrip())
    old = old or Sourced(None, AGENT_FIELDS[fname][0], "no default")
    return Sourced(number, old.unit, f"user override ({origin})", USER, old.default or old)


def _gwp_override(old: Sourced | None, raw, where: str, origin: str) -> Sourced:
    """A user GWP value (0 to ``MAX_GWP``, kg CO2e/kg), its default beside it."""
    number = _finite(raw, where)
    if number < 0:
        raise InputError(where, raw, "must not be negative")
    if number > MAX_GWP:
        raise InputError(where, raw, f"a GWP is at most {MAX_GWP:g}")
    old = old or Sourced(None, "kg CO2e/kg", "no default")
    return Sourced(number, "kg CO2e/kg", f"user override ({origin})", USER, old.default or old)


@dataclass(frozen=True)
class Reference:
    """Everything the model reads from reference data; overrides make a new Reference."""

    agents: Mapping[str, Agent] = field(default_factory=lambda: AGENTS)
    gwp_sources: Mapping[str, GwpSource] = field(default_factory=lambda: GWP_SOURCES)
    prices: Prices = field(default_factory=Prices)
    #: Where overrides came from (file paths or "dashboard"), for reports.
    override_origins: tuple[str, ...] = ()
    #: User values of the record audit's absorbent estimate (``ABSORBENT_FIELDS``); a field
    #: not here takes the case plans' default.
    absorbent: Mapping[str, Sourced] = field(default_factory=lambda: MappingProxyType({}))
    #: Key of the MAC set in use (``MAC_SETS``): every agent's ``mac40`` is that set's value
    #: unless the user gave their own.
    mac_set: str = DEFAULT_MAC_SET

    @property
    def mac_label(self) -> str:
        """Which MAC values at age 40 are in use, in words, for every output."""
        label = MAC_SETS[self.mac_set].label
        mine = [a.label for a in self.agents.values() if a.values.get("mac40") and a.values["mac40"].basis == USER]
        if mine:
            label += "; your own MAC at 40 for " + ", ".join(mine)
        return label

    def with_mac_set(self, key, where: str = "mac_set") -> Reference:
        """A new Reference whose agents take their MAC at 40 from ``MAC_SETS[key]``.

        A user's own MAC at 40 stays in use, with the set's value as its default. An unknown
        key is an InputError on ``where`` naming the sets.
        """
        if not isinstance(key, str) or key not in MAC_SETS:
            raise InputError(where, key, "allowed MAC sets are " + ", ".join(MAC_SETS))
        agents = dict(self.agents)
        for name, value in MAC_SETS[key].values.items():
            agent = agents[name]
            old = agent.values.get("mac40")
            new = replace(old, default=value) if old is not None and old.basis == USER else value
            agents[name] = replace(agent, values=MappingProxyType({**agent.values, "mac40": new}))
        return replace(self, agents=MappingProxyType(agents), mac_set=key)

    def agent(self, name: str, field_name: str = "agent") -> Agent:
        """Look up an agent by name (case-insensitive; "N2O" and "nitrous oxide" accepted)."""
        key = normalise_agent_name(name)
        if key not in self.agents:
            raise InputError(field_name, name, "allowed agents are " + ", ".join(self.agents))
        return self.agents[key]

    def volatile(self, name: str, field_name: str = "agent") -> Agent:
        """Look up a volatile agent by name; N2O or an unknown name is an InputError on ``field_name``."""
        agent = self.agent(name, field_name)
        if agent.kind != "volatile":
            raise InputError(field_name, name, "allowed volatile agents are " + ", ".join(VOLATILES))
        return agent

    def gwp(self, agent: str, source: str = DEFAULT_GWP, used: bool = True) -> float:
        """GWP of ``agent`` under ``source``, in kg CO2e/kg.

        With ``used`` False (nothing of the agent is emitted, e.g. a plan without N2O), a
        source that has no value for it gives 0 instead of an error.
        """
        src = self.gwp_source(source)
        value = src.values.get(agent)
        if (value is None or value.value is None) and not used:
            return 0.0
        if value is None or value.value is None:
            raise InputError(
                "gwp_source",
                source,
                f"{src.label} has no value for {agent}; choose another source "
                f"or give a user value (dashboard: Reference page, GWP values; "
                f"command line: [gwp.user] in the settings file)",
            )
        return value.value

    def gwp_source(self, source: str) -> GwpSource:
        """Look up a GWP source by key; an unknown key is an InputError naming the keys."""
        if source not in self.gwp_sources:
            raise InputError("gwp_source", source, "allowed sources are " + ", ".join(self.gwp_sources))
        return self.gwp_sources[source]

    def with_overrides(self, overrides: Mapping, origin: str) -> Reference:
        """Return a new Reference with user overrides applied; see ``load_settings``.

        ``overrides`` has optional tables ``agents.<agent>.<field>``, ``gwp.<source>.<agent>``,
        ``prices`` (``currency``, ``bottle.<agent>``, ``oxygen_per_1000_l``, ...),
        ``absorbent`` (``ABSORBENT_FIELDS``) and ``mac.set`` (a key of ``MAC_SETS``, applied
        before the agents' own values). Every replaced value keeps its default beside it, so
        the reference table can show both.
        """
        allowed_top = ("agents", "gwp", "prices", "absorbent", "mac")
        for key in overrides:
            if key not in allowed_top:
                raise InputError(f"{origin}: [{key}]", key, "allowed tables are " + ", ".join(allowed_top))
        base = self
        mac = _table(overrides.get("mac", {}), f"{origin}: [mac]")
        for key in mac:
            if key != "set":
                raise InputError(f"{origin}: mac.{key}", key, "the only field of [mac] is set")
        if "set" in mac:
            base = base.with_mac_set(mac["set"], f"{origin}: mac.set")
        return Reference(
            MappingProxyType(base._agents_with(overrides.get("agents", {}), origin)),
            MappingProxyType(base._gwp_sources_with(overrides.get("gwp", {}), origin)),
            base._prices_with(overrides.get("prices", {}), origin),
            base.override_origins + (origin,),
            MappingProxyType(base._absorbent_with(overrides.get("absorbent", {}), origin)),
            base.mac_set,
        )

    def _agents_with(self, table, origin: str) -> dict[str, Agent]:
        """The agents with the ``[agents]`` table's values (each checked against its range)."""
        agents = dict(self.agents)
        for name, fields in _table(table, f"{origin}: [agents]").items():
            agent = self.agent(name, f"{origin}: [agents.{name}]")
            values = dict(agent.values)
            for fname, raw in _table(fields, f"{origin}: [agents.{name}]").items():
                values[fname] = _agent_override(
                    values.get(fname), fname, raw, f"{origin}: agents.{name}.{fname}", origin
                )
            agents[agent.name] = replace(agent, values=MappingProxyType(values))
        return agents

    def _gwp_sources_with(self, table, origin: str) -> dict[str, GwpSource]:
        """The GWP sources with the ``[gwp.<source>]`` tables' values."""
        sources = dict(self.gwp_sources)
        for skey, values_table in _table(table, f"{origin}: [gwp]").items():
            src = self.gwp_source(skey)
            values = dict(src.values)
            for aname, raw in _table(values_table, f"{origin}: [gwp.{skey}]").items():
                where = f"{origin}: gwp.{skey}.{aname}"
                agent = self.agent(aname, where)
                values[agent.name] = _gwp_override(values.get(agent.name), raw, where, origin)
            sources[skey] = replace(src, values=MappingProxyType(values))
        return sources

    def _prices_with(self, table, origin: str) -> Prices:
        """The prices with the ``[prices]`` table's values (the same prices without one)."""
        ptable = _table(table, f"{origin}: [prices]")
        if not ptable:
            return self.prices
        changes: dict[str, Any] = {"basis": f"user prices ({origin})"}
        for key, raw in ptable.items():
            changes[key] = self._price_change(key, raw, f"{origin}: prices.{key}")
        return replace(self.prices, **changes)

    def _price_change(self, key: str, raw, where: str):
        """One field of ``[prices]``: the currency label, the bottle table, or a price."""
        if key == "currency":
            if not isinstance(raw, str) or not 0 < len(raw.strip()) <= 12:
                raise InputError(where, raw, "expected a short currency label such as 'GBP'")
            return raw.strip()
        if key == "bottle":
            bottle = dict(self.prices.bottle)
            for aname, braw in _table(raw, where).items():
                agent = self.volatile(aname, f"{where}.{aname}")
                bottle[agent.name] = _price(braw, f"{where}.{aname}")
            return MappingProxyType(bottle)
        if key in {f.name for f in dataclasses.fields(Prices)} - {"currency", "bottle", "basis"}:
            return _price(raw, where)
        allowed = [f.name for f in dataclasses.fields(Prices) if f.name != "basis"]
        raise InputError(where, key, "allowed price fields are " + ", ".join(allowed))

    def _absorbent_with(self, table, origin: str) -> dict[str, Sourced]:
        """The record audit's absorbent values with the ``[absorbent]`` table's (``ABSORBENT_FIELDS``)."""
        absorbent = dict(self.absorbent)
        for fname, raw in _table(table, f"{origin}: [absorbent]").items():
            where = f"{origin}: absorbent.{fname}"
            if fname not in ABSORBENT_FIELDS:
                raise InputError(where, fname, "allowed fields are " + ", ".join(ABSORBENT_FIELDS))
            unit, _, low, high = ABSORBENT_FIELDS[fname]
            number = _finite(raw, where)
            if not low <= number <= high:
                raise InputError(where, raw, f"allowed range is [{low:g}, {high:g}] {unit}")
            absorbent[fname] = Sourced(number, unit, f"user override ({origin})", USER)
        return absorbent

    def table(self):
        """The reference table as rows of dicts: item, field, value, unit, source, basis, default.

        ``default`` is the built-in value a user override replaced (None where nothing was
        overridden); ``default_source`` is where that built-in value came from.
        """
        rows = []
        base_prices = Prices()
        for agent in self.agents.values():
            for fname, (unit, description) in AGENT_FIELDS.items():
                v = agent.values.get(fname)
                if v is None:
                    continue
                rows.append(
                    dict(
                        item=agent.label,
                        field=description,
                        value=v.value,
                        unit=unit,
                        source=v.source,
                        basis=v.basis,
                        **_default_of(v),
                    )
                )
        for mset in MAC_SETS.values():
            for aname, v in mset.values.items():
                in_use = " (in use)" if mset.key == self.mac_set else ""
                rows.append(
                    dict(
                        item=self.agents[aname].label,
                        field=f"MAC at 40, set {mset.label}{in_use}",
                        value=v.value,
                        unit=v.unit,
                        source=v.source,
                        basis=v.basis,
                        default=None,
                        default_source=None,
                    )
                )
        for src in self.gwp_sources.values():
            for aname, v in src.values.items():
                rows.append(
                    dict(
                        item=self.agents[aname].label,
                        field=f"GWP, {src.label}",
                        value=v.value,
                        unit=v.unit,
                        source=v.source,
                        basis=v.basis,
                        **_default_of(v),
                    )
                )
        p = self.prices
        for aname, price in p.bottle.items():
            rows.append(
                dict(
                    item=self.agents[aname].label,
                    field="price per bottle",
                    value=price,
                    unit=f"{p.currency}/bottle",
                    source=p.basis,
                    basis=_price_basis(p),
                    **_price_default(price, base_prices.bottle.get(aname)),
                )
            )
        for key, label in (
            ("oxygen_per_1000_l", "Oxygen"),
            ("air_per_1000_l", "Medical air"),
            ("nitrous_oxide_per_1000_l", "Nitrous oxide"),
        ):
            rows.append(
                dict(
                    item=label,
                    field="price per 1000 L",
                    value=getattr(p, key),
                    unit=f"{p.currency}/1000 L",
                    source=p.basis,
                    basis=_price_basis(p),
                    **_price_default(getattr(p, key), getattr(base_prices, key)),
                )
            )
        rows.append(
            dict(
                item="CO2 absorbent",
                field="price per kg",
                value=p.absorbent_per_kg,
                unit=f"{p.currency}/kg",
                source=p.basis,
                basis=_price_basis(p),
                **_price_default(p.absorbent_per_kg, base_prices.absorbent_per_kg),
            )
        )
        for fname, v in self.absorbent.items():
            rows.append(
                dict(
                    item="CO2 absorbent, record audit",
                    field=ABSORBENT_FIELDS[fname][1],
                    value=v.value,
                    unit=v.unit,
                    source=v.source,
                    basis=v.basis,
                    default=None,
                    default_source="the case plans' default patient",
                )
            )
        return rows


def _default_of(v: Sourced) -> dict:
    if v.default is None:
        return dict(default=None, default_source=None)
    return dict(default=v.default.value, default_source=v.default.source)


def _price_default(value, built_in) -> dict:
    if built_in is None or value == built_in:
        return dict(default=None, default_source=None)
    return dict(default=built_in, default_source=f"{INVENTED} ({Prices().currency})")


def _price_basis(p: Prices) -> str:
    return INVENTED if p.basis == INVENTED else USER


def _table(value, where) -> Mapping:
    if not isinstance(value, Mapping):
        raise InputError(where, value, "expected a table")
    return value


def _finite(raw, where) -> float:
    if isinstance(raw, bool) or not isinstance(raw, (int, float)) or not math.isfinite(raw):
        raise InputError(where, raw, "expected a finite number")
    return float(raw)


def _non_negative(raw, where) -> float:
    number = _finite(raw, where)
    if number < 0:
        raise InputError(where, raw, "must not be negative")
    return number


#: Highest GWP a user may give. [kg CO2e/kg] Common practice, no source: above every
#: published value (the highest, of SF6, is some 25,000), small enough that CO2e stays finite.
MAX_GWP = 1e6
#: Highest unit price accepted (per bottle, per 1000 L, per kg), in any currency. Common
#: practice, no source: room for currencies of many digits, small enough that a year's
#: cost stays a finite number.
MAX_PRICE = 1e9


def _price(raw, where) -> float:
    number = _non_negative(raw, where)
    if number > MAX_PRICE:
        raise InputError(where, raw, f"a unit price is at most {MAX_PRICE:g}")
    return number


_ALIASES = {
    "n2o": "nitrous_oxide",
    "nitrous oxide": "nitrous_oxide",
    "nitrous": "nitrous_oxide",
    "o2": "oxygen",
    "sevo": "sevoflurane",
    "des": "desflurane",
    "iso": "isoflurane",
    "medical air": "air",
}


def normalise_agent_name(name) -> str:
    """Canonical key of an agent name: lower case, aliases resolved ("N2O" -> nitrous_oxide)."""
    if not isinstance(name, str):
        return repr(name)
    key = name.strip().lower()
    key = _ALIASES.get(key, key)
    return key.replace(" ", "_")


def load_settings(path: str | os.PathLike | None = None, base: Reference | None = None) -> Reference:
    """Reference data with the overrides of a user settings file (TOML) applied.

    With ``path`` None, the environment variable ``GAS_LEDGER_SETTINGS`` names the file;
    with neither, the built-in reference is returned.
    """
    base = base or Reference()
    path = path or os.environ.get("GAS_LEDGER_SETTINGS")
    if not path:
        return base
    p = Path(path)
    text = read_user_text(p, "settings", MAX_SETTINGS_BYTES)
    data = parse_toml(
        text, f"settings file {p}", "settings", "the file is not valid TOML (see 'Settings file' in docs/formats.md)"
    )
    return base.with_overrides(data, str(p))


DEFAULT_REFERENCE = Reference()
