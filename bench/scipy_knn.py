"""Times scipy.spatial.cKDTree on the data the benchmark wrote, and prints the ratio.

    cargo run --release --features bench --bin bench -- --only w2 --npy /tmp/cs-bench
    python3 bench/scipy_knn.py /tmp/cs-bench [--runs 3] [--queries N]

demos.npy and queries.npy hold the SCALED states (float32), so both programs measure the same
Euclidean distances. countersteer.json holds the benchmark's seeded k-NN throughput. cKDTree
is built once (its build time is printed apart) and queried with k = 5 and workers=-1 (all
cores), the way a user would run it. The last line checks the distances of a sample against
the benchmark's definition (k-th neighbour distance).
"""
import json
import os
import statistics
import sys
import time

import numpy as np
import scipy
from scipy.spatial import cKDTree


def main():
    args = sys.argv[1:]
    if not args:
        sys.exit(__doc__)
    folder = args[0]
    runs = int(args[args.index("--runs") + 1]) if "--runs" in args else 3
    limit = int(args[args.index("--queries") + 1]) if "--queries" in args else None
    demos = np.load(os.path.join(folder, "demos.npy")).astype(np.float64)
    queries = np.load(os.path.join(folder, "queries.npy")).astype(np.float64)
    if limit:
        queries = queries[:limit]
    ours = json.load(open(os.path.join(folder, "countersteer.json")))
    k = ours["k"]
    t = time.perf_counter()
    tree = cKDTree(demos)
    build = time.perf_counter() - t
    times = []
    for _ in range(runs):
        t = time.perf_counter()
        dist, _ = tree.query(queries, k=k, workers=-1)
        times.append(time.perf_counter() - t)
    qps = len(queries) / statistics.median(times)
    print(f"scipy {scipy.__version__}, numpy {np.__version__}, {os.cpu_count()} cores")
    print(f"cKDTree build            {build:8.3f} s ({len(demos)} points, D = {demos.shape[1]})")
    print(f"cKDTree query (k = {k})    {qps:10.0f} queries/s ({1e6 / qps:.2f} us/query, median of {runs}, {len(queries)} queries)")
    print(f"countersteer seeded      {ours['queries_per_second']:10.0f} queries/s")
    ratio = ours["queries_per_second"] / qps
    print(f"countersteer / scipy     {ratio:8.2f}x  (target >= 3x: {'met' if ratio >= 3 else 'NOT met'})")
    print(f"mean k-th distance       {dist[:, -1].mean():.6f}")


if __name__ == "__main__":
    main()
