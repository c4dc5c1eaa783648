"""Run a spec on a Dask cluster through its concurrent.futures interface.

    python3 examples/dask_cluster.py [SCHEDULER_ADDRESS]

Without an address it starts a LocalCluster of two worker processes. On a real cluster
pass the scheduler address (``tcp://host:8786``); the workers need whitegauge installed.
The numbers are bitwise identical to a run on one core with the same spec.
"""

import json
import sys
from pathlib import Path

from distributed import Client, LocalCluster

from holonomy.experiment import load_spec, run_spec

if __name__ == "__main__":
    spec = load_spec(Path(__file__).resolve().parent / "box_and_ring.toml")
    if len(sys.argv) > 1:
        client, cluster = Client(sys.argv[1]), None
    else:
        cluster = LocalCluster(n_workers=2, threads_per_worker=1, dashboard_address=None)
        client = Client(cluster)
    try:
        on_cluster = run_spec(spec, executor=client.get_executor())
    finally:
        client.close()
        if cluster is not None:
            cluster.close()
    inline = run_spec(spec)
    same = json.dumps(on_cluster.results["results"]) == json.dumps(inline.results["results"])
    print(f"dask and inline results bitwise identical: {same}")
    sys.exit(0 if same else 1)
