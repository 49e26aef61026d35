"""nx_dsep.py: the networkx reference for the d-separation benchmark.

    nx_dsep.py FILE QUERIES COUNT

Reads a graph file written by gen_graph (one "a -> b" per line, isolated
nodes as a name alone) into a networkx DiGraph (not timed), then repeats the
first COUNT queries of the file that bench_dsep wrote (lines "SEP SECONDS x
y z1 z2 ...") with networkx.d_separated (networkx 2.x) or
networkx.is_d_separator (3.3 and later), timing each call alone.  Prints
one line of key=value pairs: compared (queries run), per_query_s (networkx
mean), sluice_s (the mean of bench_dsep's times for the same queries),
disagree (queries where the answers differ) and version; or "missing=1"
when networkx cannot be imported.  Exit status 1 when any answer differs.
"""
import sys
import time

import nx_graph


def main():
    path, qpath, count = sys.argv[1], sys.argv[2], int(sys.argv[3])
    try:
        import networkx as nx
    except ImportError:
        print("missing=1")
        return 0
    separated = getattr(nx, "is_d_separator", None) or nx.d_separated
    edge_lines, alone = nx_graph.read_lines(path)
    g = nx_graph.build(edge_lines, alone, nx.DiGraph)
    with open(qpath, encoding="utf-8") as f:
        queries = [ln.split() for ln in f.read().splitlines() if ln.strip()]
    queries = queries[:max(count, 1)]
    nx_total, sl_total, disagree = 0.0, 0.0, 0
    for q in queries:
        sep, secs, x, y, z = q[0] == "1", float(q[1]), q[2], q[3], set(q[4:])
        t0 = time.perf_counter()
        got = separated(g, {x}, {y}, z)
        nx_total += time.perf_counter() - t0
        sl_total += secs
        if bool(got) != sep:
            disagree += 1
            print("nx_dsep: %s, %s given {%s}: networkx %s, sluice %s"
                  % (x, y, ", ".join(sorted(z)), "separated" if got else "connected",
                     "separated" if sep else "connected"), file=sys.stderr)
    k = len(queries)
    print("compared=%d per_query_s=%.6f sluice_s=%.9f disagree=%d version=%s"
          % (k, nx_total / k, sl_total / k, disagree, nx.__version__))
    return 1 if disagree else 0


if __name__ == "__main__":
    sys.exit(main())
