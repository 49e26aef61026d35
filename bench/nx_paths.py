"""nx_paths.py: the networkx reference for the trail benchmark.

    nx_paths.py FILE X Y

Reads a graph file written by gen_graph (one "a -> b" per line, isolated
nodes as a name alone) into an undirected networkx Graph, its skeleton (not
timed), and counts the simple paths from X to Y with
networkx.all_simple_paths, once, timing the count alone.  Prints one line
of key=value pairs: paths (count), edges (total length of all paths),
best_s, per_s (paths per second) and version; or "missing=1" when networkx
cannot be imported.
"""
import sys
import time

import nx_graph


def main():
    path, x, y = sys.argv[1], sys.argv[2], sys.argv[3]
    try:
        import networkx as nx
    except ImportError:
        print("missing=1")
        return 0
    edge_lines, alone = nx_graph.read_lines(path)
    g = nx_graph.build(edge_lines, alone, nx.Graph)
    count, edges = 0, 0
    t0 = time.perf_counter()
    for p in nx.all_simple_paths(g, x, y):
        count += 1
        edges += len(p) - 1
    t = time.perf_counter() - t0
    print("paths=%d edges=%d best_s=%.6f per_s=%.0f version=%s"
          % (count, edges, t, count / t if t > 0 else 0, nx.__version__))
    return 0


if __name__ == "__main__":
    sys.exit(main())
