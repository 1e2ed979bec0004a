"""Seeded generator of invented case records for the demo and the benchmarks.

Everything it writes is invented: the fictional Fernhollow General Hospital, its theatres,
case mix and practice. Run ``python -m model.cli.synth --rows N --out DIR`` (see ``--help``).
"""

from __future__ import annotations

import argparse
import math
import sys
from pathlib import Path

import numpy as np
import pandas as pd

from model.base.cells import csv_text
from model.base.errors import InputError

#: Invented theatres of the fictional Fernhollow General Hospital.
THEATRES = ("Alder", "Birch", "Cedar", "Hazel", "Rowan", "Willow", "Day Unit 1", "Day Unit 2")
#: Invented agent mix of the demo hospital (shares of cases).
AGENT_MIX = {"sevoflurane": 0.74, "desflurane": 0.10, "isoflurane": 0.10, "none": 0.06}
#: Invented maintenance dial settings per agent. [%]
MAINTENANCE_DIAL = {"sevoflurane": 2.0, "desflurane": 6.0, "isoflurane": 1.2, "none": 0.0}
#: Invented share of cases run at low flow, and of cases with N2O.
LOW_FLOW_SHARE = 0.55
N2O_SHARE = 0.12
#: Columns written, in order (units in the column names, the record format's own way).
COLUMNS = (
    "case_id",
    "time",
    "theatre",
    "agent",
    "o2 [L/min]",
    "air [L/min]",
    "n2o [L/min]",
    "dial [%]",
    "end_tidal [%]",
)


#: Invented change of practice in the demo's second year (2026): less desflurane (its cases
#: mostly moved to sevoflurane), and more low-flow cases in the theatres that took part.
AGENT_MIX_2026 = {"sevoflurane": 0.82, "desflurane": 0.03, "isoflurane": 0.09, "none": 0.06}
LOW_FLOW_2026 = {"Alder": 0.9, "Cedar": 0.9, "Day Unit 1": 0.85, "Willow": 0.8}


def generate(
    rows: int, seed: int = 2025, year: int = 2025, first_case: int = 0, agent_mix=None, low_flow_share=None
) -> pd.DataFrame:
    """Invented minute-level records of about ``rows`` samples (whole cases, trimmed to ``rows``).

    Parameters
    ----------
    rows : int
        Number of sample rows.
    seed : int
        Seed of the random generator: the same seed gives the same records.
    year : int
        Calendar year of the case dates.
    first_case : int
        Number of the first case (for writing many parts with distinct case ids).
    agent_mix : dict, optional
        Share of cases per agent (default ``AGENT_MIX``).
    low_flow_share : float or dict, optional
        Share of cases run at low flow, overall or per theatre (theatres not named keep
        ``LOW_FLOW_SHARE``). The random draws are the same whatever these are, so the
        defaults give the same records as before they existed.

    Returns
    -------
    DataFrame
        Columns ``COLUMNS``; one row per minute of each case.
    """
    if rows < 1:
        return pd.DataFrame({c: [] for c in COLUMNS})
    rng = np.random.default_rng(seed)
    n_cases = max(int(rows / 40) + 10, 1)
    # Case lengths: lognormal around 80 min, 20-360 min (invented).
    dur = np.clip(np.round(rng.lognormal(math.log(70), 0.5, n_cases)), 20, 360).astype(np.int64)
    ends = np.cumsum(dur)
    n_cases = int(np.searchsorted(ends, rows) + 1)
    dur = dur[:n_cases]
    dur[-1] -= int(dur.sum() - rows)
    dur = np.maximum(dur, 1)
    mix = AGENT_MIX if agent_mix is None else {a: float(agent_mix.get(a, 0.0)) for a in AGENT_MIX}
    names = np.array(list(mix))
    p = np.array(list(mix.values()))
    agent = rng.choice(len(names), n_cases, p=p if agent_mix is None else p / p.sum())
    low_draw = rng.random(n_cases)
    uses_n2o = rng.random(n_cases) < N2O_SHARE
    theatre = rng.integers(0, len(THEATRES), n_cases)
    share: float | np.ndarray
    if isinstance(low_flow_share, dict):
        share = np.array([float(low_flow_share.get(t, LOW_FLOW_SHARE)) for t in THEATRES])[theatre]
    else:
        share = LOW_FLOW_SHARE if low_flow_share is None else float(low_flow_share)
    low = low_draw < share
    day = rng.integers(0, 365 if year % 4 else 366, n_cases)
    start = (
        np.datetime64(f"{year}-01-01T08:00")
        + day.astype("timedelta64[D]")
        + rng.integers(0, 9 * 60, n_cases).astype("timedelta64[m]")
    )
    maint_fgf = np.where(low, rng.uniform(0.5, 1.0, n_cases), rng.uniform(2.0, 3.0, n_cases))
    # A few high-flow cases stay at 6 L/min throughout (invented).
    maint_fgf = np.where(rng.random(n_cases) < 0.04, 6.0, maint_fgf)
    base_dial = np.array([MAINTENANCE_DIAL[n] for n in names])[agent]
    dial_case = base_dial * np.where(low, 1.2, 1.0) * rng.uniform(0.85, 1.15, n_cases)
    induction = rng.integers(4, 10, n_cases)

    case_of_row = np.repeat(np.arange(n_cases), dur)
    first = np.repeat(np.cumsum(dur) - dur, dur)
    minute = np.arange(len(case_of_row)) - first
    left = np.repeat(dur, dur) - minute
    ind = minute < induction[case_of_row]
    emerg = (left <= 5) & ~ind
    fgf = np.where(ind, 6.0, np.where(emerg, 8.0, maint_fgf[case_of_row]))
    fgf = np.round(fgf * rng.uniform(0.95, 1.05, len(fgf)), 1)
    n2o_on = uses_n2o[case_of_row] & ~emerg
    o2_share = np.where(n2o_on, 0.34, np.where(ind | emerg, 1.0, 0.5))
    o2 = np.round(fgf * o2_share, 2)
    n2o = np.where(n2o_on, np.round(fgf - o2, 2), 0.0)
    air = np.round(np.maximum(fgf - o2 - n2o, 0.0), 2)
    volatile = agent[case_of_row] != list(names).index("none")
    dial = np.where(
        ind,
        np.minimum(
            dial_case[case_of_row] * 2.0, np.where(agent[case_of_row] == list(names).index("desflurane"), 12.0, 6.0)
        ),
        np.where(emerg, 0.0, dial_case[case_of_row]),
    )
    dial = np.where(volatile, np.round(dial, 1), 0.0)
    et = np.where(volatile, np.round(dial * np.where(ind, 0.5, 0.8) * rng.uniform(0.9, 1.1, len(dial)), 2), 0.0)
    case_ids = np.char.add(f"FH{year % 100:02d}-", np.char.zfill((np.arange(n_cases) + first_case).astype(str), 7))
    # Text columns as categories (codes per row): fast to build, written as dictionary columns.
    return pd.DataFrame(
        {
            "case_id": pd.Categorical.from_codes(case_of_row, categories=case_ids),
            "time": start[case_of_row] + minute.astype("timedelta64[m]"),
            "theatre": pd.Categorical.from_codes(theatre[case_of_row], categories=list(THEATRES)),
            "agent": pd.Categorical.from_codes(agent[case_of_row], categories=list(names)),
            "o2 [L/min]": o2,
            "air [L/min]": air,
            "n2o [L/min]": n2o,
            "dial [%]": dial,
            "end_tidal [%]": et,
        }
    )


def write(df: pd.DataFrame, path) -> Path:
    """Write records as CSV or Parquet, by the file's extension."""
    import pyarrow as pa

    p = Path(path)
    p.parent.mkdir(parents=True, exist_ok=True)
    table = pa.Table.from_pandas(df, preserve_index=False)
    if p.suffix == ".parquet":
        import pyarrow.parquet as pq

        pq.write_table(table, p, compression="zstd")
    elif p.suffix == ".csv":
        import pyarrow.csv as pc

        table = table.set_column(
            table.schema.get_field_index("time"), "time", pa.compute.strftime(table["time"], "%Y-%m-%d %H:%M:%S")
        )
        for name in ("case_id", "theatre", "agent"):
            i = table.schema.get_field_index(name)
            table = table.set_column(i, name, table[name].cast(pa.string()))
        pc.write_csv(table, p)  # generated text only (fixed theatre and agent names, numbered cases)
    else:
        raise InputError("output file", str(p), "expected a name ending in .csv or .parquet")
    return p


def write_many(
    rows: int,
    out_dir,
    seed: int = 2025,
    fmt: str = "parquet",
    rows_per_file: int = 5_000_000,
    year: int = 2025,
    prefix: str = "records",
) -> list[Path]:
    """Write ``rows`` invented samples as files of at most ``rows_per_file`` rows each.

    Each part has its own seed (``seed`` + part number) and distinct case ids, so memory
    stays bounded by one part whatever the total.
    """
    if fmt not in ("parquet", "csv"):
        raise InputError("format", fmt, "allowed formats are parquet, csv")
    if rows < 1:
        raise InputError("rows", rows, "expected at least 1 row")
    out = []
    done = 0
    part = 0
    case_base = 0
    while done < rows:
        n = min(rows_per_file, rows - done)
        df = generate(n, seed + part, year, first_case=case_base)
        case_base += df["case_id"].nunique() + 1
        name = f"{prefix}.{fmt}" if rows <= rows_per_file else f"{prefix}-{part:05d}.{fmt}"
        out.append(write(df, Path(out_dir) / name))
        done += n
        part += 1
    return out


#: Invented purchase factors of the demo: purchased / recorded use (wastage, stock, losses).
DEMO_PURCHASE_FACTORS = {
    "sevoflurane": 1.08,
    "desflurane": 1.05,
    "isoflurane": 1.12,
    "nitrous_oxide": 2.4,
    "oxygen": 1.3,
}
#: Invented size of the demo's N2O cylinders. [L of gas at room conditions]
DEMO_N2O_CYLINDER_L = 9000.0
#: Invented: the leaking N2O manifold and pipework were mended at the end of June 2026; from
#: July purchases exceed recorded use only by what is left in cylinders returned. In 2026 the
#: new, metered manifold is supplied by mass (kg), so the monthly figures are not whole cylinders.
DEMO_N2O_FIXED_FROM = "2026-07"
DEMO_N2O_FACTOR_FIXED = 1.15
#: Invented sites of the demo hospital's theatres (the site file written with the demo).
DEMO_SITES = {
    "Alder": "Main theatres",
    "Birch": "Main theatres",
    "Cedar": "Main theatres",
    "Hazel": "Main theatres",
    "Rowan": "East wing",
    "Willow": "East wing",
    "Day Unit 1": "Day surgery unit",
    "Day Unit 2": "Day surgery unit",
}


def write_demo(out_dir, rows: int = 120_000, seed: int = 2025) -> list[Path]:
    """Write the demo records and purchases of the fictional Fernhollow General Hospital.

    Files: ``fernhollow_2025.parquet`` (a year of minute-level records, sampled lightly),
    ``fernhollow_birch_cases.csv`` (one theatre in the other layout: elapsed minutes, total
    flow with O2 share, flows in mL/min declared in a units line, and a few deliberate
    problems to show the checks), ``fernhollow_purchases_2025.csv``, and the second year
    with its change of practice: ``fernhollow_2026.parquet`` (less desflurane, lower flow in
    four theatres), ``fernhollow_purchases_2026.csv`` (the N2O pipework mended from July),
    and ``fernhollow_sites.csv`` (theatres by site). The purchases name the site each line was
    bought for (``DEMO_SITES``; oxygen, from the hospital's bulk supply, names none).
    """
    from model.audit.engine import audit_records
    from model.io.purchases import write_purchases

    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    df = generate(rows, seed)
    main_path = write(df, out / "fernhollow_2025.parquet")
    # About 30 cases of one theatre in the second layout.
    week = generate(2500, seed + 1).astype({"case_id": str, "theatre": str, "agent": str})
    week = week[week["agent"] != "none"].reset_index(drop=True)
    t0 = week.groupby("case_id")["time"].transform("min")
    fgf = week["o2 [L/min]"] + week["air [L/min]"] + week["n2o [L/min]"]
    o2_share = (week["o2 [L/min]"] + 0.20946 * week["air [L/min]"]) / fgf * 100.0
    csv = pd.DataFrame(
        {
            "case": week["case_id"].str.replace("FH25-", "BW-", regex=False),
            "date": "",
            "elapsed": ((week["time"] - t0).dt.total_seconds() / 60.0).round(1),
            "location": "Birch",
            "agent": week["agent"].map({"sevoflurane": "Sevo", "desflurane": "Des", "isoflurane": "Iso"}),
            "total_flow": (fgf * 1000.0).round(0),
            "n2o_share": (week["n2o [L/min]"] / fgf * 100.0).round(1),
            "o2_share": o2_share.round(1),
            "dial": week["dial [%]"],
        }
    )
    csv["date"] = week.groupby("case_id")["time"].transform("min").dt.strftime("%Y-%m-%d")
    csv = csv.astype(object)
    # Deliberate problems (each one a kind the checks report).
    csv.loc[10, "total_flow"] = "n/a?"
    csv.loc[20, "agent"] = "Xenon"
    csv.loc[30, "total_flow"] = -500
    csv.loc[40, "dial"] = 14
    csv.loc[51, "elapsed"] = csv.loc[50, "elapsed"]
    # A 12-minute gap in the middle of the longest case.
    sizes = csv.groupby("case", sort=False).size()
    start = int(csv.index[csv["case"] == sizes.idxmax()][0])
    middle = start + int(sizes.max()) // 2
    csv = csv.drop(index=range(middle, middle + 12)).reset_index(drop=True)
    birch = out / "fernhollow_birch_cases.csv"
    with open(birch, "w", encoding="utf-8", newline="") as fh:
        fh.write("# Fernhollow General Hospital (invented), theatre Birch, about 30 cases\n")
        fh.write("# units: total_flow=mL/min, elapsed=min, o2_share=%, n2o_share=%, dial=%\n")
        fh.write(csv_text(csv, lineterminator="\n"))
    # Purchases: recorded use of the year times invented factors, in whole bottles/cylinders.
    year25 = audit_records([main_path])
    purchases = write_purchases(
        _demo_purchases_by_site(_demo_purchases(year25.use_by_month()), year25.cases),
        out / "fernhollow_purchases_2025.csv",
        with_site=True,
    )
    # The second year, with its change of practice (own seed; the first year is untouched).
    df26 = generate(rows, seed + 1001, year=2026, agent_mix=AGENT_MIX_2026, low_flow_share=LOW_FLOW_2026)
    path26 = write(df26, out / "fernhollow_2026.parquet")
    year26 = audit_records([path26])
    purchases26 = write_purchases(
        _demo_purchases_by_site(_demo_purchases(year26.use_by_month(), n2o_by_mass=True), year26.cases),
        out / "fernhollow_purchases_2026.csv",
        with_site=True,
    )
    sites = out / "fernhollow_sites.csv"
    with open(sites, "w", encoding="utf-8", newline="") as fh:
        fh.write("# Fernhollow General Hospital (invented): the site of each theatre\n")
        fh.write("theatre,site\n")
        fh.writelines(f"{t},{s}\n" for t, s in DEMO_SITES.items())
    return [main_path, birch, purchases, path26, purchases26, sites]


def _demo_purchases(use: pd.DataFrame, n2o_by_mass: bool = False) -> list[tuple]:
    """Purchase lines of the demo: recorded use times invented factors.

    In whole bottles and cylinders (N2O in kg when ``n2o_by_mass``).
    """
    rows_out: list[tuple] = []
    for r in use.itertuples(index=False):
        f = DEMO_PURCHASE_FACTORS.get(r.item)
        if r.item == "nitrous_oxide" and r.month >= DEMO_N2O_FIXED_FROM:
            f = DEMO_N2O_FACTOR_FIXED
        if f is None or r.recorded <= 0:
            continue
        if r.item in ("sevoflurane", "desflurane", "isoflurane"):
            from model.reference import DEFAULT_REFERENCE

            bottle = DEFAULT_REFERENCE.agents[r.item].bottle_volume
            rows_out.append((r.month, r.item, int(math.ceil(r.recorded * f / bottle)), "bottle", ""))
        elif r.item == "nitrous_oxide" and n2o_by_mass:
            from model.emissions import gas_mass_g
            from model.reference import DEFAULT_REFERENCE

            kg = float(gas_mass_g(r.recorded * f, DEFAULT_REFERENCE.agents["nitrous_oxide"].molar_mass)) / 1000.0
            rows_out.append((r.month, r.item, f"{kg:.2f}", "kg", ""))
        elif r.item == "nitrous_oxide":
            rows_out.append(
                (
                    r.month,
                    r.item,
                    int(math.ceil(r.recorded * f / DEMO_N2O_CYLINDER_L)),
                    "cylinder",
                    f"{DEMO_N2O_CYLINDER_L:g} L",
                )
            )
        else:
            rows_out.append((r.month, r.item, round(r.recorded * f / 1000.0, 1), "m**3", ""))
    return rows_out


def _largest_remainder(total: int, weights) -> np.ndarray:
    """``total`` whole units shared in proportion to ``weights`` (Hare's largest remainder).

    The parts are whole numbers that add up to ``total``; equal weights share from the first.
    """
    w = np.asarray(weights, dtype=float)
    if total <= 0 or w.sum() <= 0:
        return np.zeros(len(w), dtype=np.int64)
    exact = total * w / w.sum()
    parts = np.floor(exact).astype(np.int64)
    left = int(total - parts.sum())
    order = np.argsort(-(exact - parts), kind="stable")
    parts[order[:left]] += 1
    return parts


def _demo_purchases_by_site(lines: list[tuple], cases: pd.DataFrame) -> list[tuple]:
    """The demo's purchase lines bought by site.

    Each month's line of an agent or N2O is shared among the sites (``DEMO_SITES``) by their
    recorded use of it that month, in whole bottles and cylinders (N2O by mass in 0.01 kg),
    so the hospital's totals are those of ``lines``.
    Oxygen comes from the hospital's bulk supply and names no site (invented).
    """
    names = list(dict.fromkeys(DEMO_SITES.values()))
    c = cases.assign(site=cases["theatre"].astype(str).map(DEMO_SITES))
    volatile = c[c["agent"] != "none"].groupby(["month", "agent", "site"])["liquid_agent_ml"].sum()
    n2o = c.groupby(["month", "site"])["nitrous_oxide_l"].sum()
    out = []
    for month, item, qty, unit, size in lines:
        if item == "oxygen":
            out.append((month, item, qty, unit, size, ""))
            continue
        if item == "nitrous_oxide":
            weights = [float(n2o.get((month, s), 0.0)) for s in names]
        else:
            weights = [float(volatile.get((month, item, s), 0.0)) for s in names]
        by_mass = unit == "kg"
        total = int(round(float(qty) * 100)) if by_mass else int(qty)
        for site, part in zip(names, _largest_remainder(total, weights), strict=True):
            if part > 0:
                out.append((month, item, f"{part / 100:.2f}" if by_mass else int(part), unit, size, site))
    return out


def main(argv=None) -> int:
    """Write invented case records as ``argv`` asks (the process's arguments when None); the exit code.

    What it prints shows control characters escaped, as ``gas-ledger`` does.
    """
    from model.cli.common import shown_output

    with shown_output():
        return _main(argv)


def _main(argv) -> int:
    parser = argparse.ArgumentParser(
        prog="python -m model.cli.synth", description="Write invented case records (Fernhollow General Hospital)."
    )
    parser.add_argument("--rows", type=int, default=None, help="number of sample rows")
    parser.add_argument("--out", required=True, help="output folder")
    parser.add_argument(
        "--demo", action="store_true", help="write the demo records and purchases (demo_data/records) instead"
    )
    parser.add_argument("--seed", type=int, default=2025)
    parser.add_argument("--format", choices=("parquet", "csv"), default="parquet")
    parser.add_argument("--rows-per-file", type=int, default=5_000_000)
    parser.add_argument("--year", type=int, default=2025)
    args = parser.parse_args(argv)
    if args.demo:
        paths = write_demo(args.out, args.rows or 120_000, args.seed)
        print("wrote " + ", ".join(str(p) for p in paths))
        return 0
    if args.rows is None:
        parser.error("--rows is required (or --demo)")
    try:
        paths = write_many(args.rows, args.out, args.seed, args.format, args.rows_per_file, args.year)
    except InputError as exc:
        sys.stderr.write(f"gas-ledger demo data: {exc}\n")
        return 2
    print(f"wrote {args.rows:,} rows in {len(paths)} file(s) under {args.out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
