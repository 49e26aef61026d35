"""nx_baseline.py: the networkx reference for the parse benchmark.

    nx_baseline.py FILE NODES EDGES REPS

Reads a file written by gen_graph (one "a -> b" per line, isolated nodes as
a name alone), then builds a networkx DiGraph from it REPS times with
networkx.parse_edgelist, adds the isolated nodes and checks acyclicity (the
same work sl_graph_parse does), timing that alone.  Prints one line of
key=value pairs: best_s, base_kb (ru_maxrss once the text is in memory) and
rss_kb (ru_maxrss after the first build); or "missing=1" when networkx
cannot be imported.  Exit status 1 when the graph is not the one written.
"""
import resource
import sys
import time

import nx_graph


def maxrss_kb():
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss


def main():
    path, nodes, edges, reps = sys.argv[1], int(sys.argv[2]), int(sys.argv[3]), int(sys.argv[4])
    try:
        import networkx as nx
    except ImportError:
        print("missing=1")
        return 0
    edge_lines, alone = nx_graph.read_lines(path)
    base = maxrss_kb()
    best, rss = float("inf"), 0
    for r in range(max(reps, 1)):
        t0 = time.perf_counter()
        g = nx_graph.build(edge_lines, alone, nx.DiGraph)
        dag = nx.is_directed_acyclic_graph(g)
        t = time.perf_counter() - t0
        if r == 0:
            rss = maxrss_kb()
            if not dag or g.number_of_nodes() != nodes or g.number_of_edges() != edges:
                print("networkx built %d nodes, %d edges, acyclic=%s; file has %d, %d"
                      % (g.number_of_nodes(), g.number_of_edges(), dag, nodes, edges),
                      file=sys.stderr)
                return 1
        best = min(best, t)
        del g
    print("best_s=%.6f base_kb=%d rss_kb=%d version=%s" % (best, base, rss, nx.__version__))
    return 0


if __name__ == "__main__":
    sys.exit(main())
