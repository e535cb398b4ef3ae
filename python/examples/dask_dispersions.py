"""1000 dispersed flights of the medium guided demo on a two-worker Dask LocalCluster, checked
against the single-process run of the same seed (docs/python.md).

Run from the repository root after `pip install . "dask[distributed]" pandas`:

    python python/examples/dask_dispersions.py
"""

import pandas as pd
from distributed import Client, LocalCluster

import kickturn
import kickturn.dask

PROBLEM = "problems/guided/medium-2stage-leo200-guided.json"

if __name__ == "__main__":  # worker processes import this file: start the cluster only here
    with LocalCluster(n_workers=2, threads_per_worker=1) as cluster, Client(cluster) as client:
        frame = kickturn.dask.dispersions(client, PROBLEM, samples=1000, seed=7, batch_size=100)
    report = frame.attrs["report"]
    # The same seed in one process gives the same document, whatever the split.
    assert report == kickturn.dispersions(PROBLEM, samples=1000, seed=7)

    pd.set_option("display.width", 120)
    print(frame[["index", "status", "target_met", "perigee_error_km", "propellant_remaining_kg"]]
          .head(4))
    print(f"target met: {report['target_met']} of {report['samples']}")
    r = report["reserve"]
    print(f"reserve ({r['method']}, rank {r['rank']}, p = {r['probability']}, "
          f"c = {r['confidence']}): {r['reserve_kg']:.1f} kg = {r['reserve_mps']:.1f} m/s")
    for c in report["contributors"][:3]:
        print(f"  {c['name']:<32} {c['rank_correlation_propellant']:+.3f}")
    print(frame["propellant_remaining_kg"].describe().round(1).to_string())
