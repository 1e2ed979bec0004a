"""Paired comparison of two scenarios' years over the same draws."""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import pandas as pd

from model.base.errors import InputError
from model.base.jsonable import to_json_value
from model.cautions import STANDING_CAUTION, by_severity, cautions_as_records
from model.reference import DEFAULT_REFERENCE, VOLATILES, Reference
from model.year.inputs import Scenario
from model.year.result import YearResult, _result, headline_figures, physiology_year_inputs
from model.year.sampling import _central, _percentiles, _sampled, _sampled_physiology, make_draws, range_label
from model.year.simulate import _year_inputs_many


@dataclass
class Comparison:
    """A baseline and a proposal over the same draws, and their paired difference."""

    baseline: YearResult
    proposal: YearResult
    #: key, figure, unit, baseline, proposal, difference (deterministic), p5, p50, p95 of the
    #: difference (proposal - baseline; negative = the proposal saves).
    summary: pd.DataFrame
    difference: dict  # key -> (D,) proposal - baseline per draw
    notes: list[str] = field(default_factory=list)

    @property
    def unsafe(self) -> bool:
        """Whether either year's practice is unsafe as written (a ``"hazard"`` warning)."""
        return self.baseline.unsafe or self.proposal.unsafe

    @property
    def warnings(self) -> list[str]:
        """Both years' warnings, each once, most severe first."""
        return by_severity(self.baseline.warnings + self.proposal.warnings)

    def to_dict(self) -> dict:
        """Plain-dict form with stable keys (for JSON)."""
        return {
            "baseline": self.baseline.scenario.name,
            "proposal": self.proposal.scenario.name,
            "currency": self.baseline.currency,
            "gwp_source": self.baseline.scenario.gwp_source,
            "mac_set_label": self.baseline.inputs.mac_label,
            "draws": self.baseline.n_draws,
            "seed": self.baseline.seed,
            "range_label": self.baseline.range_label,
            "difference": {
                r["key"]: to_json_value({k: r[k] for k in ("baseline", "proposal", "difference", "p5", "p50", "p95")})
                for r in self.summary.to_dict("records")
            },
            "baseline_totals": to_json_value(self.baseline.totals),
            "proposal_totals": to_json_value(self.proposal.totals),
            "warnings": list(self.warnings),
            "warnings_by_severity": cautions_as_records(self.warnings),
            "baseline_unsafe": self.baseline.unsafe,
            "proposal_unsafe": self.proposal.unsafe,
            "notes": list(self.notes),
            "caution": STANDING_CAUTION,
        }


def compare_years(
    baseline: Scenario,
    proposal: Scenario,
    reference: Reference = DEFAULT_REFERENCE,
    *,
    draws: int | None = None,
    seed: int | None = None,
    model_uncertainty: bool = False,
) -> Comparison:
    """Paired comparison: both scenarios over the same draws (the baseline's sampling settings).

    The proposal is computed with the baseline's GWP source, GWP sampling, price spread,
    draws and seed, so the two differ only where the scenarios do. Differences are
    proposal minus baseline, draw by draw, so a scenario compared with itself differs by
    exactly zero. With ``model_uncertainty`` the P5-P95 ranges also draw the uptake model's
    physiology, the same draw for baseline and proposal
    (:func:`model.year.result.physiology_year_inputs`).

    Raises
    ------
    InputError
        The two scenarios price in different currencies.
    """
    notes = []
    s = baseline.sampling
    if proposal.gwp_source != baseline.gwp_source or proposal.sampling != s:
        notes.append("The proposal is computed with the baseline's GWP source and sampling settings.")
    proposal = replace(proposal, gwp_source=baseline.gwp_source, sampling=s)
    b_inp, p_inp = _year_inputs_many([baseline, proposal], reference)
    if b_inp.currency != p_inp.currency:
        raise InputError(
            "prices.currency", p_inp.currency, f"the proposal must price in the baseline's currency ({b_inp.currency})"
        )
    n = s.draws if draws is None else int(draws)
    sd = s.seed if seed is None else int(seed)
    shared = make_draws(b_inp.names + p_inp.names, n, sd)
    b_c, b_cm = _central(b_inp)
    p_c, p_cm = _central(p_inp)
    if model_uncertainty:
        pairs = physiology_year_inputs([baseline, proposal], reference, sd)
        b_s, b_sm = _sampled_physiology([pair[0] for pair in pairs], shared, s.price_spread)
        p_s, p_sm = _sampled_physiology([pair[1] for pair in pairs], shared, s.price_spread)
    else:
        b_s, b_sm = _sampled(b_inp, shared, s.price_spread)
        p_s, p_sm = _sampled(p_inp, shared, s.price_spread)
    b_res = _result(baseline, b_inp, b_c, b_cm, b_s, b_sm, shared)
    p_res = _result(proposal, p_inp, p_c, p_cm, p_s, p_sm, shared)
    b_res.range_label = p_res.range_label = range_label(model_uncertainty)
    diff = {k: p_s[k] - b_s[k] for k in b_s}
    rows = []
    for key, label, unit in headline_figures(b_inp.currency):
        p = _percentiles(diff[key])
        rows.append(
            {
                "key": key,
                "figure": label,
                "unit": unit,
                "baseline": b_res.totals[key],
                "proposal": p_res.totals[key],
                "difference": p_res.totals[key] - b_res.totals[key],
                "p5": float(p[0]),
                "p50": float(p[1]),
                "p95": float(p[2]),
            }
        )
    return Comparison(b_res, p_res, pd.DataFrame(rows), diff, notes)


def nonzero_rows(summary: pd.DataFrame, columns=("deterministic", "p5", "p95")) -> pd.DataFrame:
    """The summary without agent rows that are zero throughout (agents the mix never uses)."""
    cols = [c for c in columns if c in summary.columns]
    agent_row = summary["key"].str.contains("|".join(VOLATILES))
    empty = (summary[cols].abs() < 1e-12).all(axis=1)
    return summary[~(agent_row & empty)].reset_index(drop=True)
