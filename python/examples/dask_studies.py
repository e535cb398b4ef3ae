"""A sweep, a trade grid and a trade of the medium demo on a two-worker Dask LocalCluster (docs/python.md).

Run from the repository root after `pip install . "dask[distributed]" pandas`:

    python python/examples/dask_studies.py
"""

import pandas as pd
from distributed import Client, LocalCluster

import kickturn
import kickturn.dask

PROBLEM = "problems/medium-2stage-leo200.json"

if __name__ == "__main__":  # worker processes import this file: start the cluster only here
    run = kickturn.fly(PROBLEM)
    print("fly:", run["status"], f"final mass {run['final_mass_kg']:.1f} kg")

    with LocalCluster(n_workers=2, threads_per_worker=1) as cluster, Client(cluster) as client:
        sweep = kickturn.dask.sweep(client, PROBLEM, altitude="200:400:50", batch_size=2)
        grid = kickturn.dask.grid(
            client, PROBLEM, {"altitude": "200:300:50", "payload": [6000, 8000]}
        )
        trade = kickturn.dask.trade(client, PROBLEM)

    pd.set_option("display.width", 160)
    pd.set_option("display.max_columns", None)
    print(sweep[["swept_altitude_km", "status", "margin_kg", "gravity_loss_mps", "trajectories"]])
    print(grid[["swept_altitude_km", "swept_payload_kg", "status", "margin_kg"]])
    print(trade[["parameter", "step", "factor", "unit"]])
    print(sweep.attrs["report"]["caution"])
