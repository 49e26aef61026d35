"""nxgraphs.py: random graphs with <-> edges and hidden nodes for the
networkx oracles, and d-separation in their canonical DAG (each <-> as a
hidden parent L0, L1, ...)."""
import networkx as nx


def dsep(G, a, b, z):
    """networkx's d-separation under either of its names."""
    a, b, z = set(a), set(b), set(z)
    if hasattr(nx, "is_d_separator"):
        return nx.is_d_separator(G, a, b, z)
    return nx.d_separated(G, a, b, z)


def random_admg(rng, p_range, q_range, hidden_share, latent=True):
    """3-8 nodes v0..; directed edges along a shuffled order with a
    probability drawn from p_range; with latent, <-> pairs with one from
    q_range and each node hidden with probability hidden_share.  Returns
    (D, bi, hidden); the draws are the same for the same rng state."""
    n = rng.randint(3, 8)
    names = ["v%d" % i for i in range(n)]
    order = names[:]
    rng.shuffle(order)
    p = rng.uniform(*p_range)
    D = nx.DiGraph()
    D.add_nodes_from(names)
    for i in range(n):
        for j in range(i + 1, n):
            if rng.random() < p:
                D.add_edge(order[i], order[j])
    bi, hidden = set(), set()
    if latent:
        q = rng.uniform(*q_range)
        for i in range(n):
            for j in range(i + 1, n):
                if rng.random() < q:
                    bi.add(tuple(sorted((names[i], names[j]))))
        hidden = {v for v in names if rng.random() < hidden_share}
    return D, bi, hidden


def canonical(D, bi):
    """D with each <-> pair given a hidden parent L0, L1, ..."""
    C = D.copy()
    for k, (a, b) in enumerate(sorted(bi)):
        C.add_edge("L%d" % k, a)
        C.add_edge("L%d" % k, b)
    return C
