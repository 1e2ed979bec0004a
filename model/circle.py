"""The circle system with a patient in it: fresh gas in, uptake, excess gas vented, CO2
absorbed; simulated for many cases at once (the vectorised API used by the year model).

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

import numpy as np

from model.freshgas import apply_ratio_limit, delivered_fractions
from model.mac import mac_at_age
from model.patient import resolve_patient
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
#: plans change by under 1 % against a uniform 0.05 min step (tests/test_circle.py).
STEP_MIN = 0.25
FINE_MIN = 10.0
COARSE_STEP_MIN = 1.0
#: Past ``FINE_MIN``, a step is at most this share of the time into the phase (and at least
#: ``COARSE_STEP_MIN``): 1 min steps up to 20 min, 3 min at an hour, 72 min at a day, so a
#: phase of any length takes some hundred steps (a day's phase 88 coarse steps instead of
#: 1,430). Late in a phase only the slow tissues still move, on time scales of hours. A
#: numerical choice, no source: tests/test_circle.py checks the demo plans and day-long
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
    with np.errstate(divide="ignore", invalid="ignore"):
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


def _as_phase_array(value, shape, name):
    arr = np.asarray(value, dtype=float)
    try:
        return np.broadcast_to(arr.reshape(arr.shape + (1,) * (2 - arr.ndim)) if arr.ndim < 2 else arr, shape).astype(
            float
        )
    except ValueError:
        raise ValueError(f"{name} must broadcast to (n_phases, n_cases) = {shape}, got {arr.shape}") from None


def simulate_cases(
    agent: Agent,
    minutes,
    o2_l_min,
    air_l_min=0.0,
    n2o_l_min=0.0,
    dial_pct=None,
    target_mac=None,
    *,
    weight_kg=70.0,
    age_years=40.0,
    cardiac_output_l_min=None,
    vo2_ml_min=None,
    minute_ventilation_l_min=None,
    uptake_model=DEFAULT_UPTAKE_MODEL,
    circle_volume_l=CIRCLE_VOLUME_L,
    absorbent_capacity_l_per_kg=ABSORBENT_CAPACITY_L_PER_KG,
    temperature_c=20.0,
    pressure_kpa=101.325,
    min_o2_share=0.25,
    min_o2_flow_l_min=0.2,
    ratio_behaviour="cap_n2o",
    inspired_o2_floor=0.30,
    step_min=STEP_MIN,
    fine_min=FINE_MIN,
    coarse_step_min=COARSE_STEP_MIN,
    record=False,
    nitrous_oxide: Agent | None = None,
):
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
    o2_l_min, air_l_min, n2o_l_min : array_like, (n_phases, n_cases)
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

    Returns
    -------
    dict
        Arrays of shape ``(n_cases,)`` (totals), ``(n_phases, n_cases)`` (keys starting
        ``phase_``), and with ``record`` a dict ``series`` of arrays ``(n_steps + 1, n_cases)``.
        Volumes of gas and vapour in L at room conditions, liquid in mL, mass in g,
        fractions in [0, 1], dial in %. Totals:

        ``liquid_ml``; for each species ``s`` in ``oxygen``, ``nitrous_oxide``, ``agent``:
        ``{s}_delivered_l``, ``{s}_uptake_l`` (O2: consumed), ``{s}_vented_l``,
        ``{s}_held_start_l``, ``{s}_held_end_l`` (gas in circuit and lungs), with
        ``delivered = uptake + vented + held_end - held_start`` to rounding error; uptake
        is the net uptake into the tissues (what they hold at the end, ``{s}_tissue_end_l``);
        ``agent_gross_uptake_l`` (agent that entered the blood, before any came back out:
        the base of the metabolised share), ``nitrous_oxide_gross_uptake_l``, ``co2_absorbed_l``, ``absorbent_g``, ``min_inspired_o2``, ``min_inspired_o2_time_min``,
        ``o2_shortfall_l`` (O2 the patient needed but the circle could not supply),
        ``end_tidal_mac_hours``, ``vco2_l_min``, ``vo2_l_min``, ``minute_ventilation_l_min``.

        Per phase: ``phase_fgf_l_min``, ``phase_o2_l_min``, ``phase_n2o_l_min`` (delivered),
        ``phase_altered``, ``phase_fd_o2``, ``phase_fd_n2o``, ``phase_liquid_ml``,
        ``phase_mean_dial_pct``, ``phase_agent_uptake_l``, ``phase_agent_vented_l``,
        ``phase_agent_gross_uptake_l``, ``phase_nitrous_oxide_gross_uptake_l``,
        ``phase_co2_absorbed_l``, ``phase_rebreathed_share``, ``phase_min_inspired_o2``,
        ``phase_end_tidal_agent``, ``phase_inspired_agent``, ``phase_end_tidal_mac``,
        ``phase_target_fraction`` (end-tidal agent aimed at, at phase end; NaN in dial mode),
        ``phase_time_to_target_min`` (NaN if not reached or dial mode),
        ``phase_time_at_max_below_target_min`` (dial at the vaporizer maximum and end-tidal
        still under 95 % of target), ``phase_lowest_safe_fd_o2``, ``phase_steady_fio2``.

    Notes
    -----
    Cost: about ``4 n_cases`` float operations x 40 per step; 10,000 two-hour cases take
    well under 2 s (``benchmarks/bench_circle.py``). The circle starts filled with the
    first phase's fresh gas without agent; the lungs with air; tissues empty.

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
    pat = resolve_patient(weight_kg, age_years, cardiac_output_l_min, vo2_ml_min, minute_ventilation_l_min)
    n_cases = 1
    for x in (minutes, o2_l_min, air_l_min, n2o_l_min, dial_pct, target_mac):
        if x is not None and np.ndim(x) == 2:
            n_cases = max(n_cases, np.shape(x)[1])
    for x in (weight_kg, age_years, cardiac_output_l_min, vo2_ml_min, minute_ventilation_l_min, circle_volume_l):
        if x is not None and np.ndim(x) == 1:
            n_cases = max(n_cases, np.shape(x)[0])
    n_phases = minutes.shape[0]
    shape = (n_phases, n_cases)
    minutes = _as_phase_array(minutes, shape, "minutes")
    o2_req = _as_phase_array(o2_l_min, shape, "o2_l_min")
    air = _as_phase_array(air_l_min, shape, "air_l_min")
    n2o_req = _as_phase_array(n2o_l_min, shape, "n2o_l_min")
    dial = _as_phase_array(np.nan if dial_pct is None else dial_pct, shape, "dial_pct") / 100.0
    target = _as_phase_array(np.nan if target_mac is None else target_mac, shape, "target_mac")
    target_mode = np.isnan(dial)
    if np.any(target_mode & np.isnan(target)):
        raise ValueError("each phase needs a dial setting or an end-tidal target (both NaN found)")
    if np.any(minutes < 0):
        raise ValueError("phase durations must not be negative")

    def per_case(x):
        return np.broadcast_to(np.asarray(x, dtype=float), (n_cases,)).astype(float)

    w, age = per_case(pat.weight_kg), per_case(pat.age_years)
    q, vo2, vco2 = per_case(pat.cardiac_output_l_min), per_case(pat.vo2_l_min), per_case(pat.vco2_l_min)
    ve, va, v_l = per_case(pat.minute_ventilation_l_min), per_case(pat.alveolar_ventilation_l_min), per_case(pat.frc_l)
    v_c = per_case(circle_volume_l)
    mac_agent = mac_at_age(agent.mac40, age) / 100.0
    mac_n2o = mac_at_age(n2o_ref.mac40, age) / 100.0
    d_max = agent.vaporizer_max / 100.0

    o2, n2o, altered = apply_ratio_limit(o2_req, n2o_req, min_o2_share, min_o2_flow_l_min, ratio_behaviour)
    fgf, fd_o2, fd_n2o = delivered_fractions(o2, air, n2o)

    # Tissue compartments: rows 0 = N2O, 1 = agent; shape (2, k, n).
    g_n2o, c_n2o = tissue_compartments(uptake_model, "nitrous_oxide", n2o_ref.blood_gas, w, q)
    g_ag, c_ag = tissue_compartments(uptake_model, agent.name, agent.blood_gas, w, q)
    G = np.stack([g_n2o, g_ag])
    C = np.stack([c_n2o, c_ag])
    k = G.shape[1]

    # State: fractions in circuit and lungs (3, n); tissue partial pressures (2, k, n).
    fc = np.zeros((3, n_cases))
    fc[0], fc[1] = fd_o2[0], fd_n2o[0]
    fa = np.zeros((3, n_cases))
    fa[0] = AIR_O2_FRACTION
    p = np.zeros((2, k, n_cases))
    held_start = v_c * fc + v_l * fa

    delivered = np.zeros((3, n_cases))
    uptake = np.zeros((3, n_cases))
    gross = np.zeros((2, n_cases))  # N2O and agent into the blood, before any comes back
    vented = np.zeros((3, n_cases))
    co2_total = np.zeros(n_cases)
    min_fio2 = fc[0].copy()
    min_fio2_t = np.zeros(n_cases)
    et_mac_min = np.zeros(n_cases)  # end-tidal MAC x minutes

    ph = {
        key: np.full(shape, 0.0 if key in _PHASE_AMOUNTS else np.nan)
        for key in (
            "phase_liquid_ml",
            "phase_mean_dial_pct",
            "phase_agent_uptake_l",
            "phase_agent_vented_l",
            "phase_agent_gross_uptake_l",
            "phase_nitrous_oxide_gross_uptake_l",
            "phase_co2_absorbed_l",
            "phase_min_inspired_o2",
            "phase_end_tidal_agent",
            "phase_inspired_agent",
            "phase_end_tidal_mac",
            "phase_target_fraction",
            "phase_time_to_target_min",
            "phase_time_at_max_below_target_min",
        )
    }

    # Step schedule per phase: fine steps over the first ``fine_min`` minutes (wash-in,
    # the fast lung and vessel-rich dynamics), coarse steps after. Cases share the step
    # count; each case scales its own steps to its phase duration.
    schedule = [step_schedule(minutes[i], step_min, fine_min, coarse_step_min) for i in range(n_phases)]
    total_steps = sum(n for segs in schedule for _, n in segs)
    series = None
    if record:
        series = {
            key: np.zeros((total_steps + 1, n_cases))
            for key in (
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
        }
        series["inspired_o2"][0] = fc[0]
        series["end_tidal_o2"][0] = fa[0]
        series["inspired_n2o"][0] = fc[1]
    vapour_per_ml = vapour_per_ml_liquid(agent, temperature_c, pressure_kpa) / 1000.0  # L vapour / mL liquid

    u_prev = vo2.copy()  # total uptake rate of the previous step [L/min]
    d_prev = np.where(target_mode[0], 0.0, np.nan_to_num(dial[0]))
    elapsed = np.zeros(n_cases)
    zeros = np.zeros(n_cases)
    row = 0
    for i in range(n_phases):
        if not schedule[i]:
            continue
        f = fgf[i]
        inflow = np.stack([f * fd_o2[i], f * fd_n2o[i], zeros])
        tmode, dial_i, tgt_i = target_mode[i], np.nan_to_num(dial[i]), target[i]
        any_target = bool(tmode.any())
        co2_rate = vco2 * rebreathed_share(f, ve)
        start_up, start_vent = uptake[2].copy(), vented[2].copy()
        # The phase's own sum: as a difference of running totals, a phase at 1e-9 L/min after
        # one at 1 L/min would lose its mean dial to cancellation (relative error 1e-8).
        ph_deliv_ag = np.zeros(n_cases)
        start_gross = gross.copy()
        ph_min_o2 = np.full(n_cases, np.inf)
        t_reach = np.full(n_cases, np.nan)
        t_at_max = np.zeros(n_cases)
        t_in = np.zeros(n_cases)
        t_frac = np.full(n_cases, np.nan)
        for dt, n_steps in schedule[i]:
            denom = C + G * dt
            g_eff = G * C / denom  # (2, k, n)
            h = G * dt / denom
            a_tis = g_eff.sum(axis=1)  # (2, n)
            a12 = dt * va
            a12sq = a12 * a12
            a22 = v_l + a12 + np.concatenate([zeros[None], dt * a_tis])  # (3, n)
            dt_inflow = dt * inflow
            beta_fgf = dt * f
            for _ in range(n_steps):
                vent = np.maximum(f * (1.0 + d_prev) - u_prev, 0.0)
                a11 = v_c + dt * (vent + va)
                b = np.einsum("skn,skn->sn", g_eff, p)  # (2, n)
                r1 = v_c * fc + dt_inflow
                r2 = v_l * fa
                r2[1:] += dt * b
                det = a11 * a22 - a12sq
                fa_new = (a11 * r2 + a12 * r1) / det
                fc_new = (r1 * a22 + a12 * r2) / det
                # O2 consumption, limited to what the lungs hold (then the patient is hypoxic).
                k_o2 = np.maximum(a11 * dt / det[0], 1e-300)
                s_o2 = np.minimum(vo2, np.maximum(fa_new[0], 0.0) / k_o2)
                fa_new[0] -= k_o2 * s_o2
                fc_new[0] -= (a12 * dt / det[0]) * s_o2
                # Vaporizer: given dial, or the dial that meets the end-tidal target.
                if any_target:
                    beta = a12 * beta_fgf / det[2]
                    t_frac = np.maximum(tgt_i - fa_new[1] / mac_n2o, 0.0) * mac_agent
                    d_ctrl = np.clip((t_frac - fa_new[2]) / np.maximum(beta, 1e-300), 0.0, d_max)
                    d = np.where(tmode, d_ctrl, dial_i)
                else:
                    d = dial_i
                deliv_ag = beta_fgf * d
                fa_new[2] += (a12 / det[2]) * deliv_ag
                fc_new[2] += (a22[2] / det[2]) * deliv_ag
                # Bookkeeping from the same fluxes that moved the state.
                up_rate = a_tis * fa_new[1:] - b  # (2, n) [L/min]
                p += h * (fa_new[1:, None, :] - p)
                delivered[:2] += dt_inflow[:2]
                delivered[2] += deliv_ag
                ph_deliv_ag += deliv_ag
                uptake[0] += s_o2 * dt
                uptake[1:] += up_rate * dt
                gross += np.maximum(up_rate, 0.0) * dt
                vented += (dt * vent) * fc_new
                fc, fa = fc_new, fa_new
                u_prev = s_o2 + up_rate[0] + up_rate[1]
                d_prev = d
                t_in += dt
                et_mac = fa[2] / mac_agent + fa[1] / mac_n2o
                et_mac_min += et_mac * dt
                lower = fc[0] < min_fio2
                min_fio2 = np.where(lower, fc[0], min_fio2)
                min_fio2_t = np.where(lower, elapsed + t_in, min_fio2_t)
                ph_min_o2 = np.minimum(ph_min_o2, fc[0])
                if any_target:
                    tol = TARGET_TOLERANCE * np.maximum(t_frac, 0.2 * mac_agent)
                    hit = tmode & np.isnan(t_reach) & (np.abs(fa[2] - t_frac) <= tol)
                    t_reach = np.where(hit, t_in, t_reach)
                    t_at_max += np.where(tmode & (d >= d_max) & (fa[2] < (1 - TARGET_TOLERANCE) * t_frac), dt, 0.0)
                row += 1
                if series is not None:
                    series["time_min"][row] = elapsed + t_in
                    series["dial_pct"][row] = d * 100.0
                    series["inspired_agent"][row] = fc[2]
                    series["end_tidal_agent"][row] = fa[2]
                    series["inspired_o2"][row] = fc[0]
                    series["end_tidal_o2"][row] = fa[0]
                    series["inspired_n2o"][row] = fc[1]
                    series["end_tidal_n2o"][row] = fa[1]
                    series["agent_uptake_l_min"][row] = up_rate[1]
                    series["agent_vented_l_min"][row] = vent * fc[2]
                    series["liquid_ml"][row] = delivered[2] / vapour_per_ml
                    series["co2_absorbed_l"][row] = co2_total + co2_rate * t_in
                    series["end_tidal_mac"][row] = et_mac
                    series["phase_index"][row] = i
        co2_total += co2_rate * minutes[i]
        elapsed += minutes[i]
        f_safe = np.where(f > 0, f, 1.0)
        active = minutes[i] > 0
        put = {
            "phase_liquid_ml": ph_deliv_ag / vapour_per_ml,
            "phase_mean_dial_pct": np.where(
                active, ph_deliv_ag / (f_safe * np.maximum(minutes[i], 1e-300)) * 100.0, np.nan
            ),
            "phase_agent_uptake_l": uptake[2] - start_up,
            "phase_agent_vented_l": vented[2] - start_vent,
            "phase_agent_gross_uptake_l": gross[1] - start_gross[1],
            "phase_nitrous_oxide_gross_uptake_l": gross[0] - start_gross[0],
            "phase_co2_absorbed_l": co2_rate * minutes[i],
            "phase_min_inspired_o2": ph_min_o2,
            "phase_end_tidal_agent": fa[2].copy(),
            "phase_inspired_agent": fc[2].copy(),
            "phase_end_tidal_mac": fa[2] / mac_agent + fa[1] / mac_n2o,
            "phase_target_fraction": np.where(tmode, t_frac, np.nan),
            "phase_time_to_target_min": t_reach,
            "phase_time_at_max_below_target_min": np.where(tmode, t_at_max, np.nan),
        }
        for key, value in put.items():
            ph[key][i] = np.where(active, value, np.nan)
        for key in _PHASE_AMOUNTS:
            ph[key][i] = np.where(active, put[key], 0.0)

    held_end = v_c * fc + v_l * fa
    tissue_end = np.zeros((3, n_cases))
    tissue_end[1:] = (C * p).sum(axis=1)
    out = {
        "liquid_ml": delivered[2] / vapour_per_ml,
        "co2_absorbed_l": co2_total,
        "agent_gross_uptake_l": gross[1],
        "nitrous_oxide_gross_uptake_l": gross[0],
        "absorbent_g": co2_total / absorbent_capacity_l_per_kg * 1000.0,
        "min_inspired_o2": min_fio2,
        "min_inspired_o2_time_min": min_fio2_t,
        "o2_shortfall_l": np.maximum(vo2 * elapsed - uptake[0], 0.0),
        "end_tidal_mac_hours": et_mac_min / 60.0,
        "vo2_l_min": vo2,
        "vco2_l_min": vco2,
        "minute_ventilation_l_min": ve,
        "cardiac_output_l_min": q,
        "mac_agent_pct": mac_agent * 100.0,
        "mac_n2o_pct": mac_n2o * 100.0,
    }
    for j, s in enumerate(SPECIES):
        out[f"{s}_delivered_l"] = delivered[j]
        out[f"{s}_uptake_l"] = uptake[j]
        out[f"{s}_vented_l"] = vented[j]
        out[f"{s}_held_start_l"] = held_start[j]
        out[f"{s}_held_end_l"] = held_end[j]
        out[f"{s}_tissue_end_l"] = tissue_end[j]
    out.update(ph)
    out.update(
        {
            "phase_fgf_l_min": fgf,
            "phase_o2_l_min": o2,
            "phase_n2o_l_min": n2o,
            "phase_air_l_min": air,
            "phase_altered": altered,
            "phase_fd_o2": fd_o2,
            "phase_fd_n2o": fd_n2o,
            "phase_rebreathed_share": rebreathed_share(fgf, ve[None, :]),
            "phase_lowest_safe_fd_o2": lowest_safe_fd_o2(fgf, vo2[None, :], inspired_o2_floor),
            "phase_steady_fio2": steady_state_fio2(fgf, fd_o2, vo2[None, :]),
            "phase_target_mode": target_mode,
            "phase_minutes": minutes,
            "phase_dial_pct": dial * 100.0,
            "phase_target_mac": target,
            "absorbent_capacity_l_per_kg": np.full(n_cases, float(absorbent_capacity_l_per_kg)),
            "circle_volume_l": v_c,
            "frc_l": v_l,
        }
    )
    if series is not None:
        series["dial_pct"][0] = series["dial_pct"][1] if total_steps else 0.0
        series["absorbent_g"] = series["co2_absorbed_l"] / absorbent_capacity_l_per_kg * 1000.0
        out["series"] = series
    return out
