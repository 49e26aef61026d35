"""nx_graph.py: a graph file written by gen_graph, as the networkx
references read it: one "a -> b" per line, an isolated node as a name
alone, comment lines starting with "#".
"""


def read_lines(path):
    """The edge lines and the isolated node names of the file at path."""
    with open(path, encoding="utf-8") as f:
        lines = f.read().splitlines()
    edge_lines = [ln for ln in lines if " -> " in ln]
    alone = [ln.strip() for ln in lines if ln and not ln.startswith("#") and " -> " not in ln]
    return edge_lines, alone


def build(edge_lines, alone, graph_class):
    """A networkx graph of graph_class (DiGraph, Graph) of those lines."""
    import networkx as nx
    g = nx.parse_edgelist(edge_lines, delimiter=" -> ", create_using=graph_class, data=False)
    g.add_nodes_from(alone)
    return g
