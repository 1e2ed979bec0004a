"""Fresh gas composition, the workstation's O2/N2O ratio limit, and flow bands."""

from __future__ import annotations

import numpy as np

from model.reference import AIR_O2_FRACTION

RATIO_BEHAVIOURS = ("cap_n2o", "raise_o2")

#: Flow bands by total fresh gas flow, upper bound inclusive. [L/min]
#: Source: Baker AB. Low flow and closed circuits. Anaesth Intensive Care 1994;22:341-2.
FLOW_BANDS = (
    ("metabolic", 0.25),
    ("minimal", 0.5),
    ("low", 1.0),
    ("medium", 2.0),
    ("high", 4.0),
    ("very high", np.inf),
)
FLOW_BAND_NAMES = tuple(name for name, _ in FLOW_BANDS)


def delivered_fractions(oxygen_l_min, air_l_min, nitrous_oxide_l_min):
    """Oxygen and nitrous oxide fractions of the fresh gas.

    Parameters
    ----------
    oxygen_l_min, air_l_min, nitrous_oxide_l_min : array_like
        Flowmeter settings. [L/min]

    Returns
    -------
    fgf : ndarray
        Total fresh gas flow. [L/min]
    fd_o2 : ndarray
        Delivered O2 fraction. [1]
    fd_n2o : ndarray
        Delivered N2O fraction. [1]

    Notes
    -----
    ``FdO2 = (O2 + 0.20946 Air) / FGF``; a zero total flow gives fractions of 0.

    References
    ----------
    .. [1] US Standard Atmosphere 1976: dry air holds 20.946 % O2 by volume.
    """
    o2 = np.asarray(oxygen_l_min, dtype=float)
    air = np.asarray(air_l_min, dtype=float)
    n2o = np.asarray(nitrous_oxide_l_min, dtype=float)
    fgf = o2 + air + n2o
    with np.errstate(invalid="ignore", divide="ignore"):
        fd_o2 = np.where(fgf > 0, (o2 + AIR_O2_FRACTION * air) / np.where(fgf > 0, fgf, 1), 0.0)
        fd_n2o = np.where(fgf > 0, n2o / np.where(fgf > 0, fgf, 1), 0.0)
    return fgf, fd_o2, fd_n2o


def apply_ratio_limit(oxygen_l_min, nitrous_oxide_l_min, min_o2_share=0.25, min_o2_flow_l_min=0.2, behaviour="cap_n2o"):
    """Flows a workstation delivers when it guards against a hypoxic O2/N2O mix.

    Parameters
    ----------
    oxygen_l_min, nitrous_oxide_l_min : array_like
        Requested O2 and N2O flows. [L/min]
    min_o2_share : float
        Lowest O2 share of the O2 + N2O flow the workstation allows. [1] Default 0.25
        (N2O at most 3 x O2).
    min_o2_flow_l_min : float
        O2 flow under which N2O is cut off. [L/min] Default 0.2.
    behaviour : {"cap_n2o", "raise_o2"}
        How the limit acts: reduce N2O to the allowed ratio, or raise O2 to it.

    Returns
    -------
    o2 : ndarray
        Delivered O2 flow. [L/min]
    n2o : ndarray
        Delivered N2O flow. [L/min]
    altered : ndarray of bool
        True where the delivered flows differ from the request.

    Notes
    -----
    The ratio applies to the O2 and N2O flowmeters (air is not counted). After the ratio
    step, N2O is stopped wherever O2 is under ``min_o2_flow_l_min``.

    References
    ----------
    .. [1] Common practice, no source: the 25 % O2 proportioning limit and the low-O2
       N2O cut-off are standard workstation safety features.
    """
    if behaviour not in RATIO_BEHAVIOURS:
        raise ValueError(f"behaviour must be one of {RATIO_BEHAVIOURS}, got {behaviour!r}")
    if not 0 < min_o2_share <= 1:
        raise ValueError(f"min_o2_share must lie in (0, 1], got {min_o2_share!r}")
    o2_req = np.asarray(oxygen_l_min, dtype=float)
    n2o_req = np.asarray(nitrous_oxide_l_min, dtype=float)
    ratio = (1.0 - min_o2_share) / min_o2_share  # largest N2O/O2 allowed
    if behaviour == "cap_n2o":
        o2 = o2_req
        n2o = np.minimum(n2o_req, o2 * ratio)
    else:
        if ratio > 0:
            o2, n2o = np.maximum(o2_req, n2o_req / ratio), n2o_req
        else:  # a 100 % O2 share allows no N2O at all
            o2, n2o = o2_req, np.zeros_like(n2o_req)
    n2o = np.where(o2 < min_o2_flow_l_min, 0.0, n2o)
    altered = (~np.isclose(o2, o2_req, rtol=0, atol=1e-12)) | (~np.isclose(n2o, n2o_req, rtol=0, atol=1e-12))
    return o2, n2o, altered


def flow_band(fgf_l_min):
    """Name of the flow band of each total fresh gas flow.

    Parameters
    ----------
    fgf_l_min : array_like
        Total fresh gas flow. [L/min]

    Returns
    -------
    ndarray of str
        One of ``FLOW_BAND_NAMES``.

    References
    ----------
    .. [1] Baker AB. Low flow and closed circuits. Anaesth Intensive Care 1994;22:341-2.
    """
    fgf = np.asarray(fgf_l_min, dtype=float)
    edges = np.array([upper for _, upper in FLOW_BANDS[:-1]])
    index = np.searchsorted(edges, fgf, side="left")
    return np.asarray(FLOW_BAND_NAMES, dtype=object)[index]
