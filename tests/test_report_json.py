"""The streamed pairs of the scan JSON read back (json module) to the engine's numbers, including
chunks where whole columns are zero (written as literals) and a -0.0 (which must stay -0.0)."""
from __future__ import annotations

import json

import numpy as np

from energy.output import report


def test_streamed_pair_rows_read_back_exactly(monkeypatch):
    monkeypatch.setattr(report, "_STREAM_ROWS", 7)      # many chunks, some all-zero columns
    rng = np.random.default_rng(5)
    n = 40
    cols = {"i": np.arange(n), "j": np.arange(n) + 1}
    for k in report._PAIR_KEYS[2:-1]:
        cols[k] = np.zeros(n)
    cols["coulomb"] = rng.normal(size=n)
    cols["lj"][20:] = rng.normal(size=n - 20)           # zero in the first chunks only
    cols["bond"][9] = -0.0
    cols["total"] = cols["coulomb"] + cols["lj"]
    cols["min_heavy_distance"] = rng.uniform(2.0, 9.0, n)
    cols["min_heavy_distance"][3] = np.inf
    rows = json.loads("[" + ",".join(report._pair_json_chunks(cols)) + "]")
    assert len(rows) == n
    for k in report._PAIR_KEYS[:-1]:
        np.testing.assert_array_equal([r[k] for r in rows], cols[k])   # repr round-trips exactly
    assert np.signbit(rows[9]["bond"]) and rows[3]["min_heavy_distance"] is None
    np.testing.assert_array_equal([r["min_heavy_distance"] for r in rows if r["min_heavy_distance"] is not None],
                                  np.delete(cols["min_heavy_distance"], 3))
