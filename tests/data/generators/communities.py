"""Reference values for the graph and communities stages, from networkx and scikit-learn.

Writes tests/data/communities_reference.json. Run: python3 tests/data/generators/communities.py
"""
import json
import pathlib

import networkx as nx
import numpy as np
import sklearn
from networkx.algorithms.community import modularity
from scipy.stats import entropy
from sklearn.metrics import adjusted_rand_score, mutual_info_score, normalized_mutual_info_score

OUT = pathlib.Path(__file__).resolve().parents[1] / "communities_reference.json"


def edges_of(graph, weight=None):
    return [[int(u), int(v), float(d.get(weight, 1.0)) if weight else 1.0] for u, v, d in graph.edges(data=True)]


def main():
    karate = nx.karate_club_graph()
    factions = [0 if karate.nodes[n]["club"] == "Mr. Hi" else 1 for n in karate.nodes]
    groups = [{n for n in karate.nodes if factions[n] == c} for c in (0, 1)]
    cases = []
    for name, labels in [("factions", factions), ("singletons", list(range(34)))]:
        communities = [{n for n in karate.nodes if labels[n] == c} for c in sorted(set(labels))]
        for resolution in (0.5, 1.0, 2.0):
            cases.append({
                "partition": name,
                "labels": labels,
                "resolution": resolution,
                "modularity": modularity(karate, communities, weight=None, resolution=resolution),
            })
    rng = np.random.default_rng(7)
    agreement = []
    for size, ka, kb in [(30, 3, 4), (50, 2, 5), (40, 6, 6)]:
        a = rng.integers(0, ka, size=size).tolist()
        b = rng.integers(0, kb, size=size).tolist()
        agreement.append({
            "a": a,
            "b": b,
            "ari": adjusted_rand_score(a, b),
            "nmi": normalized_mutual_info_score(a, b),
            # Variation of information in nats, VI = H(A) + H(B) - 2 I(A;B) (Meila 2007), from
            # scikit-learn's mutual_info_score and scipy's entropy of the label counts.
            "vi": float(entropy(np.bincount(a)) + entropy(np.bincount(b)) - 2 * mutual_info_score(a, b)),
        })
    ring = nx.ring_of_cliques(30, 5)
    singles = [set(range(5 * i, 5 * i + 5)) for i in range(30)]
    pairs = [set(range(10 * i, 10 * i + 10)) for i in range(15)]
    OUT.write_text(json.dumps({
        "source": f"networkx {nx.__version__}, scikit-learn {sklearn.__version__}",
        "karate_edges": edges_of(karate),
        "karate_cases": cases,
        "ring_of_cliques_edges": edges_of(ring),
        "ring_of_cliques_q_singles": modularity(ring, singles, weight=None),
        "ring_of_cliques_q_pairs": modularity(ring, pairs, weight=None),
        "agreement": agreement,
    }) + "\n")
    del groups


if __name__ == "__main__":
    main()
