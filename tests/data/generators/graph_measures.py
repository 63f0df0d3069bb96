"""Reference values for the graph measures (src/graph/measures.rs), from networkx and numpy.

Writes tests/data/graph_measures_reference.json. Run: python3 tests/data/generators/graph_measures.py

* Zachary's karate club as shipped by networkx (its 'weight' attribute for the weighted
  measures) and a small disconnected weighted graph (invented): networkx degree, strength,
  clustering (binary and weighted, Onnela et al. 2005), average_clustering, transitivity,
  shortest path lengths (hops, and Dijkstra with 'length' = 1 / w) and global_efficiency.
  Weighted efficiency is computed here from networkx all-pairs Dijkstra lengths; path lengths of
  the disconnected graph are the mean over connected ordered pairs of networkx all-pairs lengths
  (networkx's average_shortest_path_length refuses disconnected graphs).
* Participation coefficient and within-module degree z-score (Guimera & Amaral 2005, Nature
  433:895) of the karate club with the two club factions as modules, written out here from the
  published formulas over a numpy adjacency matrix (an implementation independent of strata's),
  with strengths in place of degrees, the population standard deviation, P = 0 for a node
  without edges and z = 0 when a module's standard deviation is 0. With label 0 unassigned,
  unassigned nodes get null (NaN) and edges to them are dropped before the formulas are applied.
"""
import json
import pathlib

import networkx as nx
import numpy as np

OUT = pathlib.Path(__file__).resolve().parents[1] / "graph_measures_reference.json"

# Invented: a weighted triangle, a weighted square with one diagonal and a pendant, and one
# isolated node (7), so three components.
DISCONNECTED_NODES = 9
DISCONNECTED_EDGES = [
    (0, 1, 0.5), (1, 2, 1.0), (0, 2, 2.0),
    (3, 4, 1.5), (4, 5, 0.25), (5, 6, 1.0), (6, 3, 0.75), (3, 5, 3.0), (6, 8, 0.5),
]

# Karate nodes marked unassigned (label 0) in the third module case: both leaders and a broker.
UNASSIGNED = (0, 8, 33)


def edges_of(graph):
    return [[int(u), int(v), float(d["weight"])] for u, v, d in graph.edges(data=True)]


def connected_pair_stats(lengths, nodes):
    """Mean length over ordered connected pairs i != j, and sum of 1 / length over them."""
    total, count, inverse = 0.0, 0, 0.0
    for i in nodes:
        for j, d in lengths[i].items():
            if i != j:
                total += d
                count += 1
                inverse += 1.0 / d
    return total / count, inverse


def measures(graph, connected):
    nodes = sorted(graph.nodes)
    n = len(nodes)
    for u, v, d in graph.edges(data=True):
        d["length"] = 1.0 / d["weight"]
    hops = dict(nx.all_pairs_shortest_path_length(graph))
    lengths = dict(nx.all_pairs_dijkstra_path_length(graph, weight="length"))
    path_length, _ = connected_pair_stats(hops, nodes)
    path_length_weighted, inverse_weighted = connected_pair_stats(lengths, nodes)
    if connected:
        path_length = nx.average_shortest_path_length(graph)
        path_length_weighted = nx.average_shortest_path_length(graph, weight="length")
    clustering = nx.clustering(graph)
    clustering_weighted = nx.clustering(graph, weight="weight")
    return {
        "degree": [graph.degree(v) for v in nodes],
        "strength": [float(graph.degree(v, weight="weight")) for v in nodes],
        "clustering": [float(clustering[v]) for v in nodes],
        "clustering_weighted": [float(clustering_weighted[v]) for v in nodes],
        "mean_clustering": float(nx.average_clustering(graph)),
        "mean_clustering_weighted": float(nx.average_clustering(graph, weight="weight")),
        "transitivity": float(nx.transitivity(graph)),
        "path_length": float(path_length),
        "path_length_weighted": float(path_length_weighted),
        "efficiency": float(nx.global_efficiency(graph)),
        "efficiency_weighted": float(inverse_weighted / (n * (n - 1))),
    }


def module_roles(adjacency, labels, zero_unassigned):
    """Guimera & Amaral 2005 participation P and within-module z, with strengths."""
    labels = np.asarray(labels)
    assigned = np.ones(len(labels), dtype=bool) if not zero_unassigned else labels != 0
    a = adjacency * assigned[:, None] * assigned[None, :]
    strength = a.sum(axis=1)
    modules = sorted(set(labels[assigned].tolist()))
    kappa = np.array([a[i, labels == labels[i]].sum() for i in range(len(labels))])
    participation, within = [], []
    for i in range(len(labels)):
        if not assigned[i]:
            participation.append(None)
            within.append(None)
            continue
        if strength[i] == 0:
            participation.append(0.0)
        else:
            participation.append(float(1.0 - sum((a[i, labels == m].sum() / strength[i]) ** 2 for m in modules)))
        members = kappa[(labels == labels[i]) & assigned]
        sd = members.std()
        within.append(float((kappa[i] - members.mean()) / sd) if sd > 0 else 0.0)
    return participation, within


def main():
    karate = nx.karate_club_graph()
    nodes = sorted(karate.nodes)
    factions = [1 if karate.nodes[v]["club"] == "Mr. Hi" else 2 for v in nodes]
    weighted = nx.to_numpy_array(karate, nodelist=nodes, weight="weight")
    binary = nx.to_numpy_array(karate, nodelist=nodes, weight=None)
    with_unassigned = [0 if v in UNASSIGNED else factions[v] for v in nodes]
    module_cases = []
    for name, adjacency, labels, zero_unassigned in [
        ("factions, binary", binary, factions, False),
        ("factions, weighted", weighted, factions, False),
        ("factions with 0, 8, 33 unassigned, weighted", weighted, with_unassigned, True),
    ]:
        participation, within = module_roles(adjacency, labels, zero_unassigned)
        module_cases.append({
            "case": name,
            "weighted": adjacency is weighted,
            "labels": labels,
            "zero_unassigned": zero_unassigned,
            "participation": participation,
            "within_module_z": within,
        })

    disconnected = nx.Graph()
    disconnected.add_nodes_from(range(DISCONNECTED_NODES))
    disconnected.add_weighted_edges_from(DISCONNECTED_EDGES)

    OUT.write_text(json.dumps({
        "source": f"networkx {nx.__version__}, numpy {np.__version__}",
        "karate_edges": edges_of(karate),
        "karate": measures(karate, connected=True),
        "karate_modules": module_cases,
        "disconnected_node_count": DISCONNECTED_NODES,
        "disconnected_edges": edges_of(disconnected),
        "disconnected": measures(disconnected, connected=False),
    }, indent=1) + "\n")


if __name__ == "__main__":
    main()
