#!/usr/bin/python3
"""dsep_networkx.py: g:separated checked against networkx's d-separation.

Reference: networkx (Debian's python3-networkx), `networkx.d_separated`
(2.x) or `networkx.is_d_separator` (3.3 and later), on the same DiGraph.
Each witness trail sluice returns for a non-separated query is checked here
against the textbook definition of an open trail (Pearl, "Causality", 2nd
ed., definition 1.2.3): a collider is open iff it or one of its descendants
is in Z, any other inner node is open iff it is not in Z.

A further set of graphs has <-> edges and hidden nodes; their reference is
networkx on the canonical DAG (each a <-> b replaced by a <- h -> b, h a
fresh node never queried), whose d-separation is the graph's m-separation
(Richardson and Spirtes 2002, "Ancestral graph Markov models"; cited from
memory).

Run with env B=<build dir> (default "build").  Builds >= 1000 seeded random
DAGs with >= 3 queries each, writes ONE Lua script, runs it once with
$B/sluice, and compares line by line.  Prints "N passed, M failed"; exits
non-zero on any failure, with the first few mismatches shown.
"""
import os
import random
import sys

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "lib"))
from oracle import lua_list, run_queries, sluice_path  # noqa: E402

try:
    import networkx as nx
except ImportError:
    print("skipped: networkx not installed")
    sys.exit(0)

SEED = 20240611
N_DAGS = 1500        # directed edges only
N_MIXED = 500        # also <-> edges and hidden nodes
QUERIES_PER_GRAPH = 4
TIMEOUT = 120


def nx_separated(G, x, y, z):
    """networkx's verdict, whichever name this version uses."""
    if hasattr(nx, "is_d_separator"):
        return nx.is_d_separator(G, set(x), set(y), set(z))
    return nx.d_separated(G, set(x), set(y), set(z))


def random_dag(rng, mixed):
    """A random graph on n0..n{k-1}: directed edges along a random order;
    when mixed, also some <-> edges and some hidden nodes."""
    n = rng.randint(2, 40)
    # a spread of densities: very sparse trees up to nearly complete
    style = rng.random()
    if style < 0.25:
        p = rng.uniform(0.02, 0.1)
    elif style < 0.6:
        p = min(1.0, rng.uniform(1.0, 3.0) / max(1, n - 1))
    elif style < 0.9:
        p = rng.uniform(0.1, 0.4)
    else:
        p = rng.uniform(0.4, 0.9)
    names = ["n%d" % i for i in range(n)]
    order = names[:]
    rng.shuffle(order)
    G = nx.DiGraph()
    G.add_nodes_from(names)
    bi, hidden = set(), set()
    for i in range(n):
        for j in range(i + 1, n):
            if rng.random() < p:
                G.add_edge(order[i], order[j])
    if mixed:
        q = rng.uniform(0.5, 2.0) / max(1, n - 1)
        for i in range(n):
            for j in range(i + 1, n):
                if rng.random() < q:
                    bi.add(tuple(sorted((names[i], names[j]))))
        hidden = {v for v in names if rng.random() < 0.15}
    return Graph(G, bi, hidden)


class Graph:
    """Directed part D (a networkx DiGraph), <-> pairs, hidden nodes."""

    def __init__(self, D, bi, hidden):
        self.D, self.bi, self.hidden = D, bi, hidden
        # The canonical DAG: each a <-> b becomes a <- h -> b with a fresh
        # node h never queried (Richardson and Spirtes 2002), so
        # that networkx's d-separation decides m-separation of the original.
        C = D.copy()
        for k, (a, b) in enumerate(sorted(bi)):
            C.add_edge("L%d" % k, a)
            C.add_edge("L%d" % k, b)
        self.C = C

    def nodes(self):
        return list(self.D.nodes())

    def text(self):
        """sluice notation: one statement per edge, isolated nodes alone."""
        parts = ["hidden " + ", ".join(sorted(self.hidden))] if self.hidden else []
        parts += ["%s -> %s" % (u, v) for u, v in sorted(self.D.edges())]
        parts += ["%s <-> %s" % (u, v) for u, v in sorted(self.bi)]
        touched = {v for e in self.bi for v in e}
        parts += [v for v in sorted(self.D.nodes())
                  if self.D.degree(v) == 0 and v not in touched]
        return "; ".join(parts)


def random_query(rng, g):
    """Disjoint X, Y (non-empty), Z (maybe empty), each of size <= 3."""
    nodes = sorted(g.nodes(), key=lambda s: int(s[1:]))
    rng.shuffle(nodes)
    k = len(nodes)
    nx_ = rng.randint(1, min(3, k - 1))
    ny_ = rng.randint(1, min(3, k - nx_))
    nz_ = rng.randint(0, min(3, k - nx_ - ny_))
    x = nodes[:nx_]
    y = nodes[nx_:nx_ + ny_]
    z = nodes[nx_ + ny_:nx_ + ny_ + nz_]
    return x, y, z



LUA_HEAD = r"""
local function run(id, g, x, y, z)
  local ok, sep, w = pcall(g.separated, g, x, y, z)
  if not ok then print(id .. " E " .. tostring(sep):gsub("\n", " ")); return end
  if sep == true then print(id .. " 1"); return end
  if sep ~= false or type(w) ~= "table" or type(w.nodes) ~= "table" then
    print(id .. " B " .. tostring(sep) .. " " .. tostring(w)); return
  end
  print(id .. " 0 " .. table.concat(w.nodes, " ") .. "\t" .. tostring(w.open) ..
        "\t" .. tostring(w.text))
end
"""


def check_witness(g, x, y, z, nodes, open_flag, text):
    """None when the witness is a real open trail from X to Y, else why.
    The arrows in .text say which edge each step takes (a pair may be
    joined by both -> and <->); each must be an edge of the graph."""
    D = g.D
    if len(nodes) < 2:
        return "witness has fewer than two nodes"
    if len(set(nodes)) != len(nodes):
        return "witness is not simple"
    if nodes[0] not in x or nodes[-1] not in y:
        return "witness does not run from X to Y"
    xy = set(x) | set(y)
    if any(v in xy for v in nodes[1:-1]):
        # DESIGN.md: trails have inner nodes outside x and y
        return "witness has an inner node in X or Y"
    toks = text.split(" ")
    if len(toks) != 2 * len(nodes) - 1 or toks[0::2] != nodes:
        return "witness text %r does not list the nodes %r" % (text, nodes)
    arrows = toks[1::2]
    for a, b, arr in zip(nodes, nodes[1:], arrows):
        if arr == "->":
            ok = D.has_edge(a, b)
        elif arr == "<-":
            ok = D.has_edge(b, a)
        elif arr == "<->":
            ok = tuple(sorted((a, b))) in g.bi
        else:
            ok = False
        if not ok:
            return "step %s %s %s is not an edge of the graph" % (a, arr, b)
    zs = set(z)
    for i in range(1, len(nodes) - 1):
        v = nodes[i]
        head_left = arrows[i - 1] in ("->", "<->")    # arrowhead at v from the left
        head_right = arrows[i] in ("<-", "<->")       # and from the right
        if head_left and head_right:
            if v not in zs and not (nx.descendants(D, v) & zs):
                return "collider %s is closed (neither it nor a descendant is given)" % v
        elif v in zs:
            return "non-collider %s is given, so the trail is blocked" % v
    if open_flag != "true":
        return "witness .open is %s" % open_flag
    return None


def main():
    sluice = sluice_path()
    if not os.access(sluice, os.X_OK):
        print("no executable %s (run make first)" % sluice)
        return 1
    rng = random.Random(SEED)
    graphs, queries = [], []
    lines = [LUA_HEAD]
    for gid in range(N_DAGS + N_MIXED):
        G = random_dag(rng, gid >= N_DAGS)
        graphs.append(G)
        lines.append("do local g = graph[[%s]]" % G.text())
        for _ in range(QUERIES_PER_GRAPH):
            x, y, z = random_query(rng, G)
            qid = len(queries)
            queries.append((gid, x, y, z))
            lines.append("run(%d, g, %s, %s, %s)" % (qid, lua_list(x), lua_list(y),
                                                   lua_list(z)))
        lines.append("end")
    answers = run_queries(sluice, "dsep_queries", lines, TIMEOUT)
    if answers is None:
        return 1
    passed, failed, shown = 0, 0, []
    n_sep = 0
    for qid, (gid, x, y, z) in enumerate(queries):
        G = graphs[gid]
        want = nx_separated(G.C, x, y, z)
        n_sep += want
        got = answers.get(qid)
        problem = None
        if got is None:
            problem = "no answer printed"
        elif got.startswith("E ") or got.startswith("B "):
            problem = "sluice: " + got
        elif got == "1":
            if not want:
                problem = "sluice says separated, networkx says not"
        elif got.startswith("0 "):
            if want:
                problem = "sluice says not separated, networkx says separated"
            else:
                fields = got[2:].split("\t")
                if len(fields) != 3:
                    problem = "malformed witness line %r" % got
                else:
                    problem = check_witness(G, x, y, z, fields[0].split(" "),
                                            fields[1], fields[2])
                    if problem:
                        problem += " [witness: %s]" % fields[2]
        else:
            problem = "unexpected output %r" % got
        if problem:
            failed += 1
            if len(shown) < 5:
                shown.append("query %d on graph %d: X=%s Y=%s Z=%s\n  %s\n  graph: %s"
                             % (qid, gid, x, y, z, problem, G.text()))
        else:
            passed += 1
    for s in shown:
        print("MISMATCH " + s)
    print("%d graphs (%d DAGs, %d with <-> or hidden nodes), %d queries "
          "(%d separated, %d not)" % (len(graphs), N_DAGS, N_MIXED, len(queries),
                                      n_sep, len(queries) - n_sep))
    print("%d passed, %d failed" % (passed, failed))
    return 0 if failed == 0 and passed >= 3000 else 1


if __name__ == "__main__":
    sys.exit(main())
