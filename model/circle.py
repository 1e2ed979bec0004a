"""The circle system with a patient in it, simulated for many cases at once.

Fresh gas in, uptake, excess gas vented, CO2 absorbed: the vectorised API used by the year
model.

Model
-----
Three species are followed: O2, N2O and the volatile agent (index 0, 1, 2). Each lives in

* the circle system, one well-mixed gas volume ``V_c`` (inspired gas = circuit gas);
* the lungs, one well-mixed volume, the functional residual capacity ``V_L`` (end-tidal
  gas = alveolar gas), exchanging with the circuit at the alveolar ventilation ``V_A``;
* tissue compartments fed by the alveolar gas (see :mod:`model.uptake`), for N2O and agent;
  O2 leaves the lungs at the patient's O2 consumption ``VO2``.

Fresh gas enters the circuit at ``FGF`` (O2, air, N2O as delivered after the workstation's
ratio limit) plus the vaporizer's vapour ``FGF x dial`` (Dion's convention, as in
:func:`model.vapour.liquid_used_ml`). Excess gas leaves through the valve at the circuit's
composition at ``max(FGF (1 + dial) - VO2 - N2O uptake - agent uptake, 0)``, the balance
behind the textbook steady-state inspired O2 (docs/methods.md, Inspired oxygen). CO2 into the absorber is
``VCO2 x max(1 - FGF / VE, 0)``, the rebreathed share of exhaled gas.

Integration and bookkeeping
---------------------------
Each phase is cut into steps (:func:`step_schedule`): 0.25 min over its first 10 minutes,
then 1 min steps growing to 5 % of the time into the phase, so a day-long phase takes some
hundred steps rather than fifteen hundred. A step
is a backward-Euler (implicit) step of the linear system: unconditionally stable, never
negative, and exact at steady state. The tissue compartments are eliminated in closed form,
leaving a 2 x 2 system (circuit, lungs) per species and case, solved explicitly with numpy
over all cases at once. The valve flow uses the uptake of the previous step (a lag of one
step). The amounts delivered, taken up and vented are booked from the same fluxes that move
the state, so ``delivered = taken up + vented + change held`` holds to rounding error for
every species, whatever the step.

In "target" mode the dial is found each step so that the end-tidal agent meets the target
(the step is affine in the dial), clamped to 0 and the vaporizer maximum; the target is an
end-tidal MAC multiple of the age-adjusted MAC, less the MAC share of the end-tidal N2O.

Simplifications (documented): gas volumes are not corrected between room conditions and
body temperature; nitrogen is not followed (the balance gas); O2 stores of the body are not
modelled; the lungs exchange as one compartment without a shunt.
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Mapping
from dataclasses import dataclass, fields, replace
from typing import Any, NamedTuple, cast

import numpy as np

from model.freshgas import apply_ratio_limit, delivered_fractions
from model.mac import mac_at_age
from model.patient import PatientValues, resolve_patient
from model.physiology import check_physiology, multiplier
from model.reference import AIR_O2_FRACTION, DEFAULT_REFERENCE, Agent
from model.uptake import DEFAULT_UPTAKE_MODEL, UPTAKE_MODELS, tissue_compartments
from model.vapour import vapour_per_ml_liquid

#: Gas volume of an adult circle system with its absorber canister. [L]
#: Source: typical workstation circle systems hold about 3-7 L (from memory); 6 L taken.
CIRCLE_VOLUME_L = 6.0
#: CO2 taken up per kg of soda lime in clinical use. [L CO2 / kg]
#: Source: about 10-20 L per 100 g in practice, 26 L per 100 g in theory (from memory);
#: the middle of the practical range is taken.
ABSORBENT_CAPACITY_L_PER_KG = 150.0
#: Integration steps: ``STEP_MIN`` over the first ``FINE_MIN`` minutes of each phase,
#: then ``COARSE_STEP_MIN``. [min]  A numerical choice, no source: the totals of the demo
#: plans change by under 1 % against a uniform 0.05 min step (tests/model/test_circle.py).
STEP_MIN = 0.25
FINE_MIN = 10.0
COARSE_STEP_MIN = 1.0
#: Past ``FINE_MIN``, a step is at most this share of the time into the phase (and at least
#: ``COARSE_STEP_MIN``): 1 min steps up to 20 min, 3 min at an hour, 72 min at a day, so a
#: phase of any length takes some hundred steps (a day's phase 88 coarse steps instead of
#: 1,430). Late in a phase only the slow tissues still move, on time scales of hours. A
#: numerical choice, no source: tests/model/test_circle.py checks the demo plans and day-long
#: phases against a uniform fine step.
STEP_GROWTH = 0.05
#: End-tidal agent within this share of its target counts as reached. [1]
#: Common practice, no source.
TARGET_TOLERANCE = 0.05
SPECIES = ("oxygen", "nitrous_oxide", "agent")
#: Per-phase amounts: 0 (not NaN) where a case skips the phase.
_PHASE_AMOUNTS = (
    "phase_liquid_ml",
    "phase_agent_uptake_l",
    "phase_agent_vented_l",
    "phase_agent_gross_uptake_l",
    "phase_nitrous_oxide_gross_uptake_l",
    "phase_co2_absorbed_l",
)


def steady_state_fio2(fgf_l_min, fd_o2, vo2_l_min, n2o_uptake_l_min=0.0, agent_uptake_l_min=0.0):
    """Inspired O2 of a circle at steady state.

    Parameters
    ----------
    fgf_l_min : array_like
        Fresh gas flow. [L/min]
    fd_o2 : array_like
        O2 fraction of the fresh gas. [1]
    vo2_l_min : array_like
        O2 consumption. [L/min]
    n2o_uptake_l_min, agent_uptake_l_min : array_like
        Uptake of N2O and agent. [L/min]

    Returns
    -------
    ndarray
        Inspired O2 fraction [1]; clipped to [0, 1]; NaN where nothing is vented
        (closed circuit: the balance has no steady state unless O2 in equals VO2).

    Notes
    -----
    ``FiO2 = (FGF FdO2 - VO2) / (FGF - VO2 - V_N2O - V_agent)``, the mass balance of O2
    over the circle and lungs with excess gas vented at the inspired composition.

    References
    ----------
    .. [1] Textbook mass balance of the circle system; see docs/methods.md, Inspired
       oxygen (common practice, no source).
    """
    fgf = np.asarray(fgf_l_min, dtype=float)
    vent = fgf - np.asarray(vo2_l_min, dtype=float) - n2o_uptake_l_min - agent_uptake_l_min
    num = fgf * np.asarray(fd_o2, dtype=float) - vo2_l_min
    with np.errstate(divide="ignore", invalid="ignore"):
        f = np.where(vent > 0, num / np.where(vent > 0, vent, 1.0), np.nan)
    return np.where(np.isnan(f), np.nan, np.clip(f, 0.0, 1.0))


def lowest_safe_fd_o2(fgf_l_min, vo2_l_min, floor=0.30):
    """Lowest fresh gas O2 fraction that keeps the steady-state inspired O2 at the floor.

    Parameters
    ----------
    fgf_l_min : array_like
        Fresh gas flow. [L/min]
    vo2_l_min : array_like
        O2 consumption. [L/min]
    floor : array_like
        Inspired O2 floor. [1]

    Returns
    -------
    ndarray
        ``FdO2_min = (VO2 + floor (FGF - VO2)) / FGF`` [1]; NaN where the flow does not
        exceed the O2 consumption (no fresh gas mix can keep up).

    Notes
    -----
    The steady-state balance of :func:`steady_state_fio2` solved for FdO2 with N2O and
    agent uptake taken as zero (late in a case), which is the conservative case: uptake
    shrinks the vented flow and raises inspired O2.

    References
    ----------
    .. [1] Textbook mass balance of the circle system; see docs/methods.md, Inspired oxygen.
    """
    fgf = np.asarray(fgf_l_min, dtype=float)
    vo2 = np.asarray(vo2_l_min, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):  # a flow just above 0: masked below
        f = (vo2 + np.asarray(floor, dtype=float) * (fgf - vo2)) / fgf
    return np.where(fgf > vo2, np.clip(f, 0.0, 1.0), np.nan)


def rebreathed_share(fgf_l_min, minute_ventilation_l_min):
    """Share of exhaled gas that returns through the absorber.

    Parameters
    ----------
    fgf_l_min, minute_ventilation_l_min : array_like
        Fresh gas flow and minute ventilation. [L/min]

    Returns
    -------
    ndarray
        ``max(1 - FGF / VE, 0)`` [1]: none at or above minute ventilation, all in a
        closed circuit.

    References
    ----------
    .. [1] Common practice, no source (the fresh gas displaces an equal volume of
       exhaled gas through the valve).
    """
    fgf = np.asarray(fgf_l_min, dtype=float)
    ve = np.asarray(minute_ventilation_l_min, dtype=float)
    return np.clip(1.0 - fgf / ve, 0.0, 1.0)


def step_schedule(
    minutes, step_min=STEP_MIN, fine_min=FINE_MIN, coarse_step_min=COARSE_STEP_MIN, growth=STEP_GROWTH
) -> tuple:
    """Integration steps of one phase for many cases: ``((dt, n), ...)``.

    Parameters
    ----------
    minutes : float or array_like
        The phase's duration in each case. [min]
    step_min, fine_min : float
        Step over the first ``fine_min`` minutes. [min]
    coarse_step_min : float
        Shortest step after them. [min]
    growth : float
        After them a step is at most ``growth`` x the time into the phase. [1]

    Returns
    -------
    tuple of (ndarray, int)
        Segments of ``n`` steps of length ``dt`` (one per case, shape of ``minutes``). Cases
        share the step count (that of the longest); each case scales the steps to its own
        duration, so every case's steps keep within both bounds.
    """
    minutes = np.asarray(minutes, dtype=float)
    longest = float(np.max(minutes)) if minutes.size else 0.0
    if longest <= 0:
        return ()
    fine_part = np.minimum(minutes, fine_min)
    n_fine = max(1, int(math.ceil(min(longest, fine_min) / step_min - 1e-9)))
    segments = [(fine_part / n_fine, n_fine)]
    coarse = longest - fine_min
    if coarse > 1e-9:
        # The longest case's coarse steps; runs of equal steps stay one segment.
        t, sizes = fine_min, []
        while t < longest - 1e-9:
            dt = min(max(coarse_step_min, growth * t), longest - t)
            sizes.append(dt)
            t += dt
        if len(sizes) > 1 and sizes[-1] < 0.5 * sizes[-2]:  # no sliver at the end
            sliver = sizes.pop()  # (``sizes[-2] += sizes.pop()`` would add it one step too early)
            sizes[-1] += sliver
        share = (minutes - fine_part) / coarse
        run = 1
        for k, dt in enumerate(sizes):
            if k + 1 < len(sizes) and abs(sizes[k + 1] - dt) <= 1e-12 * dt:
                run += 1
                continue
            segments.append((dt * share, run))
            run = 1
    return tuple(segments)


_SERIES_KEYS = (
    "time_min",
    "dial_pct",
    "inspired_agent",
    "end_tidal_agent",
    "inspired_o2",
    "end_tidal_o2",
    "inspired_n2o",
    "end_tidal_n2o",
    "agent_uptake_l_min",
    "agent_vented_l_min",
    "liquid_ml",
    "co2_absorbed_l",
    "absorbent_g",
    "end_tidal_mac",
    "phase_index",
)


class _FieldMapping(Mapping):
    """Read-only mapping view of a frozen dataclass of arrays: ``obj["name"]`` is ``obj.name``."""

    __slots__ = ()

    def __getitem__(self, key: str):
        if key not in self._keys():
            raise KeyError(key)
        return getattr(self, key)

    def __iter__(self) -> Iterator[str]:
        return iter(self._keys())

    def __len__(self) -> int:
        return len(self._keys())

    def _keys(self) -> tuple[str, ...]:
        return tuple(f.name for f in fields(cast(Any, self)))

    def as_dict(self) -> dict:
        """A plain dict of the same keys and arrays (the arrays are not copied)."""
        return {key: self[key] for key in self}


@dataclass(frozen=True, eq=False)
class StepSeries(_FieldMapping):
    """State after every integration step, arrays of shape ``(n_steps + 1, n_cases)``.

    Row 0 is the start. Fractions in [0, 1], dial in %, flows in L/min, volumes in L at room
    conditions, liquid in mL, mass in g, time in min; ``phase_index`` is the phase of the
    step (as float).
    """

    time_min: np.ndarray
    dial_pct: np.ndarray
    inspired_agent: np.ndarray
    end_tidal_agent: np.ndarray
    inspired_o2: np.ndarray
    end_tidal_o2: np.ndarray
    inspired_n2o: np.ndarray
    end_tidal_n2o: np.ndarray
    agent_uptake_l_min: np.ndarray
    agent_vented_l_min: np.ndarray
    liquid_ml: np.ndarray
    co2_absorbed_l: np.ndarray
    absorbent_g: np.ndarray
    end_tidal_mac: np.ndarray
    phase_index: np.ndarray


@dataclass(frozen=True, eq=False)
class SpeciesBalance(_FieldMapping):
    """Mass balance of one species over the case, arrays of shape ``(n_cases,)``, in L.

    ``delivered_l = uptake_l + vented_l + held_end_l - held_start_l`` to rounding error;
    ``uptake_l`` is the net uptake into the tissues (O2: consumed), ``held_*`` the gas in
    circuit and lungs, ``tissue_end_l`` what the tissues hold at the end (0 for O2).
    """

    delivered_l: np.ndarray
    uptake_l: np.ndarray
    vented_l: np.ndarray
    held_start_l: np.ndarray
    held_end_l: np.ndarray
    tissue_end_l: np.ndarray


@dataclass(frozen=True, eq=False)
class PhaseResults(_FieldMapping):
    """Per-phase results, arrays of shape ``(n_phases, n_cases)``.

    The amounts (``liquid_ml`` [mL], ``agent_uptake_l``, ``agent_vented_l``,
    ``agent_gross_uptake_l``, ``nitrous_oxide_gross_uptake_l``, ``co2_absorbed_l`` [L]) are 0
    where a case skips the phase, the other results of the integration NaN.
    ``target_fraction`` is the end-tidal agent aimed at, at phase end (NaN in dial mode);
    ``time_to_target_min`` NaN if not reached or in dial mode;
    ``time_at_max_below_target_min`` the time with the dial at the vaporizer maximum and the
    end-tidal agent still under 95 % of target. Flows (delivered, after the ratio limit) in
    L/min, fractions in [0, 1], dial in %, time in min.
    """

    liquid_ml: np.ndarray
    mean_dial_pct: np.ndarray
    agent_uptake_l: np.ndarray
    agent_vented_l: np.ndarray
    agent_gross_uptake_l: np.ndarray
    nitrous_oxide_gross_uptake_l: np.ndarray
    co2_absorbed_l: np.ndarray
    min_inspired_o2: np.ndarray
    end_tidal_agent: np.ndarray
    inspired_agent: np.ndarray
    end_tidal_mac: np.ndarray
    target_fraction: np.ndarray
    time_to_target_min: np.ndarray
    time_at_max_below_target_min: np.ndarray
    fgf_l_min: np.ndarray
    oxygen_l_min: np.ndarray
    nitrous_oxide_l_min: np.ndarray
    air_l_min: np.ndarray
    altered: np.ndarray
    fd_o2: np.ndarray
    fd_n2o: np.ndarray
    rebreathed_share: np.ndarray
    lowest_safe_fd_o2: np.ndarray
    steady_fio2: np.ndarray
    target_mode: np.ndarray
    minutes: np.ndarray
    dial_pct: np.ndarray
    target_mac: np.ndarray


@dataclass(frozen=True, eq=False)
class Simulation(Mapping):
    """Result of :func:`simulate_cases`: named arrays, and a read-only mapping view of them.

    Totals have shape ``(n_cases,)``: ``liquid_ml`` [mL]; ``co2_absorbed_l``,
    ``agent_gross_uptake_l`` (agent that entered the blood before any came back out: the
    base of the metabolised share), ``nitrous_oxide_gross_uptake_l``, ``o2_shortfall_l`` (O2
    the patient needed but the circle could not supply) [L]; ``absorbent_g`` [g];
    ``min_inspired_o2`` [1] and ``min_inspired_o2_time_min`` [min]; ``end_tidal_mac_hours``
    [MAC-h]; the patient's ``vo2_l_min``, ``vco2_l_min``, ``minute_ventilation_l_min``,
    ``cardiac_output_l_min`` [L/min]; the age-adjusted ``mac_agent_pct``, ``mac_n2o_pct``
    [%]; the settings ``absorbent_capacity_l_per_kg`` [L/kg], ``circle_volume_l``, ``frc_l``
    [L]. ``oxygen``, ``nitrous_oxide``, ``agent`` are the :class:`SpeciesBalance` of each
    species, ``phases`` the :class:`PhaseResults`, ``series`` the :class:`StepSeries` (None
    unless recorded).

    The mapping view keeps the flat keys: ``sim["liquid_ml"]``, ``sim["agent_vented_l"]``
    (``sim.agent.vented_l``), ``sim["phase_fd_o2"]`` (``sim.phases.fd_o2``),
    ``sim["series"]`` (absent when not recorded); :meth:`as_dict` gives them as a dict.
    """

    liquid_ml: np.ndarray
    co2_absorbed_l: np.ndarray
    agent_gross_uptake_l: np.ndarray
    nitrous_oxide_gross_uptake_l: np.ndarray
    absorbent_g: np.ndarray
    min_inspired_o2: np.ndarray
    min_inspired_o2_time_min: np.ndarray
    o2_shortfall_l: np.ndarray
    end_tidal_mac_hours: np.ndarray
    vo2_l_min: np.ndarray
    vco2_l_min: np.ndarray
    minute_ventilation_l_min: np.ndarray
    cardiac_output_l_min: np.ndarray
    mac_agent_pct: np.ndarray
    mac_n2o_pct: np.ndarray
    absorbent_capacity_l_per_kg: np.ndarray
    circle_volume_l: np.ndarray
    frc_l: np.ndarray
    oxygen: SpeciesBalance
    nitrous_oxide: SpeciesBalance
    agent: SpeciesBalance
    phases: PhaseResults
    series: StepSeries | None = None

    def __getitem__(self, key: str):
        path = _SIMULATION_KEYS.get(key)
        if path is None or (key == "series" and self.series is None):
            raise KeyError(key)
        part, name = path
        return getattr(self, name) if part is None else getattr(getattr(self, part), name)

    def __iter__(self) -> Iterator[str]:
        return (key for key in _SIMULATION_KEYS if key != "series" or self.series is not None)

    def __len__(self) -> int:
        return len(_SIMULATION_KEYS) - (self.series is None)

    def as_dict(self) -> dict:
        """The flat keys as a plain dict (arrays not copied; ``series`` a :class:`StepSeries`)."""
        return {key: self[key] for key in self}


_SIMULATION_KEYS: dict[str, tuple[str | None, str]] = {
    **{f.name: (None, f.name) for f in fields(Simulation) if f.type == "np.ndarray"},
    **{f"{s}_{f.name}": (s, f.name) for s in SPECIES for f in fields(SpeciesBalance)},
    **{f"phase_{f.name}": ("phases", f.name) for f in fields(PhaseResults)},
    "series": (None, "series"),
}


class _PhaseInputs(NamedTuple):
    """Phase inputs checked and broadcast to ``(n_phases, n_cases)``."""

    minutes: np.ndarray  # [min]
    oxygen_l_min: np.ndarray  # requested [L/min]
    air_l_min: np.ndarray  # [L/min]
    nitrous_oxide_l_min: np.ndarray  # requested [L/min]
    dial: np.ndarray  # vaporizer dial as a fraction [1], NaN in target phases
    target: np.ndarray  # end-tidal target [MAC multiple], NaN in dial phases
    target_mode: np.ndarray  # bool


class _CaseConstants(NamedTuple):
    """Per-case constants of the integration, shape ``(n_cases,)``."""

    weight_kg: np.ndarray
    cardiac_output_l_min: np.ndarray
    vo2_l_min: np.ndarray
    vco2_l_min: np.ndarray
    minute_ventilation_l_min: np.ndarray
    alveolar_ventilation_l_min: np.ndarray
    frc_l: np.ndarray
    circle_volume_l: np.ndarray
    mac_agent: np.ndarray  # age-adjusted, as a fraction [1]
    mac_n2o: np.ndarray  # [1]
    dial_max: float  # vaporizer maximum as a fraction [1]


class _Flows(NamedTuple):
    """Delivered fresh gas per phase, ``(n_phases, n_cases)``, after the ratio limit."""

    oxygen_l_min: np.ndarray
    nitrous_oxide_l_min: np.ndarray
    altered: np.ndarray
    fgf_l_min: np.ndarray
    fd_o2: np.ndarray
    fd_n2o: np.ndarray


class _Tissues(NamedTuple):
    """Tissue compartments, rows 0 = N2O, 1 = agent: conductances and capacities (2, k, n)."""

    conductance: np.ndarray  # [L/min]
    capacity: np.ndarray  # [L]


@dataclass
class _State:
    """The gas state and the case's running totals, advanced in place step by step."""

    fc: np.ndarray  # circuit fractions (3, n) [1]
    fa: np.ndarray  # lung (alveolar) fractions (3, n) [1]
    p: np.ndarray  # tissue partial pressures as fractions (2, k, n) [1]
    u_prev: np.ndarray  # total uptake rate of the previous step (n,) [L/min]
    d_prev: np.ndarray  # dial of the previous step (n,) [1]
    delivered: np.ndarray  # (3, n) [L]
    uptake: np.ndarray  # (3, n) [L]
    gross: np.ndarray  # N2O and agent into the blood, before any comes back (2, n) [L]
    vented: np.ndarray  # (3, n) [L]
    co2_total: np.ndarray  # (n,) [L]
    min_fio2: np.ndarray  # (n,) [1]
    min_fio2_t: np.ndarray  # (n,) [min]
    et_mac_min: np.ndarray  # end-tidal MAC x minutes (n,)
    elapsed: np.ndarray  # time at the start of the phase (n,) [min]


class _PhaseSetting(NamedTuple):
    """What one phase sets, shape ``(n_cases,)`` (``inflow`` (3, n))."""

    phase: int  # its index
    minutes: np.ndarray  # [min]
    fgf_l_min: np.ndarray  # [L/min]
    inflow: np.ndarray  # O2, N2O, agent (none) in the fresh gas [L/min]
    target_mode: np.ndarray  # bool
    dial: np.ndarray  # [1], 0 in target phases
    target: np.ndarray  # [MAC multiple]
    any_target: bool
    co2_rate: np.ndarray  # CO2 into the absorber [L/min]


@dataclass
class _PhaseTally:
    """Running values of one phase (n,)."""

    start_uptake: np.ndarray  # agent uptake at the start [L]
    start_vented: np.ndarray  # agent vented at the start [L]
    start_gross: np.ndarray  # gross uptake at the start (2, n) [L]
    # The phase's own sum: as a difference of running totals, a phase at 1e-9 L/min after
    # one at 1 L/min would lose its mean dial to cancellation (relative error 1e-8).
    deliv_ag: np.ndarray  # [L]
    min_o2: np.ndarray  # [1]
    t_reach: np.ndarray  # [min]
    t_at_max: np.ndarray  # [min]
    t_in: np.ndarray  # [min]
    t_frac: np.ndarray  # end-tidal agent aimed at [1]


class _Segment(NamedTuple):
    """Coefficients shared by the steps of one segment (steps of length ``dt``)."""

    dt: np.ndarray  # (n,) [min]
    g_eff: np.ndarray  # (2, k, n)
    h: np.ndarray  # (2, k, n)
    a_tis: np.ndarray  # (2, n)
    a12: np.ndarray
    a12sq: np.ndarray
    a22: np.ndarray  # (3, n)
    dt_inflow: np.ndarray  # (3, n) [L]
    beta_fgf: np.ndarray  # [L]


class _Step(NamedTuple):
    """One step's new state and the fluxes that moved it."""

    fc: np.ndarray
    fa: np.ndarray
    s_o2: np.ndarray  # O2 consumption [L/min]
    dial: np.ndarray  # [1]
    t_frac: np.ndarray | None  # end-tidal agent aimed at [1] (None without target phases)
    deliv_ag: np.ndarray  # agent vapour delivered [L]
    b: np.ndarray  # return from the tissues (2, n) [L/min]
    vent: np.ndarray  # valve flow [L/min]
    up_rate: np.ndarray  # net uptake of N2O and agent (2, n) [L/min]


class _PhaseEnd(NamedTuple):
    """A phase's results at its end, shape ``(n_cases,)`` (see :class:`PhaseResults`)."""

    liquid_ml: np.ndarray
    mean_dial_pct: np.ndarray
    agent_uptake_l: np.ndarray
    agent_vented_l: np.ndarray
    agent_gross_uptake_l: np.ndarray
    nitrous_oxide_gross_uptake_l: np.ndarray
    co2_absorbed_l: np.ndarray
    min_inspired_o2: np.ndarray
    end_tidal_agent: np.ndarray
    inspired_agent: np.ndarray
    end_tidal_mac: np.ndarray
    target_fraction: np.ndarray
    time_to_target_min: np.ndarray
    time_at_max_below_target_min: np.ndarray


def _as_phase_array(value, shape: tuple[int, int], name: str) -> np.ndarray:
    arr = np.asarray(value, dtype=float)
    try:
        return np.broadcast_to(arr.reshape(arr.shape + (1,) * (2 - arr.ndim)) if arr.ndim < 2 else arr, shape).astype(
            float
        )
    except ValueError:
        raise ValueError(f"{name} must broadcast to (n_phases, n_cases) = {shape}, got {arr.shape}") from None


def _case_count(phase_values: tuple, case_values: tuple) -> int:
    """Number of cases: the widest phase input (axis 1) or per-case input (axis 0)."""
    n_cases = 1
    for x in phase_values:
        if x is not None and np.ndim(x) == 2:
            n_cases = max(n_cases, np.shape(x)[1])
    for x in case_values:
        if x is not None and np.ndim(x) == 1:
            n_cases = max(n_cases, np.shape(x)[0])
    return n_cases


def _phase_inputs(minutes, oxygen_l_min, air_l_min, nitrous_oxide_l_min, dial_pct, target_mac, shape) -> _PhaseInputs:
    """Phase inputs broadcast to ``shape``.

    A phase with neither dial nor target, or a negative duration, is a ValueError.
    """
    minutes = _as_phase_array(minutes, shape, "minutes")
    o2_req = _as_phase_array(oxygen_l_min, shape, "oxygen_l_min")
    air = _as_phase_array(air_l_min, shape, "air_l_min")
    n2o_req = _as_phase_array(nitrous_oxide_l_min, shape, "nitrous_oxide_l_min")
    dial = _as_phase_array(np.nan if dial_pct is None else dial_pct, shape, "dial_pct") / 100.0
    target = _as_phase_array(np.nan if target_mac is None else target_mac, shape, "target_mac")
    target_mode = np.isnan(dial)
    if np.any(target_mode & np.isnan(target)):
        raise ValueError("each phase needs a dial setting or an end-tidal target (both NaN found)")
    if np.any(minutes < 0):
        raise ValueError("phase durations must not be negative")
    return _PhaseInputs(minutes, o2_req, air, n2o_req, dial, target, target_mode)


def _case_constants(pat: PatientValues, circle_volume_l, agent: Agent, n2o_ref: Agent, n_cases: int) -> _CaseConstants:
    """The patient's values, the circle volume and the age-adjusted MACs, one per case."""

    def per_case(x):
        return np.broadcast_to(np.asarray(x, dtype=float), (n_cases,)).astype(float)

    age = per_case(pat.age_years)
    return _CaseConstants(
        weight_kg=per_case(pat.weight_kg),
        cardiac_output_l_min=per_case(pat.cardiac_output_l_min),
        vo2_l_min=per_case(pat.vo2_l_min),
        vco2_l_min=per_case(pat.vco2_l_min),
        minute_ventilation_l_min=per_case(pat.minute_ventilation_l_min),
        alveolar_ventilation_l_min=per_case(pat.alveolar_ventilation_l_min),
        frc_l=per_case(pat.frc_l),
        circle_volume_l=per_case(circle_volume_l),
        mac_agent=mac_at_age(agent.mac40, age) / 100.0,
        mac_n2o=mac_at_age(n2o_ref.mac40, age) / 100.0,
        dial_max=agent.vaporizer_max / 100.0,
    )


def _tissues(uptake_model: str, agent: Agent, n2o_ref: Agent, case: _CaseConstants, physiology=None) -> _Tissues:
    """Tissue compartments of N2O and the agent (:func:`model.uptake.tissue_compartments`).

    ``physiology`` multipliers: the body's volumes and flows apply to both species; the
    blood/gas and tissue/blood coefficients to the agent only.
    """
    w, q = case.weight_kg, case.cardiac_output_l_min
    body = None
    if physiology is not None:
        body = {k: v for k, v in physiology.items() if k.startswith(("volume_", "flow_"))}
    g_n2o, c_n2o = tissue_compartments(uptake_model, "nitrous_oxide", n2o_ref.blood_gas, w, q, body)
    blood_gas = agent.blood_gas * multiplier(physiology, "blood_gas")
    g_ag, c_ag = tissue_compartments(uptake_model, agent.name, blood_gas, w, q, physiology)
    return _Tissues(np.stack([g_n2o, g_ag]), np.stack([c_n2o, c_ag]))


def _with_physiology(pat: PatientValues, circle_volume_l, physiology):
    """The patient's cardiac output, O2 use, ventilation and FRC, and the circle volume, times their multipliers.

    CO2 production follows the O2 consumption (a fixed respiratory quotient); the minute
    ventilation has its own multiplier (it is set by the ventilator, not by the CO2).
    """
    if physiology is None:
        return pat, circle_volume_l
    ve = multiplier(physiology, "minute_ventilation")
    vo2 = multiplier(physiology, "oxygen_consumption")
    pat = replace(
        pat,
        cardiac_output_l_min=pat.cardiac_output_l_min * multiplier(physiology, "cardiac_output"),
        vo2_l_min=pat.vo2_l_min * vo2,
        vco2_l_min=pat.vco2_l_min * vo2,
        minute_ventilation_l_min=pat.minute_ventilation_l_min * ve,
        alveolar_ventilation_l_min=pat.alveolar_ventilation_l_min * ve,
        frc_l=pat.frc_l * multiplier(physiology, "frc"),
    )
    return pat, np.asarray(circle_volume_l, dtype=float) * multiplier(physiology, "circle_volume")


def _initial_state(flows: _Flows, inputs: _PhaseInputs, tissues: _Tissues, case: _CaseConstants) -> _State:
    """State at the start: the circle filled with the first phase's fresh gas without agent.

    The lungs hold air, the tissues nothing.
    """
    n_cases = len(case.vo2_l_min)
    fc = np.zeros((3, n_cases))
    fc[0], fc[1] = flows.fd_o2[0], flows.fd_n2o[0]
    fa = np.zeros((3, n_cases))
    fa[0] = AIR_O2_FRACTION
    return _State(
        fc=fc,
        fa=fa,
        p=np.zeros((2, tissues.conductance.shape[1], n_cases)),
        u_prev=case.vo2_l_min.copy(),  # the first step's valve flow takes uptake as VO2
        d_prev=np.where(inputs.target_mode[0], 0.0, np.nan_to_num(inputs.dial[0])),
        delivered=np.zeros((3, n_cases)),
        uptake=np.zeros((3, n_cases)),
        gross=np.zeros((2, n_cases)),
        vented=np.zeros((3, n_cases)),
        co2_total=np.zeros(n_cases),
        min_fio2=fc[0].copy(),
        min_fio2_t=np.zeros(n_cases),
        et_mac_min=np.zeros(n_cases),
        elapsed=np.zeros(n_cases),
    )


def _phase_setting(i: int, inputs: _PhaseInputs, flows: _Flows, case: _CaseConstants) -> _PhaseSetting:
    """Phase ``i``'s fresh gas, vaporizer setting and CO2 load."""
    f = flows.fgf_l_min[i]
    tmode = inputs.target_mode[i]
    return _PhaseSetting(
        phase=i,
        minutes=inputs.minutes[i],
        fgf_l_min=f,
        inflow=np.stack([f * flows.fd_o2[i], f * flows.fd_n2o[i], np.zeros_like(f)]),
        target_mode=tmode,
        dial=np.nan_to_num(inputs.dial[i]),
        target=inputs.target[i],
        any_target=bool(tmode.any()),
        co2_rate=case.vco2_l_min * rebreathed_share(f, case.minute_ventilation_l_min),
    )


def _phase_tally(state: _State, n_cases: int) -> _PhaseTally:
    return _PhaseTally(
        start_uptake=state.uptake[2].copy(),
        start_vented=state.vented[2].copy(),
        start_gross=state.gross.copy(),
        deliv_ag=np.zeros(n_cases),
        min_o2=np.full(n_cases, np.inf),
        t_reach=np.full(n_cases, np.nan),
        t_at_max=np.zeros(n_cases),
        t_in=np.zeros(n_cases),
        t_frac=np.full(n_cases, np.nan),
    )


def _segment(dt: np.ndarray, setting: _PhaseSetting, tissues: _Tissues, case: _CaseConstants) -> _Segment:
    """Coefficients of the backward-Euler step of length ``dt``, tissues eliminated."""
    G, C = tissues.conductance, tissues.capacity
    denom = C + G * dt
    g_eff = G * C / denom  # (2, k, n)
    h = G * dt / denom
    a_tis = g_eff.sum(axis=1)  # (2, n)
    a12 = dt * case.alveolar_ventilation_l_min
    a22 = case.frc_l + a12 + np.concatenate([np.zeros((1, a_tis.shape[1])), dt * a_tis])  # (3, n)
    return _Segment(dt, g_eff, h, a_tis, a12, a12 * a12, a22, dt * setting.inflow, dt * setting.fgf_l_min)


def _vaporizer(
    setting: _PhaseSetting, seg: _Segment, fa_new: np.ndarray, det2: np.ndarray, case: _CaseConstants
) -> tuple[np.ndarray, np.ndarray | None]:
    """The dial of the step: the given one, or the one that meets the end-tidal target.

    Returns the dial [1] and the end-tidal agent aimed at [1] (None without target phases).
    """
    if not setting.any_target:
        return setting.dial, None
    beta = seg.a12 * seg.beta_fgf / det2
    t_frac = np.maximum(setting.target - fa_new[1] / case.mac_n2o, 0.0) * case.mac_agent
    d_ctrl = np.clip((t_frac - fa_new[2]) / np.maximum(beta, 1e-300), 0.0, case.dial_max)
    return np.where(setting.target_mode, d_ctrl, setting.dial), t_frac


def _advance(state: _State, seg: _Segment, setting: _PhaseSetting, case: _CaseConstants) -> _Step:
    """One backward-Euler step of circuit and lungs (the state itself is not changed)."""
    dt, a12, a22 = seg.dt, seg.a12, seg.a22
    v_c = case.circle_volume_l
    vent = np.maximum(setting.fgf_l_min * (1.0 + state.d_prev) - state.u_prev, 0.0)
    a11 = v_c + dt * (vent + case.alveolar_ventilation_l_min)
    b = np.einsum("skn,skn->sn", seg.g_eff, state.p)  # (2, n)
    r1 = v_c * state.fc + seg.dt_inflow
    r2 = case.frc_l * state.fa
    r2[1:] += dt * b
    det = a11 * a22 - seg.a12sq
    fa_new = (a11 * r2 + a12 * r1) / det
    fc_new = (r1 * a22 + a12 * r2) / det
    # O2 consumption, limited to what the lungs hold (then the patient is hypoxic).
    k_o2 = np.maximum(a11 * dt / det[0], 1e-300)
    s_o2 = np.minimum(case.vo2_l_min, np.maximum(fa_new[0], 0.0) / k_o2)
    fa_new[0] -= k_o2 * s_o2
    fc_new[0] -= (a12 * dt / det[0]) * s_o2
    d, t_frac = _vaporizer(setting, seg, fa_new, det[2], case)
    deliv_ag = seg.beta_fgf * d
    fa_new[2] += (a12 / det[2]) * deliv_ag
    fc_new[2] += (a22[2] / det[2]) * deliv_ag
    up_rate = seg.a_tis * fa_new[1:] - b  # (2, n) [L/min]
    return _Step(fc_new, fa_new, s_o2, d, t_frac, deliv_ag, b, vent, up_rate)


def _book(state: _State, seg: _Segment, step: _Step) -> None:
    """Move the state and book the step's amounts, from the same fluxes."""
    dt = seg.dt
    state.p += seg.h * (step.fa[1:, None, :] - state.p)
    state.delivered[:2] += seg.dt_inflow[:2]
    state.delivered[2] += step.deliv_ag
    state.uptake[0] += step.s_o2 * dt
    state.uptake[1:] += step.up_rate * dt
    state.gross += np.maximum(step.up_rate, 0.0) * dt
    state.vented += (dt * step.vent) * step.fc
    state.fc, state.fa = step.fc, step.fa
    state.u_prev = step.s_o2 + step.up_rate[0] + step.up_rate[1]
    state.d_prev = step.dial


def _track(
    state: _State, tally: _PhaseTally, seg: _Segment, step: _Step, setting: _PhaseSetting, case: _CaseConstants
) -> np.ndarray:
    """Advance the phase's clock and the running minima, MAC-time and target tracking.

    Returns the end-tidal MAC multiple after the step.
    """
    dt, fc, fa = seg.dt, state.fc, state.fa
    if step.t_frac is not None:
        tally.t_frac = step.t_frac
    tally.deliv_ag += step.deliv_ag
    tally.t_in += dt
    et_mac = fa[2] / case.mac_agent + fa[1] / case.mac_n2o
    state.et_mac_min += et_mac * dt
    lower = fc[0] < state.min_fio2
    state.min_fio2 = np.where(lower, fc[0], state.min_fio2)
    state.min_fio2_t = np.where(lower, state.elapsed + tally.t_in, state.min_fio2_t)
    tally.min_o2 = np.minimum(tally.min_o2, fc[0])
    if setting.any_target:
        t_frac, tmode = tally.t_frac, setting.target_mode
        tol = TARGET_TOLERANCE * np.maximum(t_frac, 0.2 * case.mac_agent)
        hit = tmode & np.isnan(tally.t_reach) & (np.abs(fa[2] - t_frac) <= tol)
        tally.t_reach = np.where(hit, tally.t_in, tally.t_reach)
        tally.t_at_max += np.where(
            tmode & (step.dial >= case.dial_max) & (fa[2] < (1 - TARGET_TOLERANCE) * t_frac), dt, 0.0
        )
    return et_mac


class _Recorder:
    """The state after every step, for :class:`StepSeries` (``record=True``)."""

    def __init__(self, total_steps: int, state: _State, vapour_per_ml: float):
        n_cases = state.fc.shape[1]
        self.arrays = {key: np.zeros((total_steps + 1, n_cases)) for key in _SERIES_KEYS}
        self.arrays["inspired_o2"][0] = state.fc[0]
        self.arrays["end_tidal_o2"][0] = state.fa[0]
        self.arrays["inspired_n2o"][0] = state.fc[1]
        self.total_steps = total_steps
        self.vapour_per_ml = vapour_per_ml
        self.row = 0

    def record(
        self, state: _State, tally: _PhaseTally, step: _Step, et_mac: np.ndarray, setting: _PhaseSetting
    ) -> None:
        self.row += 1
        row, s, fc, fa = self.row, self.arrays, state.fc, state.fa
        s["time_min"][row] = state.elapsed + tally.t_in
        s["dial_pct"][row] = step.dial * 100.0
        s["inspired_agent"][row] = fc[2]
        s["end_tidal_agent"][row] = fa[2]
        s["inspired_o2"][row] = fc[0]
        s["end_tidal_o2"][row] = fa[0]
        s["inspired_n2o"][row] = fc[1]
        s["end_tidal_n2o"][row] = fa[1]
        s["agent_uptake_l_min"][row] = step.up_rate[1]
        s["agent_vented_l_min"][row] = step.vent * fc[2]
        s["liquid_ml"][row] = state.delivered[2] / self.vapour_per_ml
        s["co2_absorbed_l"][row] = state.co2_total + setting.co2_rate * tally.t_in
        s["end_tidal_mac"][row] = et_mac
        s["phase_index"][row] = setting.phase

    def series(self, absorbent_capacity_l_per_kg: float) -> StepSeries:
        s = self.arrays
        s["dial_pct"][0] = s["dial_pct"][1] if self.total_steps else 0.0
        s["absorbent_g"] = s["co2_absorbed_l"] / absorbent_capacity_l_per_kg * 1000.0
        return StepSeries(**s)


def _phase_end(
    state: _State, tally: _PhaseTally, setting: _PhaseSetting, case: _CaseConstants, vapour_per_ml: float
) -> _PhaseEnd:
    """Book the phase's CO2 and time, and return its results (:class:`_PhaseEnd`)."""
    minutes = setting.minutes
    state.co2_total += setting.co2_rate * minutes
    state.elapsed += minutes
    f_safe = np.where(setting.fgf_l_min > 0, setting.fgf_l_min, 1.0)
    active = minutes > 0
    fa, fc = state.fa, state.fc
    return _PhaseEnd(
        liquid_ml=tally.deliv_ag / vapour_per_ml,
        mean_dial_pct=np.where(active, tally.deliv_ag / (f_safe * np.maximum(minutes, 1e-300)) * 100.0, np.nan),
        agent_uptake_l=state.uptake[2] - tally.start_uptake,
        agent_vented_l=state.vented[2] - tally.start_vented,
        agent_gross_uptake_l=state.gross[1] - tally.start_gross[1],
        nitrous_oxide_gross_uptake_l=state.gross[0] - tally.start_gross[0],
        co2_absorbed_l=setting.co2_rate * minutes,
        min_inspired_o2=tally.min_o2,
        end_tidal_agent=fa[2].copy(),
        inspired_agent=fc[2].copy(),
        end_tidal_mac=fa[2] / case.mac_agent + fa[1] / case.mac_n2o,
        target_fraction=np.where(setting.target_mode, tally.t_frac, np.nan),
        time_to_target_min=tally.t_reach,
        time_at_max_below_target_min=np.where(setting.target_mode, tally.t_at_max, np.nan),
    )


def _run_phase(
    state: _State,
    schedule: tuple,
    setting: _PhaseSetting,
    tissues: _Tissues,
    case: _CaseConstants,
    recorder: _Recorder | None,
) -> _PhaseTally:
    """Integrate one phase over its step schedule, in place on ``state``."""
    tally = _phase_tally(state, state.fc.shape[1])
    for dt, n_steps in schedule:
        seg = _segment(dt, setting, tissues, case)
        for _ in range(n_steps):
            step = _advance(state, seg, setting, case)
            _book(state, seg, step)
            et_mac = _track(state, tally, seg, step, setting, case)
            if recorder is not None:
                recorder.record(state, tally, step, et_mac, setting)
    return tally


def _phase_table(ends: list[tuple], shape: tuple[int, int]) -> dict[str, np.ndarray]:
    """Per-phase results stacked to ``shape``.

    Amounts are 0 where a case skips a phase (or the whole phase is skipped), the rest NaN.
    """
    table = {}
    for j, name in enumerate(_PhaseEnd._fields):
        fill = 0.0 if f"phase_{name}" in _PHASE_AMOUNTS else np.nan
        rows = np.full(shape, fill)
        for i, (active, end) in enumerate(ends):
            if end is not None:
                rows[i] = np.where(active, end[j], fill)
        table[name] = rows
    return table


def simulate_cases(
    agent: Agent,
    minutes,
    oxygen_l_min,
    air_l_min=0.0,
    nitrous_oxide_l_min=0.0,
    dial_pct=None,
    target_mac=None,
    *,
    weight_kg=70.0,
    age_years=40.0,
    cardiac_output_l_min=None,
    vo2_ml_min=None,
    minute_ventilation_l_min=None,
    uptake_model: str = DEFAULT_UPTAKE_MODEL,
    circle_volume_l=CIRCLE_VOLUME_L,
    absorbent_capacity_l_per_kg: float = ABSORBENT_CAPACITY_L_PER_KG,
    temperature_c: float = 20.0,
    pressure_kpa: float = 101.325,
    min_o2_share: float = 0.25,
    min_o2_flow_l_min: float = 0.2,
    ratio_behaviour: str = "cap_n2o",
    inspired_o2_floor: float = 0.30,
    step_min: float = STEP_MIN,
    fine_min: float = FINE_MIN,
    coarse_step_min: float = COARSE_STEP_MIN,
    record: bool = False,
    nitrous_oxide: Agent | None = None,
    physiology: Mapping | None = None,
) -> Simulation:
    """Simulate many cases of one agent through the circle system at once.

    This is the vectorised entry point (the year model calls it with thousands of sampled
    cases). Phase inputs have shape ``(n_phases, n_cases)`` (anything that broadcasts to
    it: a column ``(n_phases, 1)`` for a setting shared by all cases, a row for one phase);
    patient inputs have shape ``(n_cases,)`` or are scalars.

    Parameters
    ----------
    agent : Agent
        The volatile agent (``DEFAULT_REFERENCE.volatile("sevoflurane")`` or with overrides).
    minutes : array_like, (n_phases, n_cases)
        Phase durations [min]; 0 skips a phase for that case.
    oxygen_l_min, air_l_min, nitrous_oxide_l_min : array_like, (n_phases, n_cases)
        Requested flowmeter settings [L/min]; the O2/N2O ratio limit is applied.
    dial_pct : array_like or None, (n_phases, n_cases)
        Vaporizer dial [%] in "dial" phases, NaN in "target" phases.
    target_mac : array_like or None, (n_phases, n_cases)
        End-tidal target as a MAC multiple in "target" phases, NaN in "dial" phases.
    weight_kg, age_years : array_like, (n_cases,)
        Patient weight [kg] and age [year].
    cardiac_output_l_min, vo2_ml_min, minute_ventilation_l_min : array_like or None
        Overrides of Brody's defaults (:func:`model.patient.resolve_patient`); NaN entries
        take the default.
    uptake_model : {"compartment", "lowe"}
        Patient uptake model (:mod:`model.uptake`).
    circle_volume_l : float or array_like
        Gas volume of the circle system. [L]
    absorbent_capacity_l_per_kg : float
        CO2 taken up per kg of absorbent. [L/kg]
    temperature_c, pressure_kpa : float
        Room conditions for the liquid/vapour conversion. [°C], [kPa]
    min_o2_share, min_o2_flow_l_min, ratio_behaviour
        The workstation's O2/N2O ratio limit (:func:`model.freshgas.apply_ratio_limit`).
    inspired_o2_floor : float
        Inspired O2 floor for ``phase_lowest_safe_fd_o2``. [1]
    step_min, fine_min, coarse_step_min : float
        Integration steps: ``step_min`` over the first ``fine_min`` minutes of each phase,
        then ``coarse_step_min``. [min]
    record : bool
        Also return the state after every step (``series``); for a few cases only
        (memory grows as steps x cases).
    nitrous_oxide : Agent, optional
        N2O reference data (default from ``DEFAULT_REFERENCE``).
    physiology : mapping, optional
        Multipliers of the model's uncertain physiology, each a scalar or shape
        ``(n_cases,)``, keys of :data:`model.physiology.PHYSIOLOGY_KEYS` (cardiac output,
        O2 consumption, minute ventilation, FRC, circle volume, the agent's blood/gas and tissue/blood
        coefficients, tissue volumes and flow shares). None, a missing key or a multiplier
        of exactly 1 leaves the central model unchanged. [1]

    Returns
    -------
    Simulation
        Totals ``(n_cases,)``, the mass balance of each species, per-phase results
        ``(n_phases, n_cases)`` and with ``record`` the :class:`StepSeries`
        ``(n_steps + 1, n_cases)``; a read-only mapping of the flat keys too
        (``sim["agent_vented_l"]``, ``sim["phase_fd_o2"]``, ``sim["series"]``). Volumes of
        gas and vapour in L at room conditions, liquid in mL, mass in g, fractions in
        [0, 1], dial in %. For each species ``delivered = uptake + vented + held_end -
        held_start`` to rounding error.

    Notes
    -----
    Cost: about ``4 n_cases`` float operations x 40 per step; 10,000 two-hour cases take
    well under 2 s (``benchmarks/bench_circle.py``). The circle starts filled with the
    first phase's fresh gas without agent; the lungs with air; tissues empty. The pieces:
    inputs checked and broadcast (:func:`_phase_inputs`, :func:`_case_constants`), the step
    schedule (:func:`step_schedule`), the step (:func:`_advance`), its bookkeeping
    (:func:`_book`, :func:`_track`) and the result (:func:`_simulation`).

    References
    ----------
    .. [1] Lowe HJ, Ernst EA. The Quantitative Practice of Anesthesia: Use of Closed
       Circuit. 1981 (circle mass balance, Brody's scaling).
    .. [2] Eger EI II. Anesthetic Uptake and Action. 1974 (compartment model).
    .. [3] Mapleson WW. Br J Anaesth 1996;76:179-85 (age-adjusted MAC, additivity).
    """
    if uptake_model not in UPTAKE_MODELS:
        raise ValueError(f"uptake_model must be one of {UPTAKE_MODELS}, got {uptake_model!r}")
    n2o_ref = nitrous_oxide or DEFAULT_REFERENCE.agents["nitrous_oxide"]
    minutes = np.asarray(minutes, dtype=float)
    if minutes.ndim == 1:
        minutes = minutes[:, None]
    check_physiology(physiology)
    pat = resolve_patient(weight_kg, age_years, cardiac_output_l_min, vo2_ml_min, minute_ventilation_l_min)
    n_cases = _case_count(
        (minutes, oxygen_l_min, air_l_min, nitrous_oxide_l_min, dial_pct, target_mac),
        (weight_kg, age_years, cardiac_output_l_min, vo2_ml_min, minute_ventilation_l_min, circle_volume_l)
        + tuple(() if physiology is None else physiology.values()),
    )
    pat, circle_volume_l = _with_physiology(pat, circle_volume_l, physiology)
    shape = (minutes.shape[0], n_cases)
    inputs = _phase_inputs(minutes, oxygen_l_min, air_l_min, nitrous_oxide_l_min, dial_pct, target_mac, shape)
    case = _case_constants(pat, circle_volume_l, agent, n2o_ref, n_cases)
    o2, n2o, altered = apply_ratio_limit(
        inputs.oxygen_l_min, inputs.nitrous_oxide_l_min, min_o2_share, min_o2_flow_l_min, ratio_behaviour
    )
    flows = _Flows(o2, n2o, altered, *delivered_fractions(o2, inputs.air_l_min, n2o))
    tissues = _tissues(uptake_model, agent, n2o_ref, case, physiology)
    state = _initial_state(flows, inputs, tissues, case)
    held_start = case.circle_volume_l * state.fc + case.frc_l * state.fa

    # Step schedule per phase: fine steps over the first ``fine_min`` minutes (wash-in,
    # the fast lung and vessel-rich dynamics), coarse steps after. Cases share the step
    # count; each case scales its own steps to its phase duration.
    schedule = [step_schedule(inputs.minutes[i], step_min, fine_min, coarse_step_min) for i in range(shape[0])]
    vapour_per_ml = vapour_per_ml_liquid(agent, temperature_c, pressure_kpa) / 1000.0  # L vapour / mL liquid
    recorder = None
    if record:
        recorder = _Recorder(sum(n for segs in schedule for _, n in segs), state, vapour_per_ml)
    ends: list[tuple[np.ndarray | None, _PhaseEnd | None]] = []
    for i, segments in enumerate(schedule):
        if not segments:
            ends.append((None, None))
            continue
        setting = _phase_setting(i, inputs, flows, case)
        tally = _run_phase(state, segments, setting, tissues, case, recorder)
        ends.append((setting.minutes > 0, _phase_end(state, tally, setting, case, vapour_per_ml)))
    return _simulation(
        state,
        held_start,
        tissues,
        case,
        inputs,
        flows,
        _phase_table(ends, shape),
        vapour_per_ml=vapour_per_ml,
        absorbent_capacity_l_per_kg=absorbent_capacity_l_per_kg,
        inspired_o2_floor=inspired_o2_floor,
        series=None if recorder is None else recorder.series(absorbent_capacity_l_per_kg),
    )


def _simulation(
    state: _State,
    held_start: np.ndarray,
    tissues: _Tissues,
    case: _CaseConstants,
    inputs: _PhaseInputs,
    flows: _Flows,
    table: dict[str, np.ndarray],
    *,
    vapour_per_ml: float,
    absorbent_capacity_l_per_kg: float,
    inspired_o2_floor: float,
    series: StepSeries | None,
) -> Simulation:
    """The result of the integration: totals, balances, per-phase results."""
    n_cases = state.fc.shape[1]
    v_c, v_l, vo2, ve = case.circle_volume_l, case.frc_l, case.vo2_l_min, case.minute_ventilation_l_min
    held_end = v_c * state.fc + v_l * state.fa
    tissue_end = np.zeros((3, n_cases))
    tissue_end[1:] = (tissues.capacity * state.p).sum(axis=1)
    balances = [
        SpeciesBalance(
            delivered_l=state.delivered[j],
            uptake_l=state.uptake[j],
            vented_l=state.vented[j],
            held_start_l=held_start[j],
            held_end_l=held_end[j],
            tissue_end_l=tissue_end[j],
        )
        for j in range(len(SPECIES))
    ]
    fgf = flows.fgf_l_min
    phases = PhaseResults(
        **table,
        fgf_l_min=fgf,
        oxygen_l_min=flows.oxygen_l_min,
        nitrous_oxide_l_min=flows.nitrous_oxide_l_min,
        air_l_min=inputs.air_l_min,
        altered=flows.altered,
        fd_o2=flows.fd_o2,
        fd_n2o=flows.fd_n2o,
        rebreathed_share=rebreathed_share(fgf, ve[None, :]),
        lowest_safe_fd_o2=lowest_safe_fd_o2(fgf, vo2[None, :], inspired_o2_floor),
        steady_fio2=steady_state_fio2(fgf, flows.fd_o2, vo2[None, :]),
        target_mode=inputs.target_mode,
        minutes=inputs.minutes,
        dial_pct=inputs.dial * 100.0,
        target_mac=inputs.target,
    )
    return Simulation(
        liquid_ml=state.delivered[2] / vapour_per_ml,
        co2_absorbed_l=state.co2_total,
        agent_gross_uptake_l=state.gross[1],
        nitrous_oxide_gross_uptake_l=state.gross[0],
        absorbent_g=state.co2_total / absorbent_capacity_l_per_kg * 1000.0,
        min_inspired_o2=state.min_fio2,
        min_inspired_o2_time_min=state.min_fio2_t,
        o2_shortfall_l=np.maximum(vo2 * state.elapsed - state.uptake[0], 0.0),
        end_tidal_mac_hours=state.et_mac_min / 60.0,
        vo2_l_min=vo2,
        vco2_l_min=case.vco2_l_min,
        minute_ventilation_l_min=ve,
        cardiac_output_l_min=case.cardiac_output_l_min,
        mac_agent_pct=case.mac_agent * 100.0,
        mac_n2o_pct=case.mac_n2o * 100.0,
        absorbent_capacity_l_per_kg=np.full(n_cases, float(absorbent_capacity_l_per_kg)),
        circle_volume_l=v_c,
        frc_l=v_l,
        oxygen=balances[0],
        nitrous_oxide=balances[1],
        agent=balances[2],
        phases=phases,
        series=series,
    )
