"""Median seconds of one trial of the reference packages on strata's benchmark graphs.

Usage: python3 benches/communities.py DIR (the edge lists written by
`cargo bench --bench communities -- trials DIR`). Times infomap (two-level, one trial),
leidenalg (modularity, iterated until stable, as strata's Leiden) and igraph's multilevel
(Louvain), each on the same graph, excluding graph loading.
"""
import pathlib
import statistics
import sys
import time

import igraph
import infomap
import leidenalg
import numpy as np

directory = pathlib.Path(sys.argv[1])
for path in sorted(directory.glob("n*-d*.tsv")):
    data = np.loadtxt(path, delimiter="\t", ndmin=2)
    nodes = int(data[:, :2].max()) + 1
    edges = [(int(i), int(j)) for i, j in data[:, :2]]
    weights = data[:, 2].tolist()
    graph = igraph.Graph(n=nodes, edges=edges)
    graph.es["weight"] = weights
    repeats = 3 if nodes >= 5000 else 5

    def timed(run):
        seconds = []
        for seed in range(repeats):
            start = time.perf_counter()
            run(seed)
            seconds.append(time.perf_counter() - start)
        return statistics.median(seconds)

    def run_infomap(seed):
        im = infomap.Infomap(two_level=True, silent=True, num_trials=1, seed=seed + 1)
        im.add_nodes(range(nodes))
        im.add_links([(i, j, w) for (i, j), w in zip(edges, weights)])
        im.run()

    # infomap's own timing includes adding links from Python; time that part apart and subtract.
    def add_only(seed):
        im = infomap.Infomap(two_level=True, silent=True, num_trials=1, seed=seed + 1)
        im.add_nodes(range(nodes))
        im.add_links([(i, j, w) for (i, j), w in zip(edges, weights)])

    name = path.stem
    full = timed(run_infomap)
    loading = timed(add_only)
    print(f"trial_seconds infomap-{infomap.__version__} infomap {name} {max(full - loading, 0.0):.4f}")
    print(f"trial_seconds leidenalg-{leidenalg.version} leiden {name} "
          f"{timed(lambda s: leidenalg.find_partition(graph, leidenalg.ModularityVertexPartition, weights='weight', n_iterations=-1, seed=s)):.4f}")
    print(f"trial_seconds igraph-{igraph.__version__} louvain {name} "
          f"{timed(lambda s: graph.community_multilevel(weights='weight')):.4f}")
