"""A generated long CSV of 100,000 rows with gaps and repeats, checked against pandas doing
the same clean-up row by row in its own way (drop_duplicates, keep="last")."""

import numpy as np
import pandas as pd

from webapp.imports import parse_bytes


def test_vectorised_path_agrees_with_pandas_reference():
    rng = np.random.default_rng(11)
    n = 100_000
    hosts = np.array([f"api-{i}" for i in range(1, 7)])
    metrics = np.array(["checkout.requests", "checkout.latency_p95", "payment.queue_depth"])
    frame = pd.DataFrame(
        {
            "timestamp": 1_796_025_600 + 60 * rng.integers(0, 5_000, n),
            "metric": metrics[rng.integers(0, 3, n)],
            "host": hosts[rng.integers(0, 6, n)],
            "value": rng.normal(180, 20, n).round(2),
        }
    )
    frame.loc[rng.random(n) < 0.01, "value"] = np.nan
    parsed = parse_bytes(frame.to_csv(index=False).encode(), "generated.csv")

    present = frame.dropna(subset=["value"])
    reference = present.drop_duplicates(["metric", "host", "timestamp"], keep="last")
    assert parsed.rows_read == n
    assert parsed.gap_count == n - len(present)
    assert parsed.duplicate_count == len(present) - len(reference)
    assert parsed.duplicate_count > 0 and parsed.gap_count > 0  # the case was exercised

    expected = pd.Series(
        reference["value"].to_numpy(),
        index=pd.MultiIndex.from_arrays(
            [
                reference["metric"] + "{host=" + reference["host"] + "}",
                reference["timestamp"].to_numpy() * 1000,
            ]
        ),
    ).sort_index()
    got = parsed.table.set_index(["series_key", "ts_utc"])["value"].sort_index().rename(None)
    got.index.names = [None, None]
    pd.testing.assert_series_equal(got, expected, check_index_type=False)
