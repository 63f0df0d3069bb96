"""Reference graphs and community-detection results from the reference packages.

Writes tests/data/graphs/<name>.tsv (edge lists, "i<TAB>j<TAB>w", 0-based nodes) and
tests/data/graphs_reference.json: per graph the node count, planted communities where known,
and what the infomap package (two-level map equation), leidenalg (modularity and CPM) and
igraph's multilevel (Louvain) give, each as the best of a fixed number of seeded trials.

Graphs: Zachary's karate club and Les Miserables (both as shipped by networkx), and networkx's
LFR benchmark generator (Lancichinetti, Fortunato & Radicchi 2008) at N = 1000, average degree
20, mixing 0.1 to 0.7.

Run: python3 tests/data/generators/graphs.py
"""
import json
import pathlib
import warnings

import igraph
import infomap
import leidenalg
import networkx as nx
from networkx.generators.community import LFR_benchmark_graph
from sklearn.metrics import normalized_mutual_info_score

warnings.filterwarnings("ignore")

DATA = pathlib.Path(__file__).resolve().parents[1]
TRIALS = 10
SEEDS = [1, 2, 3, 4, 5]
LFR_MIXING = [0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7]


def lfr(mixing):
    # Parameters of the recovery curve; tau1 = 3, tau2 = 1.5 as in Lancichinetti et al. 2008.
    for seed in range(100, 200):
        try:
            graph = LFR_benchmark_graph(1000, 3, 1.5, mixing, average_degree=20, max_degree=50,
                                        min_community=20, max_community=100, seed=seed)
        except nx.ExceededMaxIterations:
            continue
        # networkx's generator can leave self-loops; the benchmark graph has none (dropped).
        graph.remove_edges_from(list(nx.selfloop_edges(graph)))
        if nx.is_connected(graph):
            return graph, seed
    raise RuntimeError(f"no LFR graph for mixing {mixing}")


def planted_labels(graph):
    communities = {}
    for node in sorted(graph.nodes):
        key = min(graph.nodes[node]["community"])
        communities.setdefault(key, len(communities))
    return [communities[min(graph.nodes[node]["community"])] for node in sorted(graph.nodes)]


def infomap_best(edges, nodes, seed, trials=TRIALS):
    im = infomap.Infomap(two_level=True, silent=True, num_trials=trials, seed=seed)
    im.add_nodes(range(nodes))
    for i, j, w in edges:
        im.add_link(i, j, w)
    result = im.run()
    modules = {node.node_id: node.module_id for node in result.tree() if node.is_leaf}
    labels = [modules[node] for node in range(nodes)]
    return result.codelength, result.one_level_codelength, labels


def leiden_best(edges, nodes, kind, resolution=1.0):
    graph = igraph.Graph(n=nodes, edges=[(i, j) for i, j, _ in edges])
    graph.es["weight"] = [w for _, _, w in edges]
    best = None
    for seed in range(TRIALS):
        if kind == "modularity":
            partition = leidenalg.find_partition(graph, leidenalg.RBConfigurationVertexPartition,
                                                 weights="weight", resolution_parameter=resolution,
                                                 n_iterations=-1, seed=seed)
        else:
            partition = leidenalg.find_partition(graph, leidenalg.CPMVertexPartition,
                                                 weights="weight", resolution_parameter=resolution,
                                                 n_iterations=-1, seed=seed)
        quality = partition.quality()
        if kind == "modularity":
            quality = graph.modularity(partition.membership, weights="weight", resolution=resolution)
        if best is None or quality > best[0] + 1e-12:
            best = (quality, partition.membership)
    return best


def louvain_best(edges, nodes):
    graph = igraph.Graph(n=nodes, edges=[(i, j) for i, j, _ in edges])
    graph.es["weight"] = [w for _, _, w in edges]
    best = None
    for seed in range(TRIALS):
        igraph.set_random_number_generator(__import__("random").Random(seed))
        membership = graph.community_multilevel(weights="weight").membership
        quality = graph.modularity(membership, weights="weight")
        if best is None or quality > best[0] + 1e-12:
            best = (quality, membership)
    return best


def describe(name, graph, planted=None):
    nodes = sorted(graph.nodes)
    index = {node: k for k, node in enumerate(nodes)}
    edges = sorted((min(index[u], index[v]), max(index[u], index[v]), float(d.get("weight", 1.0)))
                   for u, v, d in graph.edges(data=True))
    path = DATA / "graphs" / f"{name}.tsv"
    with path.open("w") as out:
        for i, j, w in edges:
            out.write(f"{i}\t{j}\t{w:g}\n")
    count = len(nodes)
    runs = [infomap_best(edges, count, seed) for seed in SEEDS]
    best = min(runs, key=lambda run: run[0])
    stable = all(normalized_mutual_info_score(best[2], run[2]) >= 0.99 for run in runs)
    leiden_q, leiden_labels = leiden_best(edges, count, "modularity")
    louvain_q, louvain_labels = louvain_best(edges, count)
    entry = {
        "file": f"graphs/{name}.tsv",
        "nodes": count,
        "edges": len(edges),
        "infomap": {
            "trials": TRIALS,
            "seeds": SEEDS,
            "codelength": best[0],
            "one_level_codelength": best[1],
            "modules": len(set(best[2])),
            "labels": best[2],
            "stable_across_seeds": stable,
        },
        "leiden_modularity": {"resolution": 1.0, "modularity": leiden_q, "labels": leiden_labels},
        "louvain_modularity": {"modularity": louvain_q, "labels": louvain_labels},
    }
    if planted is not None:
        entry["planted"] = planted
        entry["nmi_to_planted"] = {
            "infomap": normalized_mutual_info_score(planted, best[2]),
            "leidenalg": normalized_mutual_info_score(planted, leiden_labels),
            "igraph_multilevel": normalized_mutual_info_score(planted, louvain_labels),
        }
    return entry, edges


def main():
    (DATA / "graphs").mkdir(exist_ok=True)
    graphs = {}
    karate, karate_edges = describe("karate", nx.Graph(nx.karate_club_graph().edges()))
    for resolution in (0.05, 0.1, 0.2):
        quality, labels = leiden_best(karate_edges, 34, "cpm", resolution)
        karate.setdefault("leiden_cpm", []).append(
            {"resolution": resolution, "quality": quality, "labels": labels})
    graphs["karate"] = karate
    lesmis = nx.les_miserables_graph()
    graphs["lesmis"] = describe("lesmis", nx.convert_node_labels_to_integers(lesmis, ordering="sorted"))[0]
    for mixing in LFR_MIXING:
        graph, seed = lfr(mixing)
        name = f"lfr-mu{int(round(mixing * 10)):02d}"
        entry, _ = describe(name, graph, planted_labels(graph))
        entry["lfr"] = {"n": 1000, "tau1": 3, "tau2": 1.5, "mixing": mixing, "average_degree": 20,
                        "max_degree": 50, "min_community": 20, "max_community": 100, "seed": seed}
        graphs[name] = entry
    (DATA / "graphs_reference.json").write_text(json.dumps({
        "source": f"infomap {infomap.__version__}, leidenalg {leidenalg.version}, "
                  f"igraph {igraph.__version__}, networkx {nx.__version__}",
        "nmi": "scikit-learn normalized_mutual_info_score (arithmetic-mean normalisation)",
        "graphs": graphs,
    }) + "\n")


if __name__ == "__main__":
    main()
