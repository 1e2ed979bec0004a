"""Case-record files written for a test: a table of rows as CSV or Parquet."""

import pandas as pd

COLUMNS = ["case_id", "elapsed", "theatre", "agent", "o2", "air", "n2o", "dial"]


def write_records(tmp_path, rows, name="r.csv"):
    """Write ``rows`` (tuples in :data:`COLUMNS` order) to ``tmp_path / name``; the path."""
    df = pd.DataFrame(rows, columns=COLUMNS)
    p = tmp_path / name
    if name.endswith(".csv"):
        df.to_csv(p, index=False)
    else:
        df.to_parquet(p)
    return p


def constant_case(case, minutes, o2, air, n2o, dial, agent, theatre="Alder"):
    """Rows of one case at constant flows and dial, one a minute for ``minutes`` minutes."""
    return [(case, float(t), theatre, agent, o2, air, n2o, dial) for t in range(minutes + 1)]
